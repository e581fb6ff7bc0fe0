package pglocal

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"
	"time"
)

// One process at a time runs the cluster of a data folder: its owner, which
// holds an exclusive flock on Dir/rotorwright.lock for as long as it runs
// (the file says who: PID, command, address). Other processes attach to the
// owner's server and hold a shared flock on Dir/rotorwright.users while they
// use it; the owner takes that lock exclusively before it stops the server,
// so it waits for them. The kernel drops a dead process's locks, so a lock
// file left behind by a killed owner claims nothing: the next process
// becomes the owner and restarts the server the dead one left running.
const (
	ownerLockName = "rotorwright.lock"
	usersLockName = "rotorwright.users"
)

// Owner says which process owns a data folder's cluster.
type Owner struct {
	PID     int
	Command string // e.g. "serve", "demo", "key create"
	Addr    string // where it serves the API; empty until it listens, or for a command that does not serve
}

// BusyError is returned by Own when another live process owns the folder.
type BusyError struct{ Owner Owner }

func (e *BusyError) Error() string {
	o := e.Owner
	pid := "PID unknown"
	if o.PID > 0 {
		pid = "PID " + strconv.Itoa(o.PID)
	}
	switch {
	case o.Addr != "":
		return fmt.Sprintf("another rotorwright (%s) is serving from this home at %s", pid, o.Addr)
	case o.Command == "serve" || o.Command == "demo":
		return fmt.Sprintf("another rotorwright (%s) is starting to serve from this home", pid)
	case o.Command != "":
		return fmt.Sprintf("another rotorwright command (%s, %s) is running the embedded database of this home: "+
			"try again when it has finished", pid, o.Command)
	}
	return fmt.Sprintf("another rotorwright (%s) holds this home", pid)
}

// claim is a held owner lock.
type claim struct {
	f     *os.File
	owner Owner
}

// takeClaim takes the owner lock of dir without waiting; a held lock gives
// a *BusyError naming the holder.
func takeClaim(dir, command string) (*claim, error) {
	path := filepath.Join(dir, ownerLockName)
	// os.OpenFile sets O_CLOEXEC: the server pg_ctl starts must not inherit
	// the lock, or a killed owner's lock would live on in its server.
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	if err := syscall.Flock(int(f.Fd()), syscall.LOCK_EX|syscall.LOCK_NB); err != nil {
		f.Close()
		if errors.Is(err, syscall.EWOULDBLOCK) {
			return nil, &BusyError{Owner: readOwner(path)}
		}
		return nil, fmt.Errorf("pglocal: lock %s: %w", path, err)
	}
	c := &claim{f: f, owner: Owner{PID: os.Getpid(), Command: command}}
	if err := c.write(); err != nil {
		c.release()
		return nil, err
	}
	return c, nil
}

// write records the owner in the lock file, for the messages of others.
func (c *claim) write() error {
	s := fmt.Sprintf("pid %d\ncommand %s\naddr %s\n", c.owner.PID, c.owner.Command, c.owner.Addr)
	if err := c.f.Truncate(0); err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	if _, err := c.f.WriteAt([]byte(s), 0); err != nil {
		return fmt.Errorf("pglocal: %w", err)
	}
	return nil
}

func (c *claim) release() {
	// Empty the file first: once unlocked it must not name a live process
	// that no longer owns anything.
	_ = c.f.Truncate(0)
	_ = syscall.Flock(int(c.f.Fd()), syscall.LOCK_UN)
	c.f.Close()
}

// readOwner parses a lock file; what cannot be read stays zero.
func readOwner(path string) Owner {
	var o Owner
	data, _ := os.ReadFile(path)
	for _, line := range strings.Split(string(data), "\n") {
		k, v, _ := strings.Cut(line, " ")
		switch k {
		case "pid":
			o.PID, _ = strconv.Atoi(v)
		case "command":
			o.Command = v
		case "addr":
			o.Addr = v
		}
	}
	return o
}

