package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net"
	"net/http"
	"os"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgxpool"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/pglocal"
	"github.com/rotorwright/rotorwright/migrations"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// App is the wired service: database (embedded or given), store and API.
type App struct {
	cfg     Config
	command string    // names this process in the home's lock file
	out     io.Writer // command output (tokens, tables, summaries)
	errOut  io.Writer // progress for people at a terminal
	log     *slog.Logger
	cluster *pglocal.Cluster
	DB      *store.DB
	// Addr is the address the server listens on, once Run has started.
	Addr   chan string
	server *http.Server
	jobs   *schedule.Runner // the scheduled jobs, once Run has started
}

// jobConns is the size of the scheduled jobs' own pool: a run holds its
// job's lock in a transaction while it records its start on a second
// connection, and the four jobs and the start-up run may run at once.
const jobConns = 2 * 5

// NewApp makes an unopened app that writes to the process's stdout and
// stderr.
func NewApp(cfg Config) *App { return newApp(cfg, os.Stdout, os.Stderr) }

// newApp makes an unopened app: command output goes to stdout, the log to
// stderr.
func newApp(cfg Config, stdout, stderr io.Writer) *App {
	log := newLogger(stderr, cfg.LogLevel, cfg.LogFormat)
	return &App{cfg: cfg, command: "serve", out: stdout, errOut: stderr, log: log, Addr: make(chan string, 1)}
}

// Open starts the embedded database when no URL is configured, migrates as
// the schema owner and connects as the service role: the start of serve and
// demo. It warns when the service's role could change the audit log.
func (a *App) Open(ctx context.Context) error {
	if err := a.open(ctx, false, true); err != nil {
		return err
	}
	role, privileged, err := a.DB.Privileged(ctx)
	if err != nil {
		return fmt.Errorf("privileges of the service's role: %w", err)
	}
	if privileged {
		a.log.Warn("the service connects as a role that can change or remove audit-log rows; connect as a member of "+
			migrations.ServiceRole+" instead (README: least privilege)", "role", role)
	}
	return nil
}

// openForTool is Open for commands that may run beside a serving instance:
// they use its embedded cluster when one is running in the home folder. Only
// migrate applies migrations; the others refuse a schema that is behind.
func (a *App) openForTool(ctx context.Context, migrate bool) error { return a.open(ctx, true, migrate) }

func (a *App) open(ctx context.Context, attach, migrate bool) error {
	serviceURL, ownerURL := a.cfg.DatabaseURL, a.cfg.OwnerDatabaseURL
	embedded := serviceURL == ""
	if embedded {
		opts := pglocal.Options{Dir: a.cfg.Home, Database: "rotorwright",
			Logf: func(f string, args ...any) { a.log.Info(fmt.Sprintf(f, args...)) }}
		var c *pglocal.Cluster
		var err error
		if attach {
			c, err = pglocal.Use(ctx, opts, a.command)
		} else {
			c, err = pglocal.Own(ctx, opts, a.command)
		}
		if err != nil {
			return err
		}
		if o := c.Owner(); !c.Owned() {
			a.log.Info("using the embedded PostgreSQL of a running rotorwright", "pid", o.PID, "command", o.Command, "home", a.cfg.Home)
		}
		a.cluster = c
		// The cluster's superuser owns the schema; the service connects
		// as the least-privilege role, without a password: only the
		// server's account reaches the socket.
		ownerURL, serviceURL = c.URL(""), c.URLAs(migrations.ServiceRole, "")
	}
	if ownerURL == "" {
		ownerURL = serviceURL
	}
	// The embedded cluster's schema is checked as the owner too: in a home
	// from before the service role existed, connecting as that role fails.
	if migrate || embedded {
		if err := a.ownerSchema(ctx, ownerURL, migrate, embedded); err != nil {
			return err
		}
	}
	db, err := store.Open(ctx, serviceURL)
	if err != nil {
		return err
	}
	a.DB = db
	return db.CheckSchema(ctx)
}

