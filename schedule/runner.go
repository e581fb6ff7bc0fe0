package schedule

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"hash/fnv"
	"log/slog"
	"runtime/debug"
	"sync"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"
	"github.com/robfig/cron/v3"
)

// Default cron specs (standard 5-field, in the Runner's time zone).
const (
	DefaultRecomputeSpec = "*/15 * * * *"
	DefaultNightlySpec   = "0 2 * * *"
)

// Run statuses as stored in job_runs.status.
const (
	StatusRunning = "running"
	StatusOK      = "ok"
	StatusFailed  = "failed"
	StatusSkipped = "skipped"
)

// JobFunc is a job body. It runs inside the transaction that holds the job's
// advisory lock and must write only through tx: if it returns an error or
// panics, everything it wrote is rolled back. counts (rows written, items
// checked...) are stored with the run.
type JobFunc func(ctx context.Context, tx pgx.Tx) (counts map[string]int, err error)

// Config configures a Runner. Empty specs take the defaults.
type Config struct {
	Recompute string         // ROTORWRIGHT_CRON_RECOMPUTE, default DefaultRecomputeSpec
	Nightly   string         // ROTORWRIGHT_CRON_NIGHTLY, default DefaultNightlySpec
	Location  *time.Location // time zone of the specs; nil means UTC
	Timeout   time.Duration  // longest a run may take; 0 means 10 minutes
	Logger    *slog.Logger   // nil means slog.Default()
	// Observe, when set, hears every run attempt once it has ended: its
	// status (StatusOK, StatusFailed, StatusSkipped) and how long it took
	// (the metrics' hook; it must not block).
	Observe func(job, status string, took time.Duration)
}

// Result is the outcome of one run attempt.
type Result struct {
	ID     int64          // job_runs.id
	Status string         // StatusOK, StatusFailed or StatusSkipped
	Reason string         // why it was skipped
	Counts map[string]int // the job's counts when ok
}

// Runner runs registered jobs on cron specs, one replica at a time.
type Runner struct {
	pool *pgxpool.Pool
	cfg  Config
	log  *slog.Logger
	cron *cron.Cron

	// base is the parent of every run's context; Stop cancels it only when
	// its deadline passes with a run still going.
	base   context.Context
	cancel context.CancelFunc
	wg     sync.WaitGroup // runs in flight, cron-started or RunNow

	mu   sync.Mutex
	jobs map[string]*job
}

type job struct {
	name  string
	fn    JobFunc
	sched cron.Schedule // nil: run only by RunNow
	entry cron.EntryID
}

// NewRunner checks cfg's specs (the error names the setting) and returns a
// Runner on pool. The pool needs a spare connection per concurrently running
// job: a run holds its locked transaction while it records its start on
// another connection.
func NewRunner(pool *pgxpool.Pool, cfg Config) (*Runner, error) {
	if cfg.Recompute == "" {
		cfg.Recompute = DefaultRecomputeSpec
	}
	if cfg.Nightly == "" {
		cfg.Nightly = DefaultNightlySpec
	}
	if cfg.Location == nil {
		cfg.Location = time.UTC
	}
	if cfg.Timeout <= 0 {
		cfg.Timeout = 10 * time.Minute
	}
	if cfg.Logger == nil {
		cfg.Logger = slog.Default()
	}
	for _, s := range []struct{ setting, spec string }{
		{"ROTORWRIGHT_CRON_RECOMPUTE", cfg.Recompute},
		{"ROTORWRIGHT_CRON_NIGHTLY", cfg.Nightly},
	} {
		if _, err := parseSpec(s.spec); err != nil {
			return nil, fmt.Errorf("%s: %w", s.setting, err)
		}
	}
	if pool != nil && pool.Config().MaxConns < 2 {
		return nil, errors.New("schedule: the pool needs at least 2 connections")
	}
	base, cancel := context.WithCancel(context.Background())
	return &Runner{
		pool:   pool,
		cfg:    cfg,
		log:    cfg.Logger,
		cron:   cron.New(cron.WithLocation(cfg.Location)),
		base:   base,
		cancel: cancel,
		jobs:   map[string]*job{},
	}, nil
}

// Config returns the configuration with defaults filled in, e.g. for
// Register(name, r.Config().Recompute, fn).
func (r *Runner) Config() Config { return r.cfg }

// parseSpec accepts cron's standard 5-field specs and its descriptors
// (@hourly, @every 1h30m, ...).
func parseSpec(spec string) (cron.Schedule, error) {
	s, err := cron.ParseStandard(spec)
	if err != nil {
		return nil, fmt.Errorf("%q is not a 5-field cron spec (minute hour day-of-month month day-of-week) or @descriptor: %v", spec, err)
	}
	return s, nil
}

