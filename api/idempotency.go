package api

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/binary"
	"errors"
	"io"
	"mime"
	"mime/multipart"
	"net/http"
	"time"

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

// replayedHeaders are the response headers a replay returns as first sent.
var replayedHeaders = []string{"ETag", "Location"}

// idempotency honours an Idempotency-Key on POST: the first request with a
// key runs under a lease and its result is kept for a day; a retry with the
// same key and body gets that result again (Idempotent-Replayed: true, with
// the first ETag and Location), a retry while it runs gets 409 with
// Retry-After, and the key with another body 422. The lease is renewed
// while the request runs; if the service dies, loses the database or the
// client, it lapses within Limits.IdempotencyLease and a retry takes over.
// Keys are per API key.
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
			s.fail(c, bodyReadError(err, s))
			return
		}
		c.Request.Body = io.NopCloser(bytes.NewReader(body))
		k := c.MustGet(ctxKey).(*fleet.APIKey)
		stored, claim, err := s.db.ClaimIdempotencyKey(c.Request.Context(), k.ID, key, c.FullPath(),
			fingerprint(c.GetHeader("Content-Type"), body), s.limits.IdempotencyLease)
		if err != nil {
			s.fail(c, err)
			return
		}
		if stored != nil {
			for _, h := range replayedHeaders {
				if v := stored.Headers[h]; v != "" {
					c.Header(h, v)
				}
			}
			c.Header("Idempotent-Replayed", "true")
			c.Data(stored.Status, stored.ContentType, stored.Body)
			c.Abort()
			return
		}
		stop := s.keepLease(claim)
		tw := &teeWriter{ResponseWriter: c.Writer}
		c.Writer = tw
		c.Next()
		stop()
		// Storing the result must not depend on the client still being
		// there, nor be cut short by its going away.
		ctx, cancel := context.WithTimeout(context.WithoutCancel(c.Request.Context()), 10*time.Second)
		defer cancel()
		var held bool
		if c.GetBool(ctxClientGone) {
			held, err = s.db.ReleaseIdempotencyKey(ctx, claim) // nothing was done or answered
		} else {
			r := store.StoredResponse{Status: tw.Status(), ContentType: tw.Header().Get("Content-Type"),
				Body: tw.buf.Bytes(), Headers: map[string]string{}}
			for _, h := range replayedHeaders {
				if v := tw.Header().Get(h); v != "" {
					r.Headers[h] = v
				}
			}
			held, err = s.db.CompleteIdempotencyKey(ctx, claim, r)
		}
		switch {
		case err != nil: // the lease lapses and a retry takes over
			s.log.Warn("storing an idempotent result", "key", key, "err", err, "request_id", c.GetString(ctxRequestID))
		case !held:
			s.log.Warn("idempotency lease lost before completion: the request outlived its lease and was taken over",
				"key", key, "request_id", c.GetString(ctxRequestID))
		}
	}
}

// keepLease renews the claim's lease every third of its length until stop
// is called, so a long request keeps its key and a dead one loses it soon.
func (s *Server) keepLease(claim *store.Claim) (stop func()) {
	done := make(chan struct{})
	finished := make(chan struct{})
	go func() {
		defer close(finished)
		t := time.NewTicker(claim.Lease / 3)
		defer t.Stop()
		for {
			select {
			case <-done:
				return
			case <-t.C:
				ctx, cancel := context.WithTimeout(context.Background(), claim.Lease/3)
				if _, err := s.db.RenewIdempotencyKey(ctx, claim); err != nil {
					s.log.Warn("renewing an idempotency lease", "err", err)
				}
				cancel()
			}
		}
	}()
	return func() { close(done); <-finished }
}

// fingerprint identifies a request body for an idempotency key. A multipart
// body is identified by its parts — names, file names, content types and
// encodings and bytes, in order — not its raw bytes, because a client (curl) picks a new
// boundary on every retry. Anything else is its media type and bytes.
func fingerprint(contentType string, body []byte) []byte {
	h := sha256.New()
	mt, params, err := mime.ParseMediaType(contentType)
	if err == nil && mt == "multipart/form-data" && params["boundary"] != "" {
		if sum, ok := partsSum(body, params["boundary"]); ok {
			return sum
		}
	}
	h.Write([]byte(mt + "\n"))
	h.Write(body)
	return h.Sum(nil)
}

func partsSum(body []byte, boundary string) ([]byte, bool) {
	h := sha256.New()
	h.Write([]byte("multipart/form-data\n"))
	field := func(s string) { // length-prefixed, so no two part lists encode alike
		_ = binary.Write(h, binary.BigEndian, uint64(len(s)))
		h.Write([]byte(s))
	}
	mr := multipart.NewReader(bytes.NewReader(body), boundary)
	for {
		p, err := mr.NextPart()
		if errors.Is(err, io.EOF) {
			return h.Sum(nil), true
		} else if err != nil {
			return nil, false
		}
		data, err := io.ReadAll(p)
		if err != nil {
			return nil, false
		}
		sum := sha256.Sum256(data)
		field(p.FormName())
		field(p.FileName())
		field(p.Header.Get("Content-Type"))
		field(p.Header.Get("Content-Encoding")) // gzip or not changes what the bytes say
		field(string(sum[:]))
	}
}
