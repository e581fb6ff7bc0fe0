package pglocal

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
)

// clusterDir returns a fresh data folder the server account can reach. When
// tests run as root the server runs as postgres, and t.TempDir() sits under a
// 0700 root-owned directory, so the folder is made directly in the system
// temp directory (world-enterable /tmp) with mode 0755 instead.
func clusterDir(t *testing.T) string {
	t.Helper()
	d, err := os.MkdirTemp("", "rotorwright-pglocal-")
	if err != nil {
		t.Fatal(err)
	}
	if err := os.Chmod(d, 0o755); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(d) })
	return d
}

func startCluster(t *testing.T, opts Options) *Cluster {
	t.Helper()
	opts.Ephemeral = true
	opts.Logf = t.Logf
	c, err := Start(t.Context(), opts)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() {
		if err := c.Stop(context.Background()); err != nil {
			t.Error(err)
		}
	})
	return c
}

func connect(t *testing.T, url string) *pgx.Conn {
	t.Helper()
	conn, err := pgx.Connect(t.Context(), url)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { conn.Close(context.Background()) })
	return conn
}

func TestStartQueryStopRestart(t *testing.T) {
	dir := clusterDir(t)
	began := time.Now()
	c := startCluster(t, Options{Dir: dir})
	t.Logf("first start (initdb + start + create database): %s", time.Since(began))

	conn := connect(t, c.URL(""))
	var one int
	var db, enc, collate, listen string
	err := conn.QueryRow(t.Context(), `select 1, current_database(),
		current_setting('server_encoding'), current_setting('lc_collate'),
		current_setting('listen_addresses')`).Scan(&one, &db, &enc, &collate, &listen)
	if err != nil {
		t.Fatal(err)
	}
	if one != 1 || db != "rotorwright" || enc != "UTF8" || collate != "C" || listen != "" {
		t.Errorf("got (%d, %s, %s, %s, %q), want (1, rotorwright, UTF8, C, \"\")", one, db, enc, collate, listen)
	}
	if _, err := conn.Exec(t.Context(), `create table kept (v text); insert into kept values ('before restart')`); err != nil {
		t.Fatal(err)
	}
	conn.Close(t.Context())

	if err := c.Stop(t.Context()); err != nil {
		t.Fatal(err)
	}
	if err := c.Stop(t.Context()); err != nil {
		t.Errorf("second Stop: %v, want nil", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "pgdata", "postmaster.pid")); !os.IsNotExist(err) {
		t.Errorf("postmaster.pid after Stop: %v, want it gone", err)
	}

	// A crashed run leaves postmaster.pid behind; a live PID that is not a
	// server (this test process) must not block the next start.
	stale := strconv.Itoa(os.Getpid()) + "\n" + c.DataDir() + "\n"
	if err := os.WriteFile(filepath.Join(dir, "pgdata", "postmaster.pid"), []byte(stale), 0o600); err != nil {
		t.Fatal(err)
	}

	began = time.Now()
	c2 := startCluster(t, Options{Dir: dir})
	t.Logf("restart on existing cluster: %s", time.Since(began))
	conn2 := connect(t, c2.URL(""))
	var v string
	// The row surviving proves the cluster was reused, not re-initialised.
	if err := conn2.QueryRow(t.Context(), `select v from kept`).Scan(&v); err != nil {
		t.Fatal(err)
	}
	if v != "before restart" {
		t.Errorf("kept.v = %q", v)
	}

	// A second Start on a directory whose server is running must refuse.
	_, err = Start(t.Context(), Options{Dir: dir, Ephemeral: true})
	if err == nil || !strings.Contains(err.Error(), "already running") {
		t.Errorf("Start on a running cluster: %v, want an \"already running\" error", err)
	}
}

// The server has no TCP listener and admits socket connections only; the
// socket sits in a directory of mode 0700 owned by the server's account, so
// no other local user can reach it.
func TestSocketOnly(t *testing.T) {
	dir := clusterDir(t)
	c := startCluster(t, Options{Dir: dir})
	conn := connect(t, c.URL(""))
	var listen string
	if err := conn.QueryRow(t.Context(), `SELECT current_setting('listen_addresses')`).Scan(&listen); err != nil {
		t.Fatal(err)
	}
	if listen != "" {
		t.Errorf("listen_addresses = %q, want none", listen)
	}
	// The rules the server loaded: socket lines only, none for TCP.
	rows, err := conn.Query(t.Context(), `SELECT type, auth_method FROM pg_hba_file_rules`)
	if err != nil {
		t.Fatal(err)
	}
	n := 0
	for rows.Next() {
		var typ, method string
		if err := rows.Scan(&typ, &method); err != nil {
			t.Fatal(err)
		}
		n++
		if typ != "local" {
			t.Errorf("pg_hba rule of type %s (%s): want local only", typ, method)
		}
	}
	if rows.Err() != nil || n == 0 {
		t.Fatalf("pg_hba rules: %d, %v", n, rows.Err())
	}
	// The postmaster holds no listening TCP socket (/proc/net/tcp{,6}: state
	// 0A is LISTEN; its socket inodes are under /proc/PID/fd).
	pid := postmasterPID(t, c)
	if inodes := listeningTCPInodes(t); len(inodes) > 0 {
		fds, _ := filepath.Glob(fmt.Sprintf("/proc/%d/fd/*", pid))
		for _, fd := range fds {
			if target, err := os.Readlink(fd); err == nil && inodes[target] {
				t.Errorf("the server (PID %d) listens on TCP: %s", pid, target)
			}
		}
	}
	fi, err := os.Stat(c.SocketDir())
	if err != nil {
		t.Fatal(err)
	}
	if fi.Mode().Perm() != 0o700 || c.SocketDir() != filepath.Join(dir, "run") {
		t.Errorf("socket dir %s mode %04o, want %s mode 0700", c.SocketDir(), fi.Mode().Perm(), filepath.Join(dir, "run"))
	}
	if uid := int(fi.Sys().(*syscall.Stat_t).Uid); uid != c.acct.uid {
		t.Errorf("socket dir owned by uid %d, want the server's %d", uid, c.acct.uid)
	}
}