// Register adds a job. spec is a cron spec, or "" for a job run only by
// RunNow. Names are unique: the advisory lock key is derived from the name.
func (r *Runner) Register(name, spec string, fn JobFunc) error {
	if name == "" || fn == nil {
		return errors.New("schedule: Register needs a name and a function")
	}
	j := &job{name: name, fn: fn}
	if spec != "" {
		s, err := parseSpec(spec)
		if err != nil {
			return fmt.Errorf("job %q: %w", name, err)
		}
		j.sched = s
	}
	r.mu.Lock()
	defer r.mu.Unlock()
	if _, dup := r.jobs[name]; dup {
		return fmt.Errorf("job %q registered twice", name)
	}
	r.jobs[name] = j
	if j.sched != nil {
		j.entry = r.cron.Schedule(j.sched, cron.FuncJob(func() { r.tick(j) }))
	}
	return nil
}

// Start starts the cron clock.
func (r *Runner) Start() { r.cron.Start() }

// Stop stops the clock and waits for runs in flight. If ctx ends first their
// contexts are cancelled (so their transactions roll back) and ctx's error is
// returned once they have returned.
func (r *Runner) Stop(ctx context.Context) error {
	cronDone := r.cron.Stop().Done() // closes when the runs cron started have returned
	done := make(chan struct{})
	go func() { <-cronDone; r.wg.Wait(); close(done) }() // wg also covers RunNow
	select {
	case <-done:
		r.cancel()
		return nil
	case <-ctx.Done():
		r.cancel()
		<-done
		return ctx.Err()
	}
}

// tick is what the cron clock calls.
func (r *Runner) tick(j *job) {
	// Entry is served by the cron goroutine after it has set Prev, so Prev
	// is the scheduled time of this very tick.
	r.mu.Lock()
	id := j.entry // set by Register after cron.Schedule returns
	r.mu.Unlock()
	at := r.cron.Entry(id).Prev
	res, err := r.run(r.base, j, at)
	switch {
	case err != nil:
		r.log.Error("scheduled job failed", "job", j.name, "run", res.ID, "err", err)
	case res.Status == StatusSkipped:
		r.log.Debug("scheduled job skipped", "job", j.name, "reason", res.Reason)
	default:
		r.log.Info("scheduled job done", "job", j.name, "run", res.ID, "counts", res.Counts)
	}
}

// RunNow runs a registered job at once (for the recompute command and
// tests). A skipped run (another replica holds the lock) is not an error; a
// failed one returns the job's error.
func (r *Runner) RunNow(ctx context.Context, name string) (Result, error) {
	r.mu.Lock()
	j := r.jobs[name]
	r.mu.Unlock()
	if j == nil {
		return Result{}, fmt.Errorf("no job %q", name)
	}
	// Stop's cancel reaches this run too.
	ctx, stop := context.WithCancel(ctx)
	defer stop()
	unhook := context.AfterFunc(r.base, stop)
	defer unhook()
	return r.run(ctx, j, time.Time{})
}

// LockKey is the advisory lock key of a job: FNV-1a 64 of a fixed prefix and
// the name, so it does not collide with tern's migration lock or with other
// users of advisory locks by accident.
func LockKey(name string) int64 {
	h := fnv.New64a()
	h.Write([]byte("rotorwright/schedule/" + name))
	return int64(h.Sum64())
}

