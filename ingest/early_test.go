package ingest_test

import (
	"context"
	"errors"
	"testing"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
)

// The stored log is written while the analysis runs, in the flight's own
// transaction: an upload that fails after that (here the take-off verdict)
// leaves no log, flight or figures behind and does not hold the airframe's
// upload lock, so the same log uploads afterwards.
func TestUploadFailingAfterLogWrittenLeavesNothing(t *testing.T) {
	t.Parallel()
	r := newRig(t)
	judged := 0
	r.in.Judge = func(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error) {
		judged++
		if judged == 1 {
			return nil, errors.New("verdict failed")
		}
		return ready(), nil
	}
	if _, _, err := r.upload(0, false); err == nil || err.Error() != "verdict failed" {
		t.Fatalf("upload with a failing verdict: %v", err)
	}
	for _, table := range []string{"flights", "flight_logs", "flight_metrics", "motor_runs", "events"} {
		if n := r.count(table); n != 0 {
			t.Errorf("%s: %d rows after a failed upload, want none", table, n)
		}
	}
	id, _, err := r.upload(0, false)
	if err != nil {
		t.Fatalf("the same log after the failure: %v", err)
	}
	if n := r.count("flight_logs"); n != 1 {
		t.Errorf("flight_logs: %d rows, want 1", n)
	}
	var logOf string
	if err := r.db.Pool().QueryRow(r.ctx, `SELECT flight_id FROM flight_logs`).Scan(&logOf); err != nil || logOf != id {
		t.Errorf("the stored log belongs to %q (%v), want the flight %s", logOf, err, id)
	}
}

// On a pool of one connection an upload writes its flight at the end: a
// transaction begun early would hold the only connection while the ingest
// waits for another (the facts, the verdict), and never end.
func TestUploadOnAOneConnectionPool(t *testing.T) {
	t.Parallel()
	url := pgtest.NewDB(t)
	cfg, err := pgxpool.ParseConfig(url)
	if err != nil {
		t.Fatal(err)
	}
	cfg.MaxConns = 1
	pool, err := pgxpool.NewWithConfig(context.Background(), cfg)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(pool.Close)
	r := newRigOn(t, pool)
	r.in.Judge = func(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error) {
		if _, err := r.db.Airframe(ctx, f.AirframeID); err != nil { // a verdict reads the records
			return nil, err
		}
		return ready(), nil
	}
	ctx, cancel := context.WithTimeout(r.ctx, 20*time.Second)
	defer cancel()
	r.ctx = ctx
	if _, _, err := r.upload(0, false); err != nil {
		t.Fatalf("upload on a one-connection pool: %v", err)
	}
	if n := r.count("flights"); n != 1 {
		t.Fatalf("%d flights, want 1", n)
	}
}
