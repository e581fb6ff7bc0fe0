// Package pgtest gives tests real PostgreSQL databases cheaply: one server per
// test binary (a throwaway pglocal cluster, or the server named by
// ROTORWRIGHT_TEST_DATABASE_URL), one template database prepared once, and a
// fresh clone of it for every test that asks.
//
// Tests connect as the service does, with its least privilege: NewDB's URL
// logs in as a role of this test binary that is a member of
// migrations.ServiceRole (which prepare must create: the migrations do).
// OwnerURL gives the same database as the owner, for tests that must do what
// the service cannot (tamper with the audit log, drop a table).
//
//	func TestMain(m *testing.M) { pgtest.Main(m, migrateForTests) }
//	func TestX(t *testing.T) { t.Parallel(); url := pgtest.NewDB(t); ... }
package pgtest

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"flag"
	"fmt"
	"net/url"
	"os"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"github.com/rotorwright/rotorwright/internal/pglocal"
	"github.com/rotorwright/rotorwright/migrations"
)

// EnvURL names the variable that points the tests at an existing server
// instead of a throwaway cluster. Its role needs CREATEDB and CREATEROLE; the
// server must be PostgreSQL 13 or later (DROP DATABASE ... WITH (FORCE)).
const EnvURL = "ROTORWRIGHT_TEST_DATABASE_URL"

// EnvCluster set to "service" starts the run's cluster with the settings
// the service's own embedded cluster runs on (fsync, synchronous commit,
// full-page writes and PostgreSQL's default buffers) instead of the fast,
// unsafe test settings: for benchmarks whose figures must be the service's.
const EnvCluster = "ROTORWRIGHT_TEST_CLUSTER"

// ServiceSettings reports whether this run's cluster has the service's
// settings (EnvCluster=service).
func ServiceSettings() bool { return os.Getenv(EnvCluster) == "service" }

// current is the harness Main set up for this test binary.
var current *harness

// harness owns the template database and clones it.
type harness struct {
	adminURL string // maintenance database, used to create and drop the others
	prefix   string // unique per test binary, so binaries can share a server
	template string
	seq      atomic.Int64
	// service logs in as a member of migrations.ServiceRole, made for this
	// binary so binaries sharing a server do not share a password.
	service, servicePassword string

	// mu serialises use of admin: a pgx.Conn is not safe for concurrent use,
	// and concurrent clones of one template can fail with "source database
	// is being accessed by other users".
	mu    sync.Mutex
	admin *pgx.Conn
}

// Main runs the package's tests against a prepared template database; call
// it from TestMain. prepare receives the template's URL (run migrations
// there) and must close its connections before returning. Main exits the
// process with the tests' status.
func Main(m *testing.M, prepare func(ctx context.Context, url string) error) {
	os.Exit(run(m, prepare))
}

func run(m *testing.M, prepare func(ctx context.Context, url string) error) int {
	flag.Parse()
	ctx := context.Background()
	began := time.Now()
	adminURL, stop, err := startServer(ctx)
	if err != nil {
		fmt.Fprintln(os.Stderr, "pgtest:", err)
		return 1
	}
	defer stop()
	h, err := newHarness(ctx, adminURL, prepare)
	if err != nil {
		fmt.Fprintln(os.Stderr, "pgtest:", err)
		return 1
	}
	defer func() {
		if err := h.close(context.Background(), os.Getenv(EnvURL) != ""); err != nil {
			fmt.Fprintln(os.Stderr, "pgtest:", err)
		}
	}()
	if testing.Verbose() {
		fmt.Fprintf(os.Stderr, "pgtest: server and template ready in %s\n", time.Since(began).Round(time.Millisecond))
	}
	current = h
	return m.Run()
}

// startServer returns the maintenance URL of the server for this run and a
// function that stops it and removes its files.
func startServer(ctx context.Context) (string, func(), error) {
	if u := os.Getenv(EnvURL); u != "" {
		return u, func() {}, nil
	}
	if err := sweepLeftovers(ctx, os.TempDir()); err != nil {
		fmt.Fprintln(os.Stderr, "pgtest: cleaning up earlier runs:", err)
	}
	// Made directly under the system temp directory with mode 0755: when
	// tests run as root the server runs as postgres and must reach it.
	dir, err := os.MkdirTemp("", dirPattern)
	if err != nil {
		return "", nil, err
	}
	if err := errors.Join(os.Chmod(dir, 0o755), markOwner(dir)); err != nil {
		os.RemoveAll(dir)
		return "", nil, err
	}
	c, err := pglocal.Start(ctx, pglocal.Options{Dir: dir, Database: "postgres", Ephemeral: !ServiceSettings()})
	if err != nil {
		os.RemoveAll(dir)
		return "", nil, err
	}
	stop := func() {
		if err := c.Stop(context.Background()); err != nil {
			fmt.Fprintln(os.Stderr, "pgtest:", err)
		}
		os.RemoveAll(dir)
	}
	return c.URL("postgres"), stop, nil
}

