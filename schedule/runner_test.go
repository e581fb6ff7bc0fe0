package schedule_test

import (
	"context"
	"errors"
	"log/slog"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/schedule"
)

func newRunner(t *testing.T, pool *pgxpool.Pool) *schedule.Runner {
	t.Helper()
	r, err := schedule.NewRunner(pool, schedule.Config{Logger: testLogger(t)})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = r.Stop(context.Background()) })
	return r
}

// testLogger sends warnings and errors to the test log.
func testLogger(t *testing.T) *slog.Logger {
	return slog.New(slog.NewTextHandler(tWriter{t}, &slog.HandlerOptions{Level: slog.LevelWarn}))
}

type tWriter struct{ t *testing.T }

func (w tWriter) Write(p []byte) (int, error) {
	w.t.Log(strings.TrimSpace(string(p)))
	return len(p), nil
}

func exec(t *testing.T, pool *pgxpool.Pool, sql string, args ...any) {
	t.Helper()
	if _, err := pool.Exec(context.Background(), sql, args...); err != nil {
		t.Fatalf("%s: %v", sql, err)
	}
}

// ownerExec runs DDL as the database's owner: the service's role, which the
// pools connect as, may not create tables (the owner's default privileges
// then grant it the rows).
func ownerExec(t *testing.T, pool *pgxpool.Pool, sql string) {
	t.Helper()
	if _, err := pgtest.OwnerConn(t, pool.Config().ConnString()).Exec(context.Background(), sql); err != nil {
		t.Fatalf("%s: %v", sql, err)
	}
}

func count(t *testing.T, pool *pgxpool.Pool, sql string, args ...any) int {
	t.Helper()
	var n int
	if err := pool.QueryRow(context.Background(), sql, args...).Scan(&n); err != nil {
		t.Fatalf("%s: %v", sql, err)
	}
	return n
}

// Two replicas start the same job at the same moment, five times over: one
// runs it, the other records a skip, every time.
func TestRunNowTwoReplicasOneRuns(t *testing.T) {
	t.Parallel()
	pools := replicaPools(t, 2)
	ownerExec(t, pools[0], `CREATE TABLE scratch (round int)`)
	var calls atomic.Int32
	var round int
	var otherDone chan struct{}
	fn := func(ctx context.Context, tx pgx.Tx) (map[string]int, error) {
		calls.Add(1)
		if _, err := tx.Exec(ctx, `INSERT INTO scratch VALUES ($1)`, round); err != nil {
			return nil, err
		}
		// Hold the lock until the other replica has tried, so the two
		// attempts surely overlap.
		select {
		case <-otherDone:
		case <-time.After(3 * time.Second):
		}
		return map[string]int{"rows": 1}, nil
	}
	runners := []*schedule.Runner{newRunner(t, pools[0]), newRunner(t, pools[1])}
	for _, r := range runners {
		if err := r.Register("recompute", "", fn); err != nil {
			t.Fatal(err)
		}
	}
	const rounds = 5
	for round = 1; round <= rounds; round++ {
		otherDone = make(chan struct{})
		start := make(chan struct{})
		results := make([]schedule.Result, 2)
		var wg sync.WaitGroup
		for i, r := range runners {
			wg.Go(func() {
				<-start
				res, err := r.RunNow(t.Context(), "recompute")
				if err != nil {
					t.Error(err)
				}
				if res.Status == schedule.StatusSkipped {
					close(otherDone)
				}
				results[i] = res
			})
		}
		close(start)
		wg.Wait()
		got := map[string]int{}
		for _, res := range results {
			got[res.Status]++
		}
		if got[schedule.StatusOK] != 1 || got[schedule.StatusSkipped] != 1 {
			t.Errorf("round %d: statuses %v, want one ok and one skipped", round, got)
		}
	}
	if n := calls.Load(); n != rounds {
		t.Errorf("job body ran %d times in %d rounds", n, rounds)
	}
	if n := count(t, pools[0], `SELECT count(*) FROM job_runs WHERE name = 'recompute' AND status = 'ok' AND counts = '{"rows": 1}'`); n != rounds {
		t.Errorf("%d ok runs with counts recorded, want %d", n, rounds)
	}
	if n := count(t, pools[0], `SELECT count(*) FROM job_runs WHERE status = 'skipped' AND error LIKE 'another instance%'`); n != rounds {
		t.Errorf("%d skipped runs recorded, want %d", n, rounds)
	}
	if n := count(t, pools[0], `SELECT count(DISTINCT round) FROM scratch`); n != rounds {
		t.Errorf("scratch has %d distinct rounds, want %d", n, rounds)
	}
}

