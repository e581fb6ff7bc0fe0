package api_test

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"os"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pglocal"
	"github.com/rotorwright/rotorwright/store"
)

// With the database down, /readyz fails and requests get 503 problems that
// say nothing internal; when it is back the pool recovers by itself.
func TestDatabaseOutage(t *testing.T) {
	t.Parallel()
	dir, err := os.MkdirTemp("", "rotorwright-outage-")
	if err != nil {
		t.Fatal(err)
	}
	os.Chmod(dir, 0o755)
	t.Cleanup(func() { os.RemoveAll(dir) })
	ctx := context.Background()
	c, err := pglocal.Start(ctx, pglocal.Options{Dir: dir, Ephemeral: true})
	if err != nil {
		t.Fatal(err)
	}
	defer c.Stop(ctx)
	db, err := store.Open(ctx, c.URL("")+"&connect_timeout=2")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if err := db.Migrate(ctx, nil); err != nil {
		t.Fatal(err)
	}
	_, token, err := db.CreateKey(ctx, "outage", fleet.RoleViewer)
	if err != nil {
		t.Fatal(err)
	}
	srv := api.New(db, slog.New(slog.NewTextHandler(io.Discard, nil)), api.DefaultLimits, nil)
	defer srv.Close() // its key listener's connection goes back before the pool closes
	e := &env{t: t, db: db, h: srv.Handler(), tokens: map[fleet.Role]string{fleet.RoleViewer: token}}
	if r := e.call("GET", "/v1/airframes", fleet.RoleViewer, nil); r.Status != http.StatusOK {
		t.Fatalf("before the outage: %d", r.Status)
	}
	port := c.Port()
	if err := c.Stop(ctx); err != nil {
		t.Fatal(err)
	}
	for _, path := range []string{"/readyz", "/v1/airframes"} {
		r := e.call("GET", path, fleet.RoleViewer, nil)
		p := r.problem(t)
		if r.Status != http.StatusServiceUnavailable || p.Detail != "database unavailable" {
			t.Fatalf("%s with the database down: %d %s", path, r.Status, r.Body)
		}
	}
	c2, err := pglocal.Start(ctx, pglocal.Options{Dir: dir, Port: port, Ephemeral: true})
	if err != nil {
		t.Fatal(err)
	}
	defer c2.Stop(ctx)
	deadline := time.Now().Add(20 * time.Second)
	for {
		r := e.call("GET", "/v1/airframes", fleet.RoleViewer, nil)
		if r.Status == http.StatusOK {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("the pool did not recover: %d %s", r.Status, r.Body)
		}
		time.Sleep(200 * time.Millisecond)
	}
	if r := e.call("GET", "/readyz", "", nil); r.Status != http.StatusOK {
		t.Fatalf("readyz after recovery: %d", r.Status)
	}
}