// newHarness creates and prepares the template database on the server at
// adminURL.
func newHarness(ctx context.Context, adminURL string, prepare func(ctx context.Context, url string) error) (*harness, error) {
	suffix := make([]byte, 4)
	if _, err := rand.Read(suffix); err != nil {
		return nil, err
	}
	h := &harness{adminURL: adminURL, prefix: "rwt_" + hex.EncodeToString(suffix)}
	h.template = h.prefix + "_tmpl"
	admin, err := pgx.Connect(ctx, adminURL)
	if err != nil {
		return nil, fmt.Errorf("connect to %s: %w", redact(adminURL), err)
	}
	h.admin = admin
	if _, err := admin.Exec(ctx, "CREATE DATABASE "+ident(h.template)); err != nil {
		admin.Close(ctx)
		return nil, fmt.Errorf("create template database: %w", err)
	}
	if prepare != nil {
		if err := prepare(ctx, withDatabase(adminURL, h.template)); err != nil {
			_ = h.close(ctx, true)
			return nil, fmt.Errorf("prepare template database: %w", err)
		}
	}
	if err := h.makeServiceLogin(ctx); err != nil {
		_ = h.close(ctx, true)
		return nil, err
	}
	// Cloning needs the template free of sessions: refuse new ones and end
	// any a careless prepare left open.
	_, err = admin.Exec(ctx, "ALTER DATABASE "+ident(h.template)+" ALLOW_CONNECTIONS false")
	if err == nil {
		_, err = admin.Exec(ctx, `SELECT pg_terminate_backend(pid) FROM pg_stat_activity
			WHERE datname = $1 AND pid <> pg_backend_pid()`, h.template)
	}
	if err != nil {
		_ = h.close(ctx, true)
		return nil, fmt.Errorf("seal template database: %w", err)
	}
	return h, nil
}

// makeServiceLogin creates this binary's login role in the service role.
func (h *harness) makeServiceLogin(ctx context.Context) error {
	pw := make([]byte, 16)
	if _, err := rand.Read(pw); err != nil {
		return err
	}
	h.service, h.servicePassword = h.prefix+"_svc", hex.EncodeToString(pw)
	// Hex, so the literal needs no quoting beyond the quotes.
	_, err := h.admin.Exec(ctx, "CREATE ROLE "+ident(h.service)+" LOGIN PASSWORD '"+h.servicePassword+"' IN ROLE "+
		ident(migrations.ServiceRole))
	if err != nil {
		return fmt.Errorf("create the tests' service login (prepare must create role %s, as the migrations do): %w",
			migrations.ServiceRole, err)
	}
	return nil
}

// close drops the template and the service login when asked (a shared
// server) and disconnects.
func (h *harness) close(ctx context.Context, dropTemplate bool) error {
	h.mu.Lock()
	defer h.mu.Unlock()
	var err error
	if dropTemplate {
		_, err = h.admin.Exec(ctx, "DROP DATABASE IF EXISTS "+ident(h.template)+" WITH (FORCE)")
		if h.service != "" {
			_, err2 := h.admin.Exec(ctx, "DROP ROLE IF EXISTS "+ident(h.service))
			err = errors.Join(err, err2)
		}
	}
	return errors.Join(err, h.admin.Close(ctx))
}

// NewDB returns the URL of a new database cloned from the template, dropped
// when the test ends, connecting with the service's privileges. Safe from
// parallel tests.
func NewDB(t testing.TB) string {
	t.Helper()
	h := harnessFor(t)
	return h.asService(h.newDB(t))
}

// OwnerURL returns the URL of the database dbURL names, connecting as its
// owner: for tests that must do what the service cannot.
func OwnerURL(t testing.TB, dbURL string) string {
	t.Helper()
	return withDatabase(harnessFor(t).adminURL, databaseOf(t, dbURL))
}

// OwnerConn connects to the database dbURL names as its owner (dbURL may be
// a pool's pool.Config().ConnString()), closed when the test ends.
func OwnerConn(t testing.TB, dbURL string) *pgx.Conn {
	t.Helper()
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, OwnerURL(t, dbURL))
	if err != nil {
		t.Fatalf("pgtest: connect as owner: %v", err)
	}
	t.Cleanup(func() { conn.Close(context.Background()) })
	return conn
}

// ServiceURL returns the URL of the database dbURL names, connecting with
// the service's privileges.
func ServiceURL(t testing.TB, dbURL string) string {
	t.Helper()
	h := harnessFor(t)
	return h.asService(withDatabase(h.adminURL, databaseOf(t, dbURL)))
}