// ownerSchema connects as the schema's owner and migrates (when migrate is
// set and migrations are pending) or checks that the schema is current. On
// the embedded cluster it then lets the service role log in.
func (a *App) ownerSchema(ctx context.Context, ownerURL string, migrate, embedded bool) error {
	owner, err := store.Open(ctx, ownerURL)
	if err != nil {
		return err
	}
	defer owner.Close()
	err = owner.CheckSchema(ctx)
	if !migrate || !errors.Is(err, store.ErrSchemaBehind) {
		if err != nil {
			return err
		}
	} else if err := owner.Migrate(ctx, func(f string, args ...any) { a.log.Info(fmt.Sprintf(f, args...)) }); err != nil {
		var pgErr *pgconn.PgError
		if errors.As(err, &pgErr) && pgErr.Code == "42501" && a.cfg.OwnerDatabaseURL == "" && !embedded {
			return fmt.Errorf("migrate: %w: migrations run as the schema's owner; DATABASE_URL's role may not change the schema: "+
				"give the owner's URL in ROTORWRIGHT_OWNER_DATABASE_URL (--owner-database-url)", err)
		}
		return fmt.Errorf("migrate: %w", err)
	}
	if embedded {
		return owner.AllowServiceLogin(ctx)
	}
	return nil
}

// programme is the due-list programme whose status changes go to the
// notification outbox in the same transaction.
func (a *App) programme() *schedule.Programme {
	p := schedule.NewProgramme(a.DB, health.New(a.DB))
	p.Notify = func(ctx context.Context, tx pgx.Tx, previous string, it *fleet.DueItem) error {
		kind := "due_" + it.Status
		if it.Status == fleet.DueOverdue && it.Grounding {
			kind = "grounded"
		}
		return schedule.Enqueue(ctx, tx, kind, it.Subject, map[string]any{"previous": previous, "item": it})
	}
	return p
}

// sessionPurgeBatch bounds the board sessions one run deletes (each with an
// audit row), so a run stays short however many have piled up.
const sessionPurgeBatch = 1000

// repackBatch bounds the logs one repack run rewrites (about 0.2 s of CPU
// each for a 90,000-row log), so a run stays short after a busy day.
const repackBatch = 50

// staleFigures tells whether stored figures came from an older model than
// this build's: flight logs analysed by an older analysis, or health views
// and trends computed by an older health model (after an upgrade that
// changed either). The service then runs the nightly job as it starts
// (startSchedule), so the board and the due list do not show the old
// figures until the night.
func (a *App) staleFigures(ctx context.Context) (bool, error) {
	logs, err := a.DB.StaleLogs(ctx, ingest.AnalysisVersion)
	if err != nil {
		return false, err
	}
	parts, airframes, err := a.DB.StaleViews(ctx, health.ModelVersion)
	if err != nil {
		return false, err
	}
	if logs+parts+airframes == 0 {
		return false, nil
	}
	a.log.Warn("stored figures come from an older model: the nightly job (reanalysis, health views, due list) runs now, "+
		"in the background; until it ends they show the old figures",
		"logs", logs, "analysis_version", ingest.AnalysisVersion,
		"health_views", parts, "airframe_trends", airframes, "health_model", health.ModelVersion)
	return true, nil
}