// run makes one attempt. tick is the scheduled time for a cron tick, zero
// for RunNow.
func (r *Runner) run(ctx context.Context, j *job, tick time.Time) (res Result, err error) {
	r.wg.Add(1)
	defer r.wg.Done()
	if r.cfg.Observe != nil {
		start := time.Now()
		defer func() {
			status := res.Status
			if err != nil || status == "" {
				status = StatusFailed // failed before a run was recorded (begin, lock)
			}
			r.cfg.Observe(j.name, status, time.Since(start))
		}()
	}
	ctx, cancel := context.WithTimeout(ctx, r.cfg.Timeout)
	defer cancel()

	tx, err := r.pool.Begin(ctx)
	if err != nil {
		return Result{}, fmt.Errorf("job %s: begin: %w", j.name, err)
	}
	committed := false
	defer func() {
		if !committed {
			// Not ctx: a cancelled run must still roll back promptly.
			rctx, rcancel := context.WithTimeout(context.Background(), 5*time.Second)
			_ = tx.Rollback(rctx)
			rcancel()
		}
	}()

	var won bool
	if err := tx.QueryRow(ctx, `SELECT pg_try_advisory_xact_lock($1)`, LockKey(j.name)).Scan(&won); err != nil {
		return Result{}, fmt.Errorf("job %s: lock: %w", j.name, err)
	}
	if !won {
		return r.skip(j, tx, &committed, "another instance is running this job")
	}
	if !tick.IsZero() {
		if at, done, err := r.tickDone(ctx, tx, j, tick); err != nil {
			return Result{}, err
		} else if done {
			return r.skip(j, tx, &committed, fmt.Sprintf("the tick of %s already ran at %s", tick.UTC().Format(time.RFC3339), at.UTC().Format(time.RFC3339Nano)))
		}
	}

	// Recorded on another connection and committed at once, so the run is
	// visible while it goes and a dead process leaves a trace. Any other
	// 'running' row of this job is orphaned: we hold the lock.
	if _, err := r.pool.Exec(ctx, `UPDATE job_runs SET status = 'failed', finished_at = now(),
		error = 'interrupted: the run ended without recording an outcome (process or connection lost)'
		WHERE name = $1 AND status = 'running'`, j.name); err != nil {
		return Result{}, fmt.Errorf("job %s: clear stale runs: %w", j.name, err)
	}
	if err := r.pool.QueryRow(ctx, `INSERT INTO job_runs (name, started_at, status)
		VALUES ($1, now(), 'running') RETURNING id`, j.name).Scan(&res.ID); err != nil {
		return Result{}, fmt.Errorf("job %s: record start: %w", j.name, err)
	}

	counts, err := r.call(ctx, j.fn, tx)
	if err == nil {
		var cj []byte
		if cj, err = json.Marshal(counts); err == nil {
			if counts == nil {
				cj = []byte("{}")
			}
			// The ok mark commits with the job's writes, or neither does.
			_, err = tx.Exec(ctx, `UPDATE job_runs SET status = 'ok', finished_at = clock_timestamp(), counts = $2
				WHERE id = $1`, res.ID, cj)
		}
		if err == nil {
			if err = tx.Commit(ctx); err == nil {
				committed = true
				res.Status, res.Counts = StatusOK, counts
				return res, nil
			}
			err = fmt.Errorf("commit: %w", err)
		}
	}
	if ctx.Err() != nil && !errors.Is(err, ctx.Err()) {
		err = fmt.Errorf("%w (context: %v)", err, context.Cause(ctx))
	}
	// Roll back before recording, so the job's writes are gone first.
	rctx, rcancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer rcancel()
	_ = tx.Rollback(rctx)
	committed = true
	res.Status = StatusFailed
	if _, uerr := r.pool.Exec(rctx, `UPDATE job_runs SET status = 'failed', finished_at = now(), error = $2
		WHERE id = $1`, res.ID, err.Error()); uerr != nil {
		r.log.Error("cannot record failed run", "job", j.name, "run", res.ID, "err", uerr)
	}
	return res, fmt.Errorf("job %s: %w", j.name, err)
}

// tickDone reports whether another replica already completed this tick: an
// ok run that started at most slack before it. slack absorbs clock skew
// between replicas and the database, and stays under half the gap to the
// next tick so it never swallows the previous one.
func (r *Runner) tickDone(ctx context.Context, tx pgx.Tx, j *job, tick time.Time) (time.Time, bool, error) {
	slack := 30 * time.Second
	if gap := j.sched.Next(tick).Sub(tick) / 2; gap < slack {
		slack = gap
	}
	var at time.Time
	err := tx.QueryRow(ctx, `SELECT started_at FROM job_runs
		WHERE name = $1 AND status = 'ok' AND started_at >= $2
		ORDER BY started_at DESC LIMIT 1`, j.name, tick.Add(-slack)).Scan(&at)
	if errors.Is(err, pgx.ErrNoRows) {
		return time.Time{}, false, nil
	}
	if err != nil {
		return time.Time{}, false, fmt.Errorf("job %s: tick check: %w", j.name, err)
	}
	return at, true, nil
}

// skip releases the lock transaction and records a skipped attempt.
func (r *Runner) skip(j *job, tx pgx.Tx, committed *bool, reason string) (Result, error) {
	ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
	defer cancel()
	_ = tx.Rollback(ctx)
	*committed = true
	res := Result{Status: StatusSkipped, Reason: reason}
	err := r.pool.QueryRow(ctx, `INSERT INTO job_runs (name, started_at, finished_at, status, error)
		VALUES ($1, now(), now(), 'skipped', $2) RETURNING id`, j.name, reason).Scan(&res.ID)
	if err != nil {
		// The skip itself succeeded; only its record is missing.
		r.log.Warn("cannot record skipped run", "job", j.name, "err", err)
	}
	return res, nil
}

// call runs fn, turning a panic into an error so the transaction rolls back
// and the run is recorded failed instead of taking the process down.
func (r *Runner) call(ctx context.Context, fn JobFunc, tx pgx.Tx) (counts map[string]int, err error) {
	defer func() {
		if p := recover(); p != nil {
			r.log.Error("scheduled job panicked", "panic", p, "stack", string(debug.Stack()))
			counts, err = nil, fmt.Errorf("panic: %v", p)
		}
	}()
	return fn(ctx, tx)
}
