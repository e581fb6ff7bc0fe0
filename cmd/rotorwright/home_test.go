package main

import (
	"bufio"
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/internal/pglocal"
)

// newHome makes an empty home folder the embedded server's account can
// reach (under /tmp, mode 0755: as root the server runs as postgres), and
// stops any server a failed test leaves in it.
func newHome(t *testing.T) string {
	t.Helper()
	home, err := os.MkdirTemp("", "rotorwright-home-")
	if err != nil {
		t.Fatal(err)
	}
	os.Chmod(home, 0o755)
	t.Cleanup(func() {
		_ = pglocal.StopLeftover(context.Background(), home)
		os.RemoveAll(home)
	})
	return home
}

// serverPID returns the PID of the embedded server running in home, 0 when
// none runs.
func serverPID(t *testing.T, home string) int {
	t.Helper()
	data, err := os.ReadFile(filepath.Join(home, "pgdata", "postmaster.pid"))
	if err != nil {
		return 0
	}
	first, _, _ := strings.Cut(string(data), "\n")
	pid, _ := strconv.Atoi(first)
	if comm, err := os.ReadFile(fmt.Sprintf("/proc/%d/comm", pid)); err != nil || strings.TrimSpace(string(comm)) != "postgres" {
		return 0
	}
	return pid
}

// noHarmfulAdvice fails on a message that tells the user to stop a server
// by hand: following it could kill a live service's database.
func noHarmfulAdvice(t *testing.T, msg string) {
	t.Helper()
	if strings.Contains(msg, "pg_ctl") {
		t.Errorf("message advises pg_ctl: %s", msg)
	}
}

// A second serve or demo in the home of a running one says who serves and
// where, exits non-zero and leaves the running server alone.
func TestSecondStartInOneHome(t *testing.T) {
	t.Parallel()
	home := newHome(t)
	_, addr, _ := startApp(t, Config{Home: home})
	pid := serverPID(t, home)
	if pid == 0 {
		t.Fatal("no embedded server running")
	}
	want := fmt.Sprintf("another rotorwright (PID %d) is serving from this home at %s", os.Getpid(), addr)
	for _, cmd := range []string{"serve", "demo"} {
		_, errOut, code := runCLI(t, cmd, "--home", home, "--addr", "127.0.0.1:0")
		if code != exitFailure || !strings.Contains(errOut, want) || strings.Contains(errOut, "stopping embedded") {
			t.Errorf("second %s: exit %d, stderr %q; want 1 and %q", cmd, code, errOut, want)
		}
		noHarmfulAdvice(t, errOut)
	}
	if got := serverPID(t, home); got != pid {
		t.Fatalf("the running server changed: PID %d -> %d", pid, got)
	}
	if s := get(t, "http://"+addr+"/readyz", "", nil); s != 200 {
		t.Fatalf("the first service after the refused starts: readyz %d", s)
	}
}

// A command beside a running service uses its server and leaves it running;
// it does not claim to stop it.
func TestToolBesideService(t *testing.T) {
	t.Parallel()
	home := newHome(t)
	_, addr, _ := startApp(t, Config{Home: home})
	pid := serverPID(t, home)
	out, errOut, code := runCLI(t, "key", "create", "--name", "ops", "--role", "viewer", "--home", home)
	if code != exitOK || strings.Contains(errOut, "stopping embedded") || !strings.Contains(errOut, "using the embedded PostgreSQL of a running rotorwright") {
		t.Fatalf("key create beside serve: exit %d, stderr:\n%s", code, errOut)
	}
	if s := get(t, "http://"+addr+"/v1/airframes", strings.TrimSpace(out), nil); s != 200 {
		t.Fatalf("the token made beside the service: %d", s)
	}
	if got := serverPID(t, home); got != pid || got == 0 {
		t.Fatalf("server PID %d -> %d after the command", pid, got)
	}
}

// A command with no service running starts the server, says it stops it,
// and does.
func TestToolAloneStopsItsServer(t *testing.T) {
	t.Parallel()
	home := newHome(t)
	for _, args := range [][]string{{"migrate"}, {"due"}} {
		_, errOut, code := runCLI(t, append(args, "--home", home)...)
		if code != exitOK || !strings.Contains(errOut, "stopping embedded PostgreSQL") {
			t.Fatalf("%v alone: exit %d, stderr:\n%s", args, code, errOut)
		}
		if pid := serverPID(t, home); pid != 0 {
			t.Fatalf("%v said it stopped the server, yet PID %d runs", args, pid)
		}
	}
}

// startChild runs the built binary's serve in home and returns it once it
// listens.
func startChild(t *testing.T, bin, home string) *exec.Cmd {
	t.Helper()
	cmd := exec.Command(bin, "serve", "--home", home, "--addr", "127.0.0.1:0")
	stderr, err := cmd.StderrPipe()
	if err != nil {
		t.Fatal(err)
	}
	if err := cmd.Start(); err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { _ = cmd.Process.Kill(); _ = cmd.Wait() })
	listening := make(chan struct{})
	go func() {
		sc := bufio.NewScanner(stderr)
		for sc.Scan() {
			if strings.Contains(sc.Text(), "msg=listening") {
				close(listening)
				break
			}
		}
		for sc.Scan() { // keep the pipe drained
		}
	}()
	select {
	case <-listening:
	case <-time.After(90 * time.Second):
		t.Fatal("the child serve did not start listening")
	}
	return cmd
}

// killed SIGKILLs the child: no deferred call runs, the server stays up.
func killed(t *testing.T, cmd *exec.Cmd) {
	t.Helper()
	if err := cmd.Process.Signal(syscall.SIGKILL); err != nil {
		t.Fatal(err)
	}
	_ = cmd.Wait()
}

// After the owner is killed with SIGKILL its server is orphaned: the next
// command adopts the home, restarts the server and says so; the next serve
// starts normally.
func TestOwnerKilled(t *testing.T) {
	t.Parallel()
	home := newHome(t)
	bin := binary(t)

	killed(t, startChild(t, bin, home))
	orphan := serverPID(t, home)
	if orphan == 0 {
		t.Fatal("no server left running after SIGKILL of its owner")
	}
	out, errOut, code := runCLI(t, "due", "--home", home)
	want := fmt.Sprintf("restarting the server (PID %d) that a rotorwright which ended without stopping it left running", orphan)
	if code != exitOK || !strings.HasPrefix(out, "STATUS") || !strings.Contains(errOut, want) ||
		!strings.Contains(errOut, "stopping embedded PostgreSQL") {
		t.Fatalf("due after the owner was killed: exit %d\n%s\n%s", code, out, errOut)
	}
	noHarmfulAdvice(t, errOut)
	if pid := serverPID(t, home); pid != 0 {
		t.Fatalf("due stopped the server it adopted, yet PID %d runs", pid)
	}

	killed(t, startChild(t, bin, home))
	orphan = serverPID(t, home)
	_, addr, _ := startApp(t, Config{Home: home})
	if s := get(t, "http://"+addr+"/readyz", "", nil); s != 200 {
		t.Fatalf("serve after the owner was killed: readyz %d", s)
	}
	if pid := serverPID(t, home); pid == 0 || pid == orphan {
		t.Fatalf("server PID %d after the restart, orphan was %d", pid, orphan)
	}
}
