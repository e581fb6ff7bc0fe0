package api

import (
	"log/slog"
	"time"

	"github.com/gin-gonic/gin"
)

// accessLog writes one line per request once it is answered: method, route
// template and path (no query string: it may carry what a client would not
// have logged), status (499 when the client went away), response bytes,
// time, client address, our request id and the client's X-Request-ID. It is
// the outermost middleware, so refusals by the limits are logged too.
func (s *Server) accessLog() gin.HandlerFunc {
	return func(c *gin.Context) {
		start := time.Now()
		c.Next()
		if !s.log.Enabled(c.Request.Context(), slog.LevelInfo) {
			return // below the log level: build nothing
		}
		status := c.Writer.Status()
		if c.GetBool(ctxClientGone) {
			status = StatusClientGone
		}
		route := c.FullPath()
		if route == "" {
			route = "unmatched"
		}
		// A record without the caller's program counter: Logger.LogAttrs
		// walks the stack for it on every line, and every access line
		// comes from here.
		r := slog.NewRecord(time.Now(), slog.LevelInfo, "request", 0)
		r.AddAttrs(
			slog.String("method", c.Request.Method),
			slog.String("route", route),
			slog.String("path", c.Request.URL.Path),
			slog.Int("status", status),
			slog.Int("bytes", max(c.Writer.Size(), 0)),
			slog.Float64("duration_ms", float64(time.Since(start).Microseconds())/1000),
			slog.String("remote", clientAddr(c)),
			slog.String("request_id", c.GetString(ctxRequestID)),
		)
		if id := c.GetString(ctxClientRequestID); id != "" {
			r.AddAttrs(slog.String("client_request_id", id))
		}
		if code := c.GetString(ctxProblemCode); code != "" {
			r.AddAttrs(slog.String("problem", code))
		}
		_ = s.log.Handler().Handle(c.Request.Context(), r) // a line that cannot be written is not the request's failure
	}
}
