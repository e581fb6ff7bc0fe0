package api_test

import (
	"bytes"
	"context"
	"encoding/json"
	"log/slog"
	"net/http"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pglocal"
)

// One access line per request, in JSON when the logger is JSON: every line
// parses, and each request's line carries our request id (the one in the
// response header), the client's X-Request-ID apart, the route and status.
func TestAccessLogJSON(t *testing.T) {
	e := newEnv(t)
	logs := &syncBuffer{}
	srv := api.New(e.db, slog.New(slog.NewJSONHandler(logs, nil)), unlimited(api.DefaultLimits), nil)
	t.Cleanup(srv.Close)
	e.h = srv.Handler()
	ok := e.call("GET", "/v1/airframes", fleet.RoleViewer, nil, "X-Request-ID", "client-abc-1")
	missing := e.call("GET", "/v1/airframes/"+someID, fleet.RoleViewer, nil)
	if ok.Status != 200 || missing.Status != 404 {
		t.Fatalf("requests: %d %d", ok.Status, missing.Status)
	}
	var access []map[string]any
	for _, line := range strings.Split(strings.TrimSpace(logs.String()), "\n") {
		var m map[string]any
		if err := json.Unmarshal([]byte(line), &m); err != nil {
			t.Fatalf("a log line is not JSON: %q: %v", line, err)
		}
		if m["msg"] == "request" {
			access = append(access, m)
		}
	}
	if len(access) != 2 {
		t.Fatalf("%d access lines for 2 requests:\n%s", len(access), logs.String())
	}
	for i, c := range []struct {
		r      *resp
		route  string
		status float64
		client any
	}{{ok, "/v1/airframes", 200, "client-abc-1"}, {missing, "/v1/airframes/:id", 404, nil}} {
		a := access[i]
		id := c.r.Header.Get("X-Request-ID")
		if id == "" || a["request_id"] != id || a["route"] != c.route || a["status"] != c.status ||
			a["client_request_id"] != c.client || a["method"] != "GET" {
			t.Errorf("access line %v for a %g with X-Request-ID %q", a, c.status, id)
		}
		if _, isNum := a["duration_ms"].(float64); !isNum {
			t.Errorf("duration_ms not a number: %v", a)
		}
	}
	if access[1]["problem"] != "not_found" {
		t.Errorf("the 404's line lacks its problem code: %v", access[1])
	}
}

// The database going away is logged once as an error (at the first request
// that finds it gone, not at every one), and its return once at info by
// the watcher; rotorwright_database_up follows, and the figures read from
// the database leave the scrape while it is gone.
func TestDatabaseLostAndBackLogged(t *testing.T) {
	t.Parallel()
	c, db, dir := ownCluster(t)
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	_, token, err := db.CreateKey(ctx, "lost", fleet.RoleViewer)
	if err != nil {
		t.Fatal(err)
	}
	logs := &syncBuffer{}
	srv := api.New(db, slog.New(slog.NewTextHandler(logs, nil)), api.DefaultLimits, nil)
	t.Cleanup(srv.Close)
	api.SetFiguresTTL(srv, 0)
	e := &env{t: t, db: db, h: srv.Handler(), tokens: map[fleet.Role]string{fleet.RoleViewer: token}}
	go srv.WatchDatabase(ctx, 100*time.Millisecond)
	if r := e.call("GET", "/v1/airframes", fleet.RoleViewer, nil); r.Status != 200 {
		t.Fatalf("before: %d", r.Status)
	}
	f := e.scrape()
	f.want(t, 1, "rotorwright_database_up")
	f.want(t, 0, "rotorwright_outbox_pending")
	count := func(s string) int { return strings.Count(logs.String(), s) }
	const lost, back = `level=ERROR msg="database lost"`, `level=INFO msg="database back"`
	if count(lost)+count(back) != 0 {
		t.Fatalf("a transition logged with the database up:\n%s", logs.String())
	}
	port := c.Port()
	if err := c.Stop(ctx); err != nil {
		t.Fatal(err)
	}
	for range 3 {
		if r := e.call("GET", "/v1/airframes", fleet.RoleViewer, nil); r.Status != http.StatusServiceUnavailable {
			t.Fatalf("with the database down: %d", r.Status)
		}
	}
	if count(lost) != 1 {
		t.Fatalf("%d lost lines after 3 failed requests, want 1 at the first:\n%s", count(lost), logs.String())
	}
	time.Sleep(500 * time.Millisecond) // several watcher ticks
	f = e.scrape()
	f.want(t, 0, "rotorwright_database_up")
	if _, ok := f.get("rotorwright_outbox_pending"); ok {
		t.Fatal("outbox figures shown with the database gone")
	}
	if n, _ := f.get("rotorwright_database_figures_errors_total"); n < 1 {
		t.Fatal("the failed figures read is not counted")
	}
	if count(lost) != 1 || count(back) != 0 {
		t.Fatalf("transitions while down:\n%s", logs.String())
	}
	c2, err := pglocal.Start(ctx, pglocal.Options{Dir: dir, Port: port, Ephemeral: true})
	if err != nil {
		t.Fatal(err)
	}
	defer c2.Stop(context.Background())
	deadline := time.Now().Add(20 * time.Second)
	for count(back) == 0 {
		if time.Now().After(deadline) {
			t.Fatalf("the return was not logged:\n%s", logs.String())
		}
		time.Sleep(50 * time.Millisecond)
	}
	time.Sleep(500 * time.Millisecond)
	if count(lost) != 1 || count(back) != 1 {
		t.Fatalf("want one lost and one back line:\n%s", logs.String())
	}
	if !bytes.Contains([]byte(logs.String()), []byte("down_for=")) {
		t.Errorf("the back line does not say how long it was gone:\n%s", logs.String())
	}
	e.scrape().want(t, 1, "rotorwright_database_up")
}