// Two replicas on the cron clock with a fast job: each tick runs once even
// when the winner finishes before the other replica tries the lock.
func TestCronTwoReplicasOnePerTick(t *testing.T) {
	t.Parallel()
	pools := replicaPools(t, 2)
	var calls atomic.Int32
	fn := func(ctx context.Context, tx pgx.Tx) (map[string]int, error) {
		calls.Add(1)
		return nil, nil
	}
	var runners []*schedule.Runner
	for _, p := range pools {
		r := newRunner(t, p)
		if err := r.Register("tick", "@every 1s", fn); err != nil {
			t.Fatal(err)
		}
		runners = append(runners, r)
	}
	for _, r := range runners {
		r.Start()
	}
	deadline := time.Now().Add(8 * time.Second)
	for count(t, pools[0], `SELECT count(*) FROM job_runs WHERE status = 'ok'`) < 3 && time.Now().Before(deadline) {
		time.Sleep(100 * time.Millisecond)
	}
	for _, r := range runners {
		if err := r.Stop(t.Context()); err != nil {
			t.Fatal(err)
		}
	}
	ok := count(t, pools[0], `SELECT count(*) FROM job_runs WHERE status = 'ok'`)
	if ok < 3 {
		t.Fatalf("%d ok runs in 8 s of a 1 s schedule", ok)
	}
	if n := int(calls.Load()); n != ok {
		t.Errorf("job body ran %d times, %d ok runs recorded", n, ok)
	}
	// Every tick is one second; a second with two ok runs means both
	// replicas did the work.
	if n := count(t, pools[0], `SELECT count(*) FROM (SELECT date_trunc('second', started_at) s
		FROM job_runs WHERE status = 'ok' GROUP BY s HAVING count(*) > 1) x`); n != 0 {
		t.Errorf("%d ticks ran on both replicas", n)
	}
	// Both replicas were ticking: all but possibly the tick cut short by
	// Stop saw a skip from the other one.
	if n := count(t, pools[0], `SELECT count(*) FROM job_runs WHERE status = 'skipped'`); n < ok-1 {
		t.Errorf("%d skipped attempts for %d ticks", n, ok)
	}
	if n := count(t, pools[0], `SELECT count(*) FROM job_runs WHERE status NOT IN ('ok', 'skipped')`); n != 0 {
		t.Errorf("%d runs neither ok nor skipped", n)
	}
}

// A run interrupted halfway leaves nothing it wrote, and its failure is
// recorded with the reason.
func TestInterruptedRunRollsBack(t *testing.T) {
	t.Parallel()
	cases := []struct {
		name string
		fail func(ctx context.Context) error
		want string
	}{
		{"error", func(context.Context) error { return errors.New("boom after writing") }, "boom after writing"},
		{"panic", func(context.Context) error { panic("kaboom") }, "panic: kaboom"},
		// The run's context is cancelled once the job is running (not on a
		// timer: under load the run might not have started yet).
		{"cancel", func(ctx context.Context) error { cancelRun(ctx)(); <-ctx.Done(); return ctx.Err() }, "context canceled"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			t.Parallel()
			pool := replicaPools(t, 1)[0]
			ownerExec(t, pool, `CREATE TABLE scratch (n int)`)
			r := newRunner(t, pool)
			err := r.Register("writer", "", func(ctx context.Context, tx pgx.Tx) (map[string]int, error) {
				for i := range 3 {
					if _, err := tx.Exec(ctx, `INSERT INTO scratch VALUES ($1)`, i); err != nil {
						return nil, err
					}
				}
				return nil, c.fail(ctx)
			})
			if err != nil {
				t.Fatal(err)
			}
			ctx, cancel := context.WithCancel(t.Context())
			defer cancel()
			ctx = context.WithValue(ctx, cancelKey{}, cancel)
			res, err := r.RunNow(ctx, "writer")
			if err == nil || !strings.Contains(err.Error(), c.want) {
				t.Errorf("RunNow error %v, want it to contain %q", err, c.want)
			}
			if res.Status != schedule.StatusFailed {
				t.Errorf("status %q, want failed", res.Status)
			}
			if n := count(t, pool, `SELECT count(*) FROM scratch`); n != 0 {
				t.Errorf("%d rows of the failed run remain", n)
			}
			var status, msg string
			if err := pool.QueryRow(t.Context(), `SELECT status, error FROM job_runs WHERE id = $1 AND finished_at IS NOT NULL`,
				res.ID).Scan(&status, &msg); err != nil {
				t.Fatal(err)
			}
			if status != "failed" || !strings.Contains(msg, c.want) {
				t.Errorf("job_runs: %s %q, want failed with %q", status, msg, c.want)
			}
		})
	}
}