// lockUsers takes the users lock in mode (LOCK_SH or LOCK_EX), polling so
// ctx can end the wait; waiting, when not nil, is called once if the lock
// is not free at once.
func lockUsers(ctx context.Context, dir string, mode int, waiting func()) (*os.File, error) {
	path := filepath.Join(dir, usersLockName)
	f, err := os.OpenFile(path, os.O_RDWR|os.O_CREATE, 0o644)
	if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	for first := true; ; first = false {
		err := syscall.Flock(int(f.Fd()), mode|syscall.LOCK_NB)
		if err == nil {
			return f, nil
		}
		if !errors.Is(err, syscall.EWOULDBLOCK) {
			f.Close()
			return nil, fmt.Errorf("pglocal: lock %s: %w", path, err)
		}
		if first && waiting != nil {
			waiting()
		}
		select {
		case <-ctx.Done():
			f.Close()
			return nil, ctx.Err()
		case <-time.After(50 * time.Millisecond):
		}
	}
}

// Own starts the cluster in opts.Dir as the folder's owner, for a process
// that runs it for its whole life (command names it in others' messages).
// When another live process owns the folder it returns a *BusyError and
// touches nothing. A server left running by an owner that died (SIGKILL,
// power cut) is stopped and started again, once the commands still using it
// have finished. Stop waits for attached commands, then stops the server.
func Own(ctx context.Context, opts Options, command string) (*Cluster, error) {
	dir, err := filepath.Abs(opts.Dir)
	if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	cl, err := takeClaim(dir, command)
	if err != nil {
		return nil, err
	}
	c, err := start(ctx, opts, cl)
	if err != nil {
		cl.release()
		return nil, err
	}
	return c, nil
}

// Use gives a command the folder's cluster: the running owner's, attached
// for as long as the command holds it (Stop then leaves the server running),
// or, with no live owner, its own as Own starts it (Stop then stops it).
// Owned tells which.
func Use(ctx context.Context, opts Options, command string) (*Cluster, error) {
	dir, err := filepath.Abs(opts.Dir)
	if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	logf := opts.Logf
	if logf == nil {
		logf = func(string, ...any) {}
	}
	for {
		// The shared lock first: an owner stopping its server holds the
		// users lock, so we wait here until it has, then own the folder.
		users, err := lockUsers(ctx, dir, syscall.LOCK_SH, nil)
		if err != nil {
			return nil, err
		}
		cl, err := takeClaim(dir, command)
		if err == nil {
			users.Close() // our own Stop takes it exclusively
			c, err := start(ctx, opts, cl)
			if err != nil {
				cl.release()
				return nil, err
			}
			return c, nil
		}
		var busy *BusyError
		if !errors.As(err, &busy) {
			users.Close()
			return nil, err
		}
		// A live owner: attach once its server is up.
		c, err := Attach(dir, opts.Database)
		if err == nil {
			c.users, c.owner, c.logf = users, busy.Owner, logf
			return c, nil
		}
		users.Close()
		if !errors.Is(err, ErrNotRunning) {
			return nil, err
		}
		select {
		case <-ctx.Done():
			return nil, fmt.Errorf("pglocal: waiting for the server of %s: %w", busy.Error(), ctx.Err())
		case <-time.After(100 * time.Millisecond):
		}
	}
}

// Owned reports whether this process owns the server (Stop stops it) rather
// than using another process's (Stop leaves it running).
func (c *Cluster) Owned() bool { return c.claim != nil }

// Owner names the process that owns the server.
func (c *Cluster) Owner() Owner {
	if c.claim != nil {
		return c.claim.owner
	}
	return c.owner
}

// SetAddr records where the owner serves, for the message a second serve
// in the same folder prints.
func (c *Cluster) SetAddr(addr string) error {
	if c.claim == nil {
		return nil
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	c.claim.owner.Addr = addr
	return c.claim.write()
}