// listeningTCPInodes returns "socket:[inode]" of every listening TCP socket.
func listeningTCPInodes(t *testing.T) map[string]bool {
	t.Helper()
	out := map[string]bool{}
	for _, f := range []string{"/proc/net/tcp", "/proc/net/tcp6"} {
		b, err := os.ReadFile(f)
		if err != nil {
			continue
		}
		for _, line := range strings.Split(string(b), "\n")[1:] {
			fs := strings.Fields(line)
			if len(fs) > 9 && fs[3] == "0A" {
				out["socket:["+fs[9]+"]"] = true
			}
		}
	}
	return out
}

func TestLongDirUsesShortSocketDir(t *testing.T) {
	dir := filepath.Join(clusterDir(t), strings.Repeat("d", 100))
	c := startCluster(t, Options{Dir: dir, Database: "other"})
	if !c.tempSock || len(c.sockDir) > maxSocketDir {
		t.Fatalf("socket dir %q (temp %v) for a %d-byte Dir", c.sockDir, c.tempSock, len(dir))
	}
	if _, err := os.Stat(filepath.Join(c.sockDir, ".s.PGSQL."+strconv.Itoa(c.Port()))); err != nil {
		t.Errorf("socket: %v", err)
	}
	conn := connect(t, c.URL("other"))
	var db string
	if err := conn.QueryRow(t.Context(), `select current_database()`).Scan(&db); err != nil {
		t.Fatal(err)
	}
	if db != "other" {
		t.Errorf("current_database = %q, want other", db)
	}
	conn.Close(t.Context())
	if err := c.Stop(t.Context()); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(c.sockDir); !os.IsNotExist(err) {
		t.Errorf("temporary socket dir after Stop: %v, want it removed", err)
	}
}

func TestUnreachableDirAsRoot(t *testing.T) {
	if os.Geteuid() != 0 {
		t.Skip("only root switches the server to another account")
	}
	acct, err := serverAccount()
	if err != nil {
		t.Fatal(err)
	}
	// t.TempDir() is under a 0700 directory owned by root.
	_, err = Start(t.Context(), Options{Dir: filepath.Join(t.TempDir(), "data")})
	if err == nil || !strings.Contains(err.Error(), "cannot enter") || !strings.Contains(err.Error(), acct.name) {
		t.Errorf("err = %v, want a \"cannot enter\" error naming user %s", err, acct.name)
	}
}

func TestIsServerProcess(t *testing.T) {
	if isServerProcess(os.Getpid()) {
		t.Error("the test process is reported as a server")
	}
	if isServerProcess(0) || isServerProcess(-1) {
		t.Error("PIDs <= 0 are reported as a server")
	}
}

// postmasterPID reads the server's PID from postmaster.pid.
func postmasterPID(t *testing.T, c *Cluster) int {
	t.Helper()
	data, err := os.ReadFile(filepath.Join(c.DataDir(), "postmaster.pid"))
	if err != nil {
		t.Fatal(err)
	}
	first, _, _ := strings.Cut(string(data), "\n")
	pid, err := strconv.Atoi(first)
	if err != nil {
		t.Fatal(err)
	}
	return pid
}

// A killed server leaves postmaster.pid behind; Stop must treat the server
// as already stopped and the next Start must recover the cluster.
func TestRestartAfterCrash(t *testing.T) {
	dir := clusterDir(t)
	c := startCluster(t, Options{Dir: dir})
	pid := postmasterPID(t, c)
	if !isServerProcess(pid) {
		t.Errorf("postmaster PID %d not recognised as a server", pid)
	}
	if os.Geteuid() == 0 {
		// As root the server must run as the postgres account.
		fi, err := os.Stat(fmt.Sprintf("/proc/%d", pid))
		if err != nil {
			t.Fatal(err)
		}
		if uid := fi.Sys().(*syscall.Stat_t).Uid; int(uid) != c.acct.uid || uid == 0 {
			t.Errorf("server runs as uid %d, want %d (%s)", uid, c.acct.uid, c.acct.name)
		}
	}
	conn := connect(t, c.URL(""))
	if _, err := conn.Exec(t.Context(), `create table survived (v int); insert into survived values (7)`); err != nil {
		t.Fatal(err)
	}
	if _, err := conn.Exec(t.Context(), `checkpoint`); err != nil {
		t.Fatal(err)
	}
	conn.Close(t.Context())
	if err := syscall.Kill(pid, syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	for isServerProcess(pid) {
		time.Sleep(20 * time.Millisecond)
	}
	if err := c.Stop(t.Context()); err != nil {
		t.Errorf("Stop after crash: %v, want nil", err)
	}
	if _, err := os.Stat(filepath.Join(dir, "pgdata", "postmaster.pid")); err != nil {
		t.Fatalf("expected the crash to leave postmaster.pid: %v", err)
	}
	c2 := startCluster(t, Options{Dir: dir})
	var v int
	if err := connect(t, c2.URL("")).QueryRow(t.Context(), `select v from survived`).Scan(&v); err != nil {
		t.Fatal(err)
	}
	if v != 7 {
		t.Errorf("survived.v = %d, want 7", v)
	}
}

func TestStopLeftoverWithoutServer(t *testing.T) {
	if err := StopLeftover(t.Context(), clusterDir(t)); err != nil {
		t.Errorf("StopLeftover on an empty folder: %v, want nil", err)
	}
}
