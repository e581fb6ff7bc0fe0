package pglocal

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"
)

func own(t *testing.T, dir, command string) *Cluster {
	t.Helper()
	c, err := Own(t.Context(), Options{Dir: dir, Ephemeral: true, Logf: t.Logf}, command)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = c.Stop(context.Background()) })
	return c
}

// A second owner is refused with a message naming the first, and the first
// one's server is left alone.
func TestOwnRefusesSecondOwner(t *testing.T) {
	dir := clusterDir(t)
	c := own(t, dir, "serve")
	pid := postmasterPID(t, c)
	_, err := Own(t.Context(), Options{Dir: dir, Ephemeral: true}, "demo")
	want := fmt.Sprintf("another rotorwright (PID %d) is starting to serve from this home", os.Getpid())
	var busy *BusyError
	if !errors.As(err, &busy) || err.Error() != want {
		t.Fatalf("second Own before listening: %v, want %q", err, want)
	}
	if err := c.SetAddr("127.0.0.1:8123"); err != nil {
		t.Fatal(err)
	}
	_, err = Own(t.Context(), Options{Dir: dir, Ephemeral: true}, "serve")
	want = fmt.Sprintf("another rotorwright (PID %d) is serving from this home at 127.0.0.1:8123", os.Getpid())
	if err == nil || err.Error() != want {
		t.Fatalf("second Own: %v, want %q", err, want)
	}
	if got := postmasterPID(t, c); got != pid || !isServerProcess(pid) {
		t.Fatalf("the owner's server changed: PID %d -> %d", pid, got)
	}
	connect(t, c.URL("")).Close(t.Context())
}

// A command beside a live owner attaches: it does not own the server, its
// Stop leaves it running, and the owner's Stop waits until it lets go.
func TestUseBesideOwner(t *testing.T) {
	dir := clusterDir(t)
	owner := own(t, dir, "serve")
	tool, err := Use(t.Context(), Options{Dir: dir}, "key create")
	if err != nil {
		t.Fatal(err)
	}
	if tool.Owned() || tool.Owner().Command != "serve" || tool.Owner().PID != os.Getpid() {
		t.Fatalf("Use beside an owner: owned %v, owner %+v", tool.Owned(), tool.Owner())
	}
	conn := connect(t, tool.URL(""))
	stopped := make(chan error, 1)
	go func() { stopped <- owner.Stop(context.Background()) }()
	select {
	case err := <-stopped:
		t.Fatalf("the owner stopped its server while a command used it (err %v)", err)
	case <-time.After(500 * time.Millisecond):
	}
	if err := conn.Ping(t.Context()); err != nil {
		t.Fatalf("the attached command lost the server: %v", err)
	}
	conn.Close(t.Context())
	if err := tool.Stop(t.Context()); err != nil {
		t.Fatal(err)
	}
	select {
	case err := <-stopped:
		if err != nil {
			t.Fatal(err)
		}
	case <-time.After(60 * time.Second):
		t.Fatal("the owner did not stop after the command let go")
	}
	if _, err := os.Stat(filepath.Join(dir, "pgdata", "postmaster.pid")); !os.IsNotExist(err) {
		t.Errorf("server still running after the owner's Stop: %v", err)
	}
}

// With no owner, a command owns the server for its run and stops it.
func TestUseWithoutOwner(t *testing.T) {
	dir := clusterDir(t)
	c, err := Use(t.Context(), Options{Dir: dir, Ephemeral: true}, "due")
	if err != nil {
		t.Fatal(err)
	}
	if !c.Owned() {
		t.Fatal("Use with no owner did not own the server")
	}
	// Meanwhile a serve is refused, naming the command.
	_, err = Own(t.Context(), Options{Dir: dir}, "serve")
	if err == nil || !strings.Contains(err.Error(), "(PID "+fmt.Sprint(os.Getpid())+", due) is running the embedded database") {
		t.Errorf("Own while a command owns the folder: %v", err)
	}
	if err := c.Stop(t.Context()); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(filepath.Join(dir, "pgdata", "postmaster.pid")); !os.IsNotExist(err) {
		t.Errorf("server still running after Stop: %v", err)
	}
	// The lock is free again.
	own(t, dir, "serve")
}

// An owner that dies leaves its server running; the next owner restarts it
// (new postmaster, same data) once a command still attached to it has
// finished.
func TestOwnRestartsOrphan(t *testing.T) {
	dir := clusterDir(t)
	first := own(t, dir, "serve")
	conn := connect(t, first.URL(""))
	if _, err := conn.Exec(t.Context(), `CREATE TABLE kept (v int); INSERT INTO kept VALUES (42)`); err != nil {
		t.Fatal(err)
	}
	conn.Close(t.Context())
	orphan := postmasterPID(t, first)
	user, err := Use(t.Context(), Options{Dir: dir}, "import")
	if err != nil || user.Owned() {
		t.Fatalf("Use: %v (owned %v)", err, user.Owned())
	}
	// The owner dies: the kernel drops its lock, the server keeps running.
	first.claim.f.Close()
	first.claim, first.stopped = nil, true

	next := make(chan *Cluster, 1)
	errc := make(chan error, 1)
	go func() {
		c, err := Own(context.Background(), Options{Dir: dir, Ephemeral: true, Logf: t.Logf}, "serve")
		if err != nil {
			errc <- err
			return
		}
		next <- c
	}()
	select {
	case <-next:
		t.Fatal("the orphan was restarted under a command still using it")
	case err := <-errc:
		t.Fatal(err)
	case <-time.After(500 * time.Millisecond):
	}
	if !isServerProcess(orphan) {
		t.Fatal("the orphaned server was stopped under a command still using it")
	}
	if err := user.Stop(t.Context()); err != nil {
		t.Fatal(err)
	}
	var c *Cluster
	select {
	case c = <-next:
	case err := <-errc:
		t.Fatal(err)
	case <-time.After(90 * time.Second):
		t.Fatal("no new owner")
	}
	t.Cleanup(func() { _ = c.Stop(context.Background()) })
	if pid := postmasterPID(t, c); pid == orphan || !c.Owned() {
		t.Errorf("new server PID %d, orphan %d; owned %v", pid, orphan, c.Owned())
	}
	if isServerProcess(orphan) {
		t.Errorf("the orphaned server (PID %d) still runs beside the new one", orphan)
	}
	var v int
	if err := connect(t, c.URL("")).QueryRow(t.Context(), `SELECT v FROM kept`).Scan(&v); err != nil || v != 42 {
		t.Fatalf("kept.v = %d, %v; want 42", v, err)
	}
}
