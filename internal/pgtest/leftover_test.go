package pgtest

import (
	"context"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/internal/pglocal"
)

func TestSweepLeftovers(t *testing.T) {
	// Under /tmp with mode 0755 so a server run as postgres can reach it.
	root, err := os.MkdirTemp("", "pgtest-sweep-")
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { os.RemoveAll(root) })
	if err := os.Chmod(root, 0o755); err != nil {
		t.Fatal(err)
	}
	mk := func(name, owner string) string {
		d := filepath.Join(root, name)
		if err := os.Mkdir(d, 0o755); err != nil {
			t.Fatal(err)
		}
		if owner != "" {
			if err := os.WriteFile(filepath.Join(d, ownerFile), []byte(owner), 0o644); err != nil {
				t.Fatal(err)
			}
		}
		return d
	}
	// A finished, reaped child gives a PID nobody holds.
	done := exec.Command("true")
	if err := done.Run(); err != nil {
		t.Fatal(err)
	}
	dead := mk("rotorwright-pgtest-dead", strconv.Itoa(done.Process.Pid))
	live := mk("rotorwright-pgtest-live", strconv.Itoa(os.Getpid()))
	unmarked := mk("rotorwright-pgtest-unmarked", "")

	c, err := pglocal.Start(t.Context(), pglocal.Options{Dir: dead, Database: "postgres", Ephemeral: true})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = c.Stop(context.Background()) })

	if err := sweepLeftovers(t.Context(), root); err != nil {
		t.Fatal(err)
	}
	if _, err := os.Stat(dead); !os.IsNotExist(err) {
		t.Errorf("folder of a dead owner: %v, want removed", err)
	}
	if conn, err := pgx.Connect(t.Context(), c.URL("postgres")); err == nil {
		conn.Close(t.Context())
		t.Error("the abandoned server still accepts connections")
	}
	for _, d := range []string{live, unmarked} {
		if _, err := os.Stat(d); err != nil {
			t.Errorf("%s: %v, want it kept", d, err)
		}
	}
}
