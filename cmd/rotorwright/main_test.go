package main

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"net/http"
	"os"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
)

func TestMain(m *testing.M) {
	pgtest.Main(m, migrations.Prepare)
}

// startApp opens and runs the real app on a free loopback port, its log
// on the process's stderr.
func startApp(t *testing.T, cfg Config) (*App, string, context.CancelFunc) {
	t.Helper()
	return runApp(t, cfg, os.Stderr)
}

// runApp opens and runs the real app on a free loopback port with its log
// to stderr. stop ends it and waits until Run has returned (so its log is
// complete), failing the test if Run failed; the test's cleanup stops it
// too, then closes the app.
func runApp(t *testing.T, cfg Config, stderr io.Writer) (app *App, addr string, stop func()) {
	t.Helper()
	cfg.Addr = "127.0.0.1:0"
	app = newApp(cfg, os.Stdout, stderr)
	ctx, cancel := context.WithCancel(context.Background())
	if err := app.Open(ctx); err != nil {
		cancel()
		t.Fatal(err)
	}
	done := make(chan error, 1)
	go func() { done <- app.Run(ctx) }()
	var once sync.Once
	stop = func() {
		once.Do(func() {
			cancel()
			if err := <-done; err != nil {
				t.Error(err)
			}
		})
	}
	t.Cleanup(func() {
		stop()
		if err := app.Close(); err != nil {
			t.Error(err)
		}
	})
	select {
	case addr = <-app.Addr:
	case err := <-done:
		done <- err // for stop
		t.Fatal(err)
	case <-time.After(30 * time.Second):
		t.Fatal("app did not start listening")
	}
	return app, addr, stop
}

func get(t *testing.T, url, token string, v any) int {
	t.Helper()
	req, _ := http.NewRequest("GET", url, nil)
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	if v != nil {
		if err := json.NewDecoder(res.Body).Decode(v); err != nil {
			t.Fatal(err)
		}
	}
	return res.StatusCode
}

// With no DATABASE_URL the app runs its own PostgreSQL in the home folder
// and stops it on Close.
func TestEmbeddedDefault(t *testing.T) {
	t.Parallel()
	home, err := os.MkdirTemp("", "rotorwright-home-")
	if err != nil {
		t.Fatal(err)
	}
	os.Chmod(home, 0o755)
	t.Cleanup(func() { os.RemoveAll(home) })
	_, addr, _ := startApp(t, Config{Home: home})
	if s := get(t, "http://"+addr+"/readyz", "", nil); s != 200 {
		t.Fatalf("readyz on the embedded database: %d", s)
	}
	if _, err := os.Stat(home + "/pgdata/PG_VERSION"); err != nil {
		t.Fatalf("no cluster in the home folder: %v", err)
	}
}

// key create prints the token alone on standard output.
func TestKeyCreatePrintsTokenOnly(t *testing.T) {
	t.Parallel()
	url := pgtest.NewDB(t)
	out, errOut, code := runCLI(t, "key", "create", "--name", "ops script", "--role", "viewer", "--database-url", url)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	token := strings.TrimSpace(out)
	if !strings.HasPrefix(token, "rw_") || strings.ContainsAny(token, " \n") || len(token) < 40 {
		t.Fatalf("stdout %q is not a lone token", out)
	}
	_, addr, _ := startApp(t, Config{DatabaseURL: url})
	if s := get(t, "http://"+addr+"/v1/airframes", token, nil); s != 200 {
		t.Fatalf("the printed token does not work: %d", s)
	}
	if s := get(t, "http://"+addr+"/v1/keys", token, nil); s != 403 {
		t.Fatalf("a viewer token reached the admin route: %d", s)
	}
	_, errOut, code = runCLI(t, "key", "create", "--name", "x", "--role", "pilot-in-command", "--database-url", url)
	if code != exitFailure || !strings.Contains(errOut, "role") {
		t.Fatalf("bad role: exit %d, stderr %q; want 1 and a message naming the role", code, errOut)
	}
}

// runCLI runs the command line in this process and returns what it wrote
// and its exit status.
func runCLI(t *testing.T, args ...string) (stdout, stderr string, code int) {
	t.Helper()
	var out, errOut bytes.Buffer
	code = execute(t.Context(), args, &out, &errOut)
	return out.String(), errOut.String(), code
}
