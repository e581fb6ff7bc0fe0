// Package pglocal runs a private PostgreSQL cluster from the machine's
// PostgreSQL server binaries, the default database when no DATABASE_URL is
// given. The server has no TCP listener: it listens on a Unix socket in a
// directory of mode 0700 (Dir/run), so only the account that runs it (and
// root) can connect; within that boundary connections are trusted.
package pglocal

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
)

// Options configure Start.
type Options struct {
	// Dir is the data folder (e.g. ./.rotorwright); the cluster lives in
	// Dir/pgdata and the server log in Dir/postgres.log.
	Dir string
	// Port names the Unix socket (.s.PGSQL.<port>); 0 means 5432. The
	// server listens on no TCP port.
	Port int
	// Logf, when set, receives progress lines (initdb, start, stop).
	Logf func(format string, args ...any)
	// Database is created if missing; default "rotorwright".
	Database string
	// Ephemeral trades crash safety for speed (fsync off, small buffers):
	// only for clusters thrown away afterwards, such as tests.
	Ephemeral bool
}

// Cluster is a running private PostgreSQL server.
type Cluster struct {
	binDir   string
	dir      string
	dataDir  string
	sockDir  string
	tempSock bool // sockDir was made by Start and is removed by Stop
	logFile  string
	port     int
	database string
	acct     account
	logf     func(format string, args ...any)

	claim *claim   // held by the folder's owner (Own, Use): Stop stops the server
	users *os.File // a shared users lock held while attached (Use)
	owner Owner    // the owner, when attached

	mu      sync.Mutex
	stopped bool
}

// Superuser is the role initdb creates; URL connects as it.
const Superuser = "postgres"

// defaultPort names the socket when Options.Port is 0 (PostgreSQL's own
// default). It never clashes: every cluster has a socket directory of its own.
const defaultPort = 5432

// maxSocketDir keeps "<dir>/.s.PGSQL.<port>" within the 107 bytes a Unix
// socket path may hold (sun_path is 108 bytes on Linux, NUL included: unix(7)).
const maxSocketDir = 107 - len("/.s.PGSQL.65535")

// Start starts the cluster in opts.Dir, creating it with initdb on first use,
// waits until it accepts connections and creates opts.Database if missing.
// The caller must call Stop; the server outlives this process otherwise.
// Start takes no lock: it is for folders one process uses alone, such as a
// test's; Own and Use share a folder between processes.
func Start(ctx context.Context, opts Options) (*Cluster, error) { return start(ctx, opts, nil) }

