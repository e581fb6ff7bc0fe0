package api

import (
	"context"
	"log/slog"
	"sync"
	"time"

	"github.com/prometheus/client_golang/prometheus"

	"github.com/rotorwright/rotorwright/fleet"
)

// dbState tracks whether the database answers, from the watcher's pings,
// the metrics' reads and a ping after a request failed as unavailable. It
// logs each change once: an error line when the database is lost, an info
// line when it is back (with how long it was gone), and keeps
// rotorwright_database_up.
type dbState struct {
	log  *slog.Logger
	up   prometheus.Gauge
	ping func(context.Context) error

	mu    sync.Mutex
	down  bool
	since time.Time // when it went down

	probing sync.Mutex // one probe at a time; others skip theirs
}

// report takes the outcome of a database call: nil is an answer; an error
// counts only when it is about reaching the database (the store translates
// those to unavailable), not a refused statement.
func (d *dbState) report(err error) {
	if err != nil && fleet.ErrorCode(err) != fleet.EUNAVAILABLE {
		return
	}
	d.mu.Lock()
	defer d.mu.Unlock()
	switch {
	case err != nil && !d.down:
		d.down, d.since = true, time.Now()
		d.up.Set(0)
		d.log.Error("database lost", "err", fleet.ErrorMessage(err))
	case err == nil && d.down:
		d.down = false
		d.up.Set(1)
		d.log.Info("database back", "down_for", time.Since(d.since).Round(time.Millisecond).String())
	}
}

// isDown reports what the last check found.
func (d *dbState) isDown() bool {
	d.mu.Lock()
	defer d.mu.Unlock()
	return d.down
}

// probe pings the database once (bounded) and reports the outcome; when a
// probe is already running it returns at once.
func (d *dbState) probe(ctx context.Context) {
	if !d.probing.TryLock() {
		return
	}
	defer d.probing.Unlock()
	// Not ctx's cancellation: a request or the server ending mid-ping is
	// not a lost database.
	ctx, cancel := context.WithTimeout(context.WithoutCancel(ctx), 2*time.Second)
	defer cancel()
	d.report(d.ping(ctx))
}

// suspect is called when a request failed as unavailable: a ping tells a
// lost database (logged now, not at the next watcher tick) from a busy
// server. It runs in the failing request, so no goroutine outlives it;
// while the database is known lost it does nothing (the watcher sees it
// return).
func (d *dbState) suspect(ctx context.Context) {
	if !d.isDown() {
		d.probe(ctx)
	}
}

// WatchDatabase pings the database every interval until ctx ends, so a
// loss is logged even with no traffic and the return is logged when it
// comes. The command runs it beside the server.
func (s *Server) WatchDatabase(ctx context.Context, every time.Duration) {
	t := time.NewTicker(every)
	defer t.Stop()
	for {
		select {
		case <-ctx.Done():
			return
		case <-t.C:
			s.dbState.probe(ctx)
		}
	}
}
