package pglocal

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"strings"
)

// ErrNotRunning is returned by Attach when no server runs on the folder.
var ErrNotRunning = errors.New("pglocal: no server is running there")

// Attach returns the cluster already running in dir (started by another
// process), without any lock: Use is the safe way for a command to share a
// running owner's server. Its Stop does nothing: the starting process owns
// the server.
func Attach(dir, database string) (*Cluster, error) {
	abs, err := filepath.Abs(dir)
	if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	data, err := os.ReadFile(filepath.Join(abs, "pgdata", "postmaster.pid"))
	if errors.Is(err, os.ErrNotExist) {
		return nil, ErrNotRunning
	} else if err != nil {
		return nil, fmt.Errorf("pglocal: %w", err)
	}
	// postmaster.pid: PID, data directory, start time, port, socket
	// directory, ... one a line (PostgreSQL's miscadmin.h).
	lines := strings.Split(string(data), "\n")
	if len(lines) < 5 || strings.TrimSpace(lines[4]) == "" {
		return nil, ErrNotRunning
	}
	pid, err1 := strconv.Atoi(strings.TrimSpace(lines[0]))
	port, err2 := strconv.Atoi(strings.TrimSpace(lines[3]))
	if err1 != nil || err2 != nil || !isServerProcess(pid) {
		return nil, ErrNotRunning
	}
	if database == "" {
		database = "rotorwright"
	}
	return &Cluster{dir: abs, dataDir: filepath.Join(abs, "pgdata"), sockDir: strings.TrimSpace(lines[4]), port: port, database: database,
		logf: func(string, ...any) {}, stopped: true}, nil
}
