package api

import (
	"bytes"
	"crypto/sha256"
	"errors"
	"io"
	"net/http"

	"github.com/gin-gonic/gin"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// teeWriter keeps a copy of the response for the idempotency store.
type teeWriter struct {
	gin.ResponseWriter
	buf bytes.Buffer
}

func (w *teeWriter) Write(b []byte) (int, error) {
	w.buf.Write(b)
	return w.ResponseWriter.Write(b)
}

func (w *teeWriter) WriteString(s string) (int, error) {
	w.buf.WriteString(s)
	return w.ResponseWriter.WriteString(s)
}

// idempotency honours an Idempotency-Key on POST: the first request with a
// key runs and its result is kept for a day; a retry with the same key and
// body gets that result again (Idempotent-Replayed: true), a retry while it
// runs gets 409, and the key with another body 422. Keys are per API key.
func (s *Server) idempotency(limit int64) gin.HandlerFunc {
	return func(c *gin.Context) {
		key := c.GetHeader("Idempotency-Key")
		if key == "" {
			c.Next()
			return
		}
		if len(key) > 255 {
			s.fail(c, fleet.FieldError("Idempotency-Key", "must be at most 255 characters"))
			return
		}
		if err := headerText("Idempotency-Key", key); err != nil {
			s.fail(c, err)
			return
		}
		body, err := io.ReadAll(http.MaxBytesReader(c.Writer, c.Request.Body, limit))
		var mbe *http.MaxBytesError
		if errors.As(err, &mbe) {
			s.fail(c, fleet.Errorf(fleet.ETOOLARGE, "request body over %d bytes", limit))
			return
		} else if err != nil {
			s.fail(c, fleet.Errorf(fleet.EINVALID, "could not read the request body"))
			return
		}
		c.Request.Body = io.NopCloser(bytes.NewReader(body))
		sum := sha256.Sum256(append([]byte(c.ContentType()+"\n"), body...))
		k := c.MustGet(ctxKey).(*fleet.APIKey)
		ctx := c.Request.Context()
		stored, err := s.db.ClaimIdempotencyKey(ctx, k.ID, key, c.FullPath(), sum[:])
		if err != nil {
			s.fail(c, err)
			return
		}
		if stored != nil {
			c.Header("Idempotent-Replayed", "true")
			c.Data(stored.Status, stored.ContentType, stored.Body)
			c.Abort()
			return
		}
		tw := &teeWriter{ResponseWriter: c.Writer}
		c.Writer = tw
		c.Next()
		if err := s.db.CompleteIdempotencyKey(ctx, k.ID, key, store.StoredResponse{Status: tw.Status(),
			ContentType: tw.Header().Get("Content-Type"), Body: tw.buf.Bytes()}); err != nil {
			s.log.Error("storing an idempotent result", "err", err)
		}
	}
}