// start is Start; with cl, the owner lock of opts.Dir, a server left running
// there by a dead owner is restarted rather than refused.
func start(ctx context.Context, opts Options, cl *claim) (*Cluster, error) {
	if opts.Dir == "" {
		return nil, errors.New("pglocal: Options.Dir is empty")
	}
	dir, err := filepath.Abs(opts.Dir)
	if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	binDir, err := FindBinaries()
	if err != nil {
		return nil, err
	}
	acct, err := serverAccount()
	if err != nil {
		return nil, err
	}
	c := &Cluster{
		binDir:   binDir,
		dir:      dir,
		dataDir:  filepath.Join(dir, "pgdata"),
		logFile:  filepath.Join(dir, "postgres.log"),
		database: opts.Database,
		acct:     acct,
		logf:     opts.Logf,
		claim:    cl,
	}
	if c.database == "" {
		c.database = "rotorwright"
	}
	if c.logf == nil {
		c.logf = func(string, ...any) {}
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	if err := acct.checkReachable(dir); err != nil {
		return nil, err
	}
	if err := c.prepareFiles(); err != nil {
		c.removeTempSock()
		return nil, err
	}
	started := false
	defer func() {
		if !started {
			c.removeTempSock()
		}
	}()
	if _, err := os.Stat(filepath.Join(c.dataDir, "PG_VERSION")); errors.Is(err, os.ErrNotExist) {
		if err := c.initdb(ctx, opts.Ephemeral); err != nil {
			return nil, err
		}
	} else if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	if err := c.clearStalePID(ctx); err != nil {
		return nil, err
	}
	if err := c.startServer(ctx, opts); err != nil {
		return nil, err
	}
	started = true // from here on Stop cleans up
	if err := c.waitReady(ctx); err != nil {
		_ = c.Stop(context.WithoutCancel(ctx))
		return nil, err
	}
	if err := c.createDatabase(ctx, c.database); err != nil {
		_ = c.Stop(context.WithoutCancel(ctx))
		return nil, err
	}
	return c, nil
}

// URL returns a pgx connection string for database db on the cluster as the
// superuser; an empty db means the Options.Database one.
func (c *Cluster) URL(db string) string { return c.URLAs(Superuser, db) }

// URLAs is URL for another role. The server trusts whoever reaches its
// socket, so no password is needed.
func (c *Cluster) URLAs(role, db string) string {
	if db == "" {
		db = c.database
	}
	q := url.Values{}
	q.Set("host", c.sockDir)
	q.Set("port", strconv.Itoa(c.port))
	q.Set("sslmode", "disable")
	u := url.URL{Scheme: "postgres", User: url.User(role), Path: "/" + db, RawQuery: q.Encode()}
	return u.String()
}

// Port returns the number in the socket's name.
func (c *Cluster) Port() int { return c.port }

// SocketDir returns the directory holding the server's Unix socket.
func (c *Cluster) SocketDir() string { return c.sockDir }

// DataDir returns the cluster directory (Dir/pgdata).
func (c *Cluster) DataDir() string { return c.dataDir }

// Stop shuts the server down (pg_ctl stop -m fast, which rolls back open
// transactions and disconnects clients). An owner first waits for the
// commands attached to its server (until ctx ends); an attached command
// only lets go of the server. Calling it again does nothing.
func (c *Cluster) Stop(ctx context.Context) error {
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.users != nil {
		c.users.Close()
		c.users = nil
	}
	if c.stopped {
		return nil
	}
	if c.claim != nil {
		users, err := lockUsers(ctx, c.dir, syscall.LOCK_EX, func() {
			c.logf("pglocal: waiting for the other rotorwright commands using the database to finish")
		})
		if err != nil {
			c.logf("pglocal: other commands still use the database (%v); stopping it anyway", err)
			ctx = context.WithoutCancel(ctx)
		} else {
			defer users.Close() // after the claim is released: see Use
		}
	}
	out, err := c.pgctl(ctx, "stop", "-D", c.dataDir, "-m", "fast", "-w", "-t", "60", "-s")
	if err != nil && c.running(ctx) {
		return fmt.Errorf("pglocal: pg_ctl stop: %v: %s", err, bytes.TrimSpace(out))
	}
	c.stopped = true
	c.removeTempSock()
	c.logf("pglocal: stopped server in %s", c.dataDir)
	if c.claim != nil {
		c.claim.release()
		c.claim = nil
	}
	return nil
}

// prepareFiles creates the cluster, socket and log paths and hands them to
// the server account: when root runs us, postgres cannot create files in a
// root-owned Dir itself.
func (c *Cluster) prepareFiles() error {
	if err := os.MkdirAll(c.dataDir, 0o700); err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	c.sockDir = filepath.Join(c.dir, "run")
	if len(c.sockDir) > maxSocketDir {
		base := os.TempDir()
		if len(base)+len("/rwpg-0123456789") > maxSocketDir {
			base = "/tmp"
		}
		d, err := os.MkdirTemp(base, "rwpg-")
		if err != nil {
			return fmt.Errorf("pglocal: %w", err)
		}
		c.sockDir, c.tempSock = d, true
	} else if err := os.MkdirAll(c.sockDir, 0o700); err != nil {
		return fmt.Errorf("pglocal: %w", err)
	} else if err := os.Chmod(c.sockDir, 0o700); err != nil { // made wider by hand, or by an old version
		return fmt.Errorf("pglocal: %w", err)
	}
	f, err := os.OpenFile(c.logFile, os.O_CREATE|os.O_WRONLY|os.O_APPEND, 0o600)
	if err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	f.Close()
	for _, p := range []string{c.dataDir, c.sockDir, c.logFile} {
		if err := c.acct.own(p); err != nil {
			return fmt.Errorf("pglocal: hand %s to user %s: %w", p, c.acct.name, err)
		}
	}
	return nil
}

func (c *Cluster) initdb(ctx context.Context, ephemeral bool) error {
	start := time.Now()
	args := []string{"-D", c.dataDir, "-U", Superuser, "-A", "trust", "-E", "UTF8", "--locale=C"}
	if ephemeral {
		args = append(args, "--no-sync")
	}
	out, err := c.exec(ctx, "initdb", args...)
	if err != nil {
		return fmt.Errorf("pglocal: initdb %s: %v\n%s", c.dataDir, err, bytes.TrimSpace(out))
	}
	c.logf("pglocal: created cluster in %s (%s)", c.dataDir, time.Since(start).Round(time.Millisecond))
	return nil
}

// startServer writes the per-start settings and runs pg_ctl start.
func (c *Cluster) startServer(ctx context.Context, opts Options) error {
	c.port = opts.Port
	if c.port == 0 {
		c.port = defaultPort
	}
	if err := c.writeConfig(opts.Ephemeral); err != nil {
		return err
	}
	logStart := fileSize(c.logFile)
	start := time.Now()
	out, err := c.pgctl(ctx, "start", "-D", c.dataDir, "-l", c.logFile, "-w", "-t", "60", "-s")
	if err != nil {
		return fmt.Errorf("pglocal: pg_ctl start: %v: %s\nserver log (%s):\n%s",
			err, bytes.TrimSpace(out), c.logFile, lastLines(readFrom(c.logFile, logStart), 20))
	}
	c.logf("pglocal: server ready on the socket in %s (%s)", c.sockDir, time.Since(start).Round(time.Millisecond))
	return nil
}

// writeConfig rewrites rotorwright.conf, which postgresql.conf includes, so
// the port and socket directory may change from one start to the next
// without passing paths through pg_ctl's shell command line.
func (c *Cluster) writeConfig(ephemeral bool) error {
	mainConf := filepath.Join(c.dataDir, "postgresql.conf")
	conf, err := os.ReadFile(mainConf)
	if err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	const include = "include_if_exists = 'rotorwright.conf'"
	if !bytes.Contains(conf, []byte(include)) {
		conf = append(conf, []byte("\n# Settings managed by rotorwright; rewritten at every start.\n"+include+"\n")...)
		if err := os.WriteFile(mainConf, conf, 0o600); err != nil {
			return fmt.Errorf("pglocal: %w", err)
		}
	}
	var b strings.Builder
	// No TCP listener: the socket directory's mode is the access control.
	fmt.Fprintf(&b, "listen_addresses = ''\n")
	fmt.Fprintf(&b, "port = %d\n", c.port)
	fmt.Fprintf(&b, "unix_socket_directories = %s\n", confQuote(c.sockDir))
	fmt.Fprintf(&b, "unix_socket_permissions = 0700\n")
	if ephemeral {
		// Safe only because the data is thrown away (common practice for
		// test clusters): a crash can corrupt a cluster run like this.
		b.WriteString("fsync = off\nsynchronous_commit = off\nfull_page_writes = off\nshared_buffers = '32MB'\n")
	}
	p := filepath.Join(c.dataDir, "rotorwright.conf")
	if err := os.WriteFile(p, []byte(b.String()), 0o600); err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	if err := c.acct.own(p); err != nil {
		return err
	}
	// initdb's pg_hba.conf (and that of clusters made by older versions)
	// also trusts TCP from 127.0.0.1: replace it with socket lines only.
	hba := filepath.Join(c.dataDir, "pg_hba.conf")
	if err := os.WriteFile(hba, []byte(hbaConf), 0o600); err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	return c.acct.own(hba)
}

// hbaConf admits connections on the Unix socket only. Reaching the socket
// needs entry to its 0700 directory, which only the server's account (and
// root) has, so those connections are trusted.
const hbaConf = `# Managed by rotorwright; rewritten at every start.
# TYPE  DATABASE  USER  METHOD
local   all       all   trust
`

// waitReady polls until the server answers a query; pg_ctl -w already waited
// for the postmaster, this also covers a slow first connection.
func (c *Cluster) waitReady(ctx context.Context) error {
	ctx, cancel := context.WithTimeout(ctx, 15*time.Second)
	defer cancel()
	for {
		conn, err := pgx.Connect(ctx, c.URL("postgres"))
		if err == nil {
			err = conn.Ping(ctx)
			conn.Close(context.WithoutCancel(ctx))
			if err == nil {
				return nil
			}
		}
		select {
		case <-ctx.Done():
			return fmt.Errorf("pglocal: server on %s does not accept connections: %w", c.sockDir, err)
		case <-time.After(50 * time.Millisecond):
		}
	}
}

// createDatabase creates database name unless it exists.
func (c *Cluster) createDatabase(ctx context.Context, name string) error {
	conn, err := pgx.Connect(ctx, c.URL("postgres"))
	if err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	defer conn.Close(context.WithoutCancel(ctx))
	_, err = conn.Exec(ctx, "CREATE DATABASE "+pgx.Identifier{name}.Sanitize())
	var pgErr *pgconn.PgError
	if errors.As(err, &pgErr) && pgErr.Code == "42P04" { // duplicate_database
		return nil
	}
	if err != nil {
		return fmt.Errorf("pglocal: create database %s: %w", name, err)
	}
	c.logf("pglocal: created database %s", name)
	return nil
}

func (c *Cluster) removeTempSock() {
	if c.tempSock {
		_ = os.RemoveAll(c.sockDir)
	}
}

// confQuote quotes a postgresql.conf string value.
func confQuote(s string) string {
	return "'" + strings.ReplaceAll(s, "'", "''") + "'"
}

// StopLeftover stops a server still running on dir/pgdata after the process
// that started it ended without Stop (killed, or a test binary that timed
// out). It does nothing when no server runs there.
func StopLeftover(ctx context.Context, dir string) error {
	binDir, err := FindBinaries()
	if err != nil {
		return err
	}
	acct, err := serverAccount()
	if err != nil {
		return err
	}
	c := &Cluster{binDir: binDir, dataDir: filepath.Join(dir, "pgdata"), acct: acct}
	if _, err := os.Stat(filepath.Join(c.dataDir, "postmaster.pid")); errors.Is(err, os.ErrNotExist) {
		return nil
	}
	// Immediate: nobody is left to care about a clean shutdown.
	out, err := c.pgctl(ctx, "stop", "-D", c.dataDir, "-m", "immediate", "-w", "-t", "60", "-s")
	if err != nil && c.running(ctx) {
		return fmt.Errorf("pglocal: pg_ctl stop: %v: %s", err, bytes.TrimSpace(out))
	}
	return nil
}