// startSchedule starts the scheduled jobs (every replica runs the clock; the
// advisory lock lets one run each tick) and the webhook deliverer; with
// catchUp it also runs the nightly job at once (staleFigures).
func (a *App) startSchedule(ctx context.Context, prog *schedule.Programme, m *api.Metrics, catchUp bool) (stop func(), err error) {
	// The jobs' locks are held on connections of their own. Taken from the
	// API's pool, the locks of the jobs that tick together on the recompute
	// clock, beside uploads' transactions begun early (up to half the pool),
	// could hold every connection while the jobs' work waited for one: the
	// service then answered nothing until restarted.
	jcfg := a.DB.Pool().Config() // a copy
	jcfg.MaxConns, jcfg.MinConns = jobConns, 0
	jpool, err := pgxpool.NewWithConfig(ctx, jcfg)
	if err != nil {
		return nil, fmt.Errorf("scheduled jobs' connections: %w", err)
	}
	defer func() {
		if err != nil {
			jpool.Close()
		}
	}()
	r, err := schedule.NewRunner(jpool, schedule.Config{Recompute: a.cfg.CronRecompute, Nightly: a.cfg.CronNightly, Logger: a.log,
		Observe: m.JobRun})
	if err != nil {
		return nil, err
	}
	a.jobs = r
	cfg := r.Config()
	// The due list is rewritten in its own single transaction, so a run
	// interrupted halfway leaves the previous list whole.
	if err := r.Register("recompute", cfg.Recompute, func(ctx context.Context, _ pgx.Tx) (map[string]int, error) {
		n, err := prog.RecomputeFleet(ctx)
		return map[string]int{"due_items": n}, err
	}); err != nil {
		return nil, err
	}
	if err := r.Register("nightly", cfg.Nightly, func(ctx context.Context, _ pgx.Tx) (map[string]int, error) {
		// Logs analysed by an older model (after an upgrade) first, so the
		// health and due list rest on figures of one definition.
		in := &ingest.Ingester{DB: a.DB}
		stale, err := in.Reanalyze(store.WithActor(ctx, store.Actor{Name: "nightly", Method: "JOB", Route: "nightly"}), false, nil)
		if err != nil {
			return map[string]int{"reanalysed": stale}, err
		}
		res, err := prog.RecomputeAll(ctx)
		return map[string]int{"reanalysed": stale, "health_views": res.HealthViews, "judged_flights": res.Judged,
			"due_items": res.DueItems}, err
	}); err != nil {
		return nil, err
	}
	// Board sessions that can no longer be used (expired, ended, of a
	// revoked key) are deleted on the recompute's clock, a bounded batch a
	// run; the lookup already refuses them, this keeps the table small.
	if err := r.Register("sessions", cfg.Recompute, func(ctx context.Context, _ pgx.Tx) (map[string]int, error) {
		n, err := a.DB.PurgeSessions(store.WithActor(ctx, store.Actor{Name: "sessions", Method: "JOB", Route: "sessions"}), sessionPurgeBatch)
		return map[string]int{"sessions_deleted": n}, err
	}); err != nil {
		return nil, err
	}
	// Logs packed fast at upload are rewritten smaller, a bounded batch a
	// run on the recompute's clock, each checked against its text's digest.
	if err := r.Register("repack", cfg.Recompute, func(ctx context.Context, _ pgx.Tx) (map[string]int, error) {
		res, err := ingest.Repack(store.WithActor(ctx, store.Actor{Name: "repack", Method: "JOB", Route: "repack"}), a.DB, repackBatch)
		return map[string]int{"logs_repacked": res.Logs, "bytes_before": int(res.Before), "bytes_after": int(res.After),
			"logs_failed": res.Failed}, err
	}); err != nil {
		return nil, err
	}
	policy := schedule.Policy{AllowPrivate: a.cfg.WebhooksAllowPrivate, AllowLoopback: a.cfg.WebhooksAllowLoopback}
	for _, u := range a.cfg.Webhooks {
		if err := policy.ValidateURL(ctx, u); err != nil {
			return nil, fmt.Errorf("ROTORWRIGHT_WEBHOOKS: %w", err)
		}
	}
	var key []byte
	if a.cfg.WebhookSecret != "" {
		if key, err = schedule.SigningKey(a.cfg.WebhookSecret); err != nil {
			return nil, fmt.Errorf("ROTORWRIGHT_WEBHOOK_SECRET: %w", err)
		}
	} else if len(a.cfg.Webhooks) > 0 {
		a.log.Warn("webhook deliveries are unsigned: set ROTORWRIGHT_WEBHOOK_SECRET so receivers can verify them")
	}
	m.SetWebhookURLs(len(a.cfg.Webhooks))
	m.InitJob("recompute")
	m.InitJob("nightly")
	m.InitJob("sessions")
	m.InitJob("repack")
	r.Start()
	caughtUp := make(chan struct{})
	if !catchUp {
		close(caughtUp)
	} else {
		// A replica that finds the job's lock held skips: another runs it.
		// Stop cancels it (its transaction rolls back; the next start
		// runs it again).
		go func() {
			defer close(caughtUp)
			res, err := r.RunNow(context.WithoutCancel(ctx), "nightly")
			switch {
			case err != nil:
				a.log.Error("bringing stored figures up to date", "job", "nightly", "run", res.ID, "err", err)
			case res.Status == schedule.StatusSkipped:
				a.log.Info("another replica is bringing the stored figures up to date", "job", "nightly", "reason", res.Reason)
			default:
				a.log.Info("stored figures brought up to date", "job", "nightly", "run", res.ID, "counts", res.Counts)
			}
		}()
	}
	dctx, cancel := context.WithCancel(context.WithoutCancel(ctx))
	done := make(chan struct{})
	go func() {
		defer close(done)
		if len(a.cfg.Webhooks) == 0 {
			return
		}
		d := &schedule.Deliverer{Pool: a.DB.Pool(), URLs: a.cfg.Webhooks, Logger: a.log,
			Client: schedule.NewClient(policy, 10*time.Second), SigningKey: key, Observe: m.Delivery}
		d.Run(dctx, 10*time.Second)
	}()
	return func() {
		sctx, scancel := context.WithTimeout(context.Background(), 60*time.Second)
		defer scancel()
		if err := r.Stop(sctx); err != nil {
			a.log.Error("stopping scheduled jobs", "err", err)
		}
		<-caughtUp
		cancel()
		<-done
		jpool.Close()
	}, nil
}