func harnessFor(t testing.TB) *harness {
	t.Helper()
	if current == nil {
		t.Fatal("pgtest: needs pgtest.Main called from TestMain")
	}
	return current
}

func databaseOf(t testing.TB, dbURL string) string {
	t.Helper()
	cfg, err := pgconn.ParseConfig(dbURL)
	if err != nil {
		t.Fatalf("pgtest: %v", err)
	}
	return cfg.Database
}

// asService returns connURL logging in as the service login.
func (h *harness) asService(connURL string) string {
	return withUser(connURL, h.service, h.servicePassword)
}

// NewConn returns a connection to a new database cloned from the template,
// closed when the test ends. A pgx.Conn serves one goroutine at a time.
func NewConn(t testing.TB) *pgx.Conn {
	t.Helper()
	u := NewDB(t)
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	conn, err := pgx.Connect(ctx, u)
	if err != nil {
		t.Fatalf("pgtest: connect: %v", err)
	}
	// Registered after the drop, so it runs first.
	t.Cleanup(func() { conn.Close(context.Background()) })
	return conn
}

// NewEmptyDB returns the URL of a new database that no migration has
// touched, connecting as its owner, for tests of what happens before
// migrate; dropped when the test ends.
func NewEmptyDB(t testing.TB) string {
	t.Helper()
	return harnessFor(t).createDB(t, "template0")
}

func (h *harness) newDB(t testing.TB) string {
	t.Helper()
	return h.createDB(t, h.template)
}

// createDB creates a database from template, dropped at the end of the
// test, and returns its URL.
func (h *harness) createDB(t testing.TB, template string) string {
	t.Helper()
	name := dbName(h.prefix, h.seq.Add(1), t.Name())
	// Not t.Context(): it is cancelled before cleanups run.
	ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
	defer cancel()
	h.mu.Lock()
	_, err := h.admin.Exec(ctx, "CREATE DATABASE "+ident(name)+" TEMPLATE "+ident(template))
	h.mu.Unlock()
	if err != nil {
		t.Fatalf("pgtest: create database %s: %v", name, err)
	}
	t.Cleanup(func() {
		ctx, cancel := context.WithTimeout(context.Background(), 30*time.Second)
		defer cancel()
		h.mu.Lock()
		defer h.mu.Unlock()
		// FORCE ends sessions the test left open (PostgreSQL 13+).
		if _, err := h.admin.Exec(ctx, "DROP DATABASE "+ident(name)+" WITH (FORCE)"); err != nil {
			t.Errorf("pgtest: drop database %s: %v", name, err)
		}
	})
	return withDatabase(h.adminURL, name)
}

// dbName builds "<prefix>_<n>_<test name>", lower case and within the 63
// bytes PostgreSQL keeps of an identifier; the name helps find a leftover.
func dbName(prefix string, n int64, testName string) string {
	base := fmt.Sprintf("%s_%d_", prefix, n)
	var b strings.Builder
	for _, r := range strings.ToLower(testName) {
		if b.Len()+len(base) >= 63 {
			break
		}
		if (r >= 'a' && r <= 'z') || (r >= '0' && r <= '9') {
			b.WriteRune(r)
		} else {
			b.WriteByte('_')
		}
	}
	return base + b.String()
}

// withDatabase returns connURL pointing at database db; it accepts both URL
// and keyword/value connection strings.
func withDatabase(connURL, db string) string {
	if strings.HasPrefix(connURL, "postgres://") || strings.HasPrefix(connURL, "postgresql://") {
		u, err := url.Parse(connURL)
		if err == nil {
			u.Path = "/" + db
			u.RawPath = ""
			return u.String()
		}
	}
	// In keyword/value strings a later keyword overrides an earlier one.
	return connURL + " dbname='" + strings.ReplaceAll(db, "'", `\'`) + "'"
}

// withUser returns connURL logging in as user with password; it accepts
// both URL and keyword/value connection strings.
func withUser(connURL, user, password string) string {
	if strings.HasPrefix(connURL, "postgres://") || strings.HasPrefix(connURL, "postgresql://") {
		u, err := url.Parse(connURL)
		if err == nil {
			u.User = url.UserPassword(user, password)
			return u.String()
		}
	}
	q := func(s string) string { return "'" + strings.ReplaceAll(s, "'", `\'`) + "'" }
	return connURL + " user=" + q(user) + " password=" + q(password)
}

// redact hides a password in connURL for error messages.
func redact(connURL string) string {
	u, err := url.Parse(connURL)
	if err != nil || u.User == nil {
		return "the test server"
	}
	if _, ok := u.User.Password(); ok {
		u.User = url.UserPassword(u.User.Username(), "xxxxx")
	}
	return u.String()
}

func ident(name string) string { return pgx.Identifier{name}.Sanitize() }