type cancelKey struct{}

// cancelRun returns the cancel function the test stored in the run's context.
func cancelRun(ctx context.Context) context.CancelFunc {
	return ctx.Value(cancelKey{}).(context.CancelFunc)
}

// The job's connection dies mid-run (as when the database restarts): its
// writes are gone and the run is recorded failed.
func TestRunConnectionLost(t *testing.T) {
	t.Parallel()
	pool := replicaPools(t, 1)[0]
	ownerExec(t, pool, `CREATE TABLE scratch (n int)`)
	r := newRunner(t, pool)
	killed := make(chan struct{})
	pids := make(chan int, 1)
	err := r.Register("writer", "", func(ctx context.Context, tx pgx.Tx) (map[string]int, error) {
		var pid int
		if err := tx.QueryRow(ctx, `INSERT INTO scratch VALUES (1) RETURNING pg_backend_pid()`).Scan(&pid); err != nil {
			return nil, err
		}
		pids <- pid
		<-killed
		return map[string]int{"rows": 1}, nil
	})
	if err != nil {
		t.Fatal(err)
	}
	go func() {
		defer close(killed) // even on error, so the job cannot hang
		pid := <-pids
		// While it runs, the run is visible to others as running.
		var n int
		if err := pool.QueryRow(t.Context(), `SELECT count(*) FROM job_runs WHERE name = 'writer' AND status = 'running'`).Scan(&n); err != nil || n != 1 {
			t.Errorf("%d running rows seen during the run (%v), want 1", n, err)
		}
		if _, err := pool.Exec(t.Context(), `SELECT pg_terminate_backend($1)`, pid); err != nil {
			t.Error(err)
		}
	}()
	res, err := r.RunNow(t.Context(), "writer")
	if err == nil || res.Status != schedule.StatusFailed {
		t.Fatalf("RunNow = %+v, %v; want failed", res, err)
	}
	if n := count(t, pool, `SELECT count(*) FROM scratch`); n != 0 {
		t.Errorf("%d rows of the lost run remain", n)
	}
	if n := count(t, pool, `SELECT count(*) FROM job_runs WHERE id = $1 AND status = 'failed'`, res.ID); n != 1 {
		t.Error("the lost run is not recorded failed")
	}
}

// A 'running' row left by a process that died is closed as failed by the
// next run of the job.
func TestOrphanedRunMarkedFailed(t *testing.T) {
	t.Parallel()
	pool := replicaPools(t, 1)[0]
	var orphan int64
	if err := pool.QueryRow(t.Context(), `INSERT INTO job_runs (name, started_at, status)
		VALUES ('nightly', now() - interval '1 hour', 'running') RETURNING id`).Scan(&orphan); err != nil {
		t.Fatal(err)
	}
	r := newRunner(t, pool)
	if err := r.Register("nightly", "", func(context.Context, pgx.Tx) (map[string]int, error) { return nil, nil }); err != nil {
		t.Fatal(err)
	}
	res, err := r.RunNow(t.Context(), "nightly")
	if err != nil || res.Status != schedule.StatusOK {
		t.Fatalf("RunNow = %+v, %v", res, err)
	}
	var status, msg string
	if err := pool.QueryRow(t.Context(), `SELECT status, error FROM job_runs WHERE id = $1`, orphan).Scan(&status, &msg); err != nil {
		t.Fatal(err)
	}
	if status != "failed" || !strings.Contains(msg, "interrupted") {
		t.Errorf("orphan run: %s %q, want failed, interrupted", status, msg)
	}
}