// serveMetrics serves /metrics on the metrics address of its own (kept off
// the API's address, e.g. reachable only from the monitoring network).
func (a *App) serveMetrics(srv *api.Server) (stop func(), err error) {
	ln, err := net.Listen("tcp", a.cfg.MetricsAddr)
	if err != nil {
		return nil, fmt.Errorf("listen %s (metrics): %w", a.cfg.MetricsAddr, err)
	}
	mux := http.NewServeMux()
	mux.Handle("GET /metrics", srv.MetricsHandler())
	ms := &http.Server{Handler: mux, ReadHeaderTimeout: 10 * time.Second, ReadTimeout: 30 * time.Second,
		WriteTimeout: 30 * time.Second}
	a.log.Info("metrics listening", "addr", ln.Addr().String())
	go func() {
		if err := ms.Serve(ln); !errors.Is(err, http.ErrServerClosed) {
			a.log.Error("metrics server", "err", err)
		}
	}()
	return func() {
		ctx, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		_ = ms.Shutdown(ctx)
	}, nil
}

// dbWatchEvery is how often the server pings the database to log its loss
// and return.
const dbWatchEvery = 5 * time.Second

// Run serves the API until ctx ends, then drains requests and returns.
func (a *App) Run(ctx context.Context) error {
	stale, err := a.staleFigures(ctx)
	if err != nil {
		return err
	}
	prog := a.programme()
	limits := a.cfg.Limits
	limits.MetricsElsewhere = a.cfg.MetricsAddr != ""
	srv := api.New(a.DB, a.log, limits, prog)
	defer srv.Close()
	stopSchedule, err := a.startSchedule(ctx, prog, srv.Metrics(), stale)
	if err != nil {
		return err
	}
	defer stopSchedule() // after the server drains: shutdown order per STYLE 14
	// Database loss and return are logged within this of happening, even
	// with no requests.
	wctx, stopWatch := context.WithCancel(ctx)
	defer stopWatch()
	go srv.WatchDatabase(wctx, dbWatchEvery)
	a.server = srv.HTTPServer()
	ln, err := net.Listen("tcp", a.cfg.Addr)
	if err != nil {
		return fmt.Errorf("listen %s: %w", a.cfg.Addr, err)
	}
	addr := ln.Addr().String()
	if a.cluster != nil {
		if err := a.cluster.SetAddr(addr); err != nil {
			a.log.Warn("recording the address in the home's lock file", "err", err)
		}
	}
	a.log.Info("listening", "addr", addr)
	if a.cfg.MetricsAddr != "" {
		stop, err := a.serveMetrics(srv)
		if err != nil {
			return err
		}
		defer stop()
	}
	a.Addr <- addr
	errc := make(chan error, 1)
	go func() { errc <- a.server.Serve(ln) }()
	select {
	case err := <-errc:
		return err
	case <-ctx.Done():
	}
	a.log.Info("shutting down")
	shutdownCtx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	if err := a.server.Shutdown(shutdownCtx); err != nil {
		return err
	}
	if err := <-errc; !errors.Is(err, http.ErrServerClosed) {
		return err
	}
	return nil
}

// Close closes the pool, then stops the embedded database.
func (a *App) Close() error {
	if a.DB != nil {
		a.DB.Close()
	}
	if a.cluster != nil {
		ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
		defer cancel()
		if !a.cluster.Owned() {
			return a.cluster.Stop(ctx) // lets go of the owner's server, which keeps running
		}
		a.log.Info("stopping embedded PostgreSQL", "home", a.cfg.Home)
		return a.cluster.Stop(ctx)
	}
	return nil
}
