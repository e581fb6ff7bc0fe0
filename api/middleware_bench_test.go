package api_test

import (
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"testing"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// BenchmarkMiddleware serves /healthz in process through the global
// middleware (access line, metrics, recovery, request id, limits, query
// check): with the access line written (logs at info, as the service runs)
// and without it (logs at warn), its floor, so the line's own cost is the
// difference, measured in the same run.
//
//	go test -bench Middleware -run '^$' -count 5 ./api
func BenchmarkMiddleware(b *testing.B) {
	db := store.New(pgtest.NewPool(b))
	for _, c := range []struct {
		name  string
		level slog.Level
	}{{"access-line", slog.LevelInfo}, {"no-line-floor", slog.LevelWarn}} {
		b.Run(c.name, func(b *testing.B) {
			log := slog.New(slog.NewTextHandler(io.Discard, &slog.HandlerOptions{Level: c.level}))
			h := api.New(db, log, unlimited(api.DefaultLimits), nil).Handler()
			req := httptest.NewRequest(http.MethodGet, "/healthz", nil)
			req.RemoteAddr = "127.0.0.1:4567"
			b.ReportAllocs()
			for b.Loop() {
				h.ServeHTTP(httptest.NewRecorder(), req)
			}
		})
	}
}
