package pglocal

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/exec"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// exec runs one of the server programs as the server account and returns its
// combined output.
func (c *Cluster) exec(ctx context.Context, prog string, args ...string) ([]byte, error) {
	cmd := exec.CommandContext(ctx, filepath.Join(c.binDir, prog), args...)
	// The server account may not be able to enter our working directory.
	cmd.Dir = "/"
	cmd.Env = serverEnv()
	c.acct.apply(cmd)
	// pg_ctl start redirects the server's output to the log file, so nothing
	// should hold the pipes open; this bounds the wait if something does.
	cmd.WaitDelay = 5 * time.Second
	var out bytes.Buffer
	cmd.Stdout, cmd.Stderr = &out, &out
	err := cmd.Run()
	return out.Bytes(), err
}

func (c *Cluster) pgctl(ctx context.Context, args ...string) ([]byte, error) {
	return c.exec(ctx, "pg_ctl", args...)
}

// running asks pg_ctl status; exit status 3 means not running and 4 means no
// usable data directory (documented in the pg_ctl reference page).
func (c *Cluster) running(ctx context.Context) bool {
	_, err := c.pgctl(ctx, "status", "-D", c.dataDir)
	var exitErr *exec.ExitError
	if errors.As(err, &exitErr) {
		code := exitErr.ExitCode()
		return code != 3 && code != 4
	}
	return true
}

// serverEnv drops PG* variables, which would otherwise change defaults of the
// server programs (PGPORT, PGDATA, ...) behind our back.
func serverEnv() []string {
	var env []string
	for _, kv := range os.Environ() {
		if !strings.HasPrefix(kv, "PG") {
			env = append(env, kv)
		}
	}
	return env
}

// clearStalePID removes postmaster.pid when its process is gone or is not a
// PostgreSQL server. The server checks this itself, but after a crash in a
// container the recorded PID is often reused by another process, and the
// server then refuses to start. A live server on our directory is refused,
// unless we hold the folder's owner lock: then no live owner runs it, and it
// was left by one that died, so it is restarted.
func (c *Cluster) clearStalePID(ctx context.Context) error {
	pidFile := filepath.Join(c.dataDir, "postmaster.pid")
	data, err := os.ReadFile(pidFile)
	if errors.Is(err, os.ErrNotExist) {
		return nil
	}
	if err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	first, _, _ := strings.Cut(string(data), "\n")
	pid, err := strconv.Atoi(strings.TrimSpace(first))
	if err == nil && isServerProcess(pid) {
		if c.claim == nil {
			return fmt.Errorf("pglocal: a PostgreSQL server (PID %d) is already running on %s", pid, c.dataDir)
		}
		return c.stopOrphan(ctx, pid)
	}
	c.logf("pglocal: removing stale %s (PID %s is not a running server)", pidFile, strings.TrimSpace(first))
	if err := os.Remove(pidFile); err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	// Socket lock files carry the same PID and the same reuse problem.
	locks, _ := filepath.Glob(filepath.Join(c.sockDir, ".s.PGSQL.*"))
	for _, l := range locks {
		_ = os.Remove(l)
	}
	return nil
}

// stopOrphan stops the server pid that a dead owner left running, once the
// commands that attached to it while its owner lived have finished.
func (c *Cluster) stopOrphan(ctx context.Context, pid int) error {
	users, err := lockUsers(ctx, c.dir, syscall.LOCK_EX, func() {
		c.logf("pglocal: waiting for the commands still using the server (PID %d) that a rotorwright "+
			"which ended without stopping it left running", pid)
	})
	if err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	defer users.Close()
	c.logf("pglocal: restarting the server (PID %d) that a rotorwright which ended without stopping it left running", pid)
	out, err := c.pgctl(ctx, "stop", "-D", c.dataDir, "-m", "fast", "-w", "-t", "60", "-s")
	if err != nil && c.running(ctx) {
		return fmt.Errorf("pglocal: stop the server left running (PID %d): %v: %s", pid, err, bytes.TrimSpace(out))
	}
	return nil
}

// isServerProcess reports whether pid is a live process named postgres (or
// postmaster). Without /proc it trusts that a live PID is the server.
func isServerProcess(pid int) bool {
	if pid <= 0 {
		return false
	}
	if err := syscall.Kill(pid, 0); err != nil {
		// EPERM: alive but another user's, so not a server we could have run.
		return false
	}
	comm, err := os.ReadFile(fmt.Sprintf("/proc/%d/comm", pid))
	if err != nil {
		return !dirExists("/proc/self")
	}
	name := strings.TrimSpace(string(comm))
	if name != "postgres" && name != "postmaster" {
		return false
	}
	// A killed server stays a zombie until reaped, and kill(pid, 0) still
	// succeeds on it; the state follows the ")" closing the name in stat.
	stat, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if i := bytes.LastIndexByte(stat, ')'); err == nil && i >= 0 && i+2 < len(stat) {
		return stat[i+2] != 'Z'
	}
	return true
}

func dirExists(p string) bool {
	fi, err := os.Stat(p)
	return err == nil && fi.IsDir()
}

func fileSize(p string) int64 {
	fi, err := os.Stat(p)
	if err != nil {
		return 0
	}
	return fi.Size()
}

// readFrom returns the file's content from offset on (at most 64 KiB of the
// end), used to show this start's part of the server log.
func readFrom(p string, offset int64) string {
	f, err := os.Open(p)
	if err != nil {
		return ""
	}
	defer f.Close()
	if size := fileSize(p); size-offset > 64<<10 {
		offset = size - 64<<10
	}
	if _, err := f.Seek(offset, io.SeekStart); err != nil {
		return ""
	}
	b, _ := io.ReadAll(f)
	return string(b)
}

func lastLines(s string, n int) string {
	lines := strings.Split(strings.TrimRight(s, "\n"), "\n")
	if len(lines) > n {
		lines = lines[len(lines)-n:]
	}
	return strings.Join(lines, "\n")
}
