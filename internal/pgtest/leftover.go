package pgtest

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"syscall"

	"github.com/rotorwright/rotorwright/internal/pglocal"
)

// dirPattern names the throwaway cluster folders in the temp directory.
const dirPattern = "rotorwright-pgtest-*"

// ownerFile records which test binary a cluster folder belongs to.
const ownerFile = "owner.pid"

// markOwner writes our PID into dir so later runs can tell whether the
// folder's owner still lives.
func markOwner(dir string) error {
	return os.WriteFile(filepath.Join(dir, ownerFile), []byte(strconv.Itoa(os.Getpid())+"\n"), 0o644)
}

// sweepLeftovers stops the servers and removes the folders under root that
// belong to test binaries which died without cleaning up (a -timeout panic
// exits without deferred calls), so such servers do not pile up.
func sweepLeftovers(ctx context.Context, root string) error {
	dirs, err := filepath.Glob(filepath.Join(root, dirPattern))
	if err != nil {
		return err
	}
	var errs []error
	for _, dir := range dirs {
		data, err := os.ReadFile(filepath.Join(dir, ownerFile))
		if err != nil {
			continue // not marked yet, or not ours: leave it alone
		}
		pid, err := strconv.Atoi(strings.TrimSpace(string(data)))
		if err != nil || alive(pid) {
			continue
		}
		if err := pglocal.StopLeftover(ctx, dir); err != nil {
			errs = append(errs, fmt.Errorf("leftover %s: %w", dir, err))
			continue
		}
		if err := os.RemoveAll(dir); err != nil {
			errs = append(errs, err)
		}
	}
	return errors.Join(errs...)
}

// alive reports whether pid exists; EPERM means it exists as another user's.
func alive(pid int) bool {
	if pid <= 0 {
		return false
	}
	err := syscall.Kill(pid, 0)
	return err == nil || errors.Is(err, syscall.EPERM)
}