// Stop waits for a running job; with an expired deadline it cancels the
// job, which rolls back.
func TestStopWaitsForRun(t *testing.T) {
	t.Parallel()
	pool := replicaPools(t, 1)[0]
	r := newRunner(t, pool)
	started := make(chan struct{}, 2)
	var finished atomic.Bool
	must(t, r.Register("slow", "", func(ctx context.Context, tx pgx.Tx) (map[string]int, error) {
		started <- struct{}{}
		time.Sleep(300 * time.Millisecond)
		finished.Store(true)
		return nil, nil
	}))
	must(t, r.Register("stuck", "", func(ctx context.Context, tx pgx.Tx) (map[string]int, error) {
		started <- struct{}{}
		<-ctx.Done()
		return nil, ctx.Err()
	}))
	results := make(chan error, 2)
	go func() { _, err := r.RunNow(context.Background(), "slow"); results <- err }()
	<-started
	go func() { _, err := r.RunNow(context.Background(), "stuck"); results <- err }()
	<-started
	ctx, cancel := context.WithTimeout(t.Context(), time.Second)
	defer cancel()
	err := r.Stop(ctx)
	if !errors.Is(err, context.DeadlineExceeded) {
		t.Errorf("Stop = %v, want the deadline error (the stuck job)", err)
	}
	if !finished.Load() {
		t.Error("Stop returned before the slow job finished")
	}
	for range 2 {
		<-results
	}
	if n := count(t, pool, `SELECT count(*) FROM job_runs WHERE (name, status) IN (('slow', 'ok'), ('stuck', 'failed'))`); n != 2 {
		t.Errorf("want slow ok and stuck failed; %d of those recorded", n)
	}
}

func must(t *testing.T, err error) {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
}

func TestSpecs(t *testing.T) {
	t.Parallel()
	if _, err := schedule.NewRunner(nil, schedule.Config{Recompute: "61 * * * *"}); err == nil ||
		!strings.Contains(err.Error(), "ROTORWRIGHT_CRON_RECOMPUTE") || !strings.Contains(err.Error(), `"61 * * * *"`) {
		t.Errorf("bad recompute spec: %v", err)
	}
	// Six fields (with seconds) are not the standard form.
	if _, err := schedule.NewRunner(nil, schedule.Config{Nightly: "0 0 2 * * *"}); err == nil ||
		!strings.Contains(err.Error(), "ROTORWRIGHT_CRON_NIGHTLY") {
		t.Errorf("six-field nightly spec: %v", err)
	}
	r, err := schedule.NewRunner(nil, schedule.Config{})
	if err != nil {
		t.Fatal(err)
	}
	if c := r.Config(); c.Recompute != "*/15 * * * *" || c.Nightly != "0 2 * * *" {
		t.Errorf("defaults %q %q", c.Recompute, c.Nightly)
	}
	fn := func(context.Context, pgx.Tx) (map[string]int, error) { return nil, nil }
	if err := r.Register("x", "every day", fn); err == nil || !strings.Contains(err.Error(), `job "x"`) {
		t.Errorf("bad job spec: %v", err)
	}
	must(t, r.Register("x", "@hourly", fn))
	if err := r.Register("x", "@hourly", fn); err == nil {
		t.Error("a second job named x was accepted")
	}
	if _, err := r.RunNow(t.Context(), "nope"); err == nil {
		t.Error("RunNow of an unknown job succeeded")
	}
	if schedule.LockKey("recompute") == schedule.LockKey("nightly") {
		t.Error("two jobs share a lock key")
	}
}
