package api_test

import (
	"bytes"
	"encoding/csv"
	"fmt"
	"net/http"
	"net/http/httptest"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
)

const tech, pilot, admin = fleet.RoleTechnician, fleet.RolePilot, fleet.RoleAdmin

type idBody struct {
	ID      string `json:"id"`
	Version int    `json:"version"`
	Status  string `json:"status"`
}

func (e *env) create(path string, body any) idBody {
	e.t.Helper()
	r := e.call("POST", path, tech, body)
	if r.Status != http.StatusCreated {
		e.t.Fatalf("POST %s: %d %s", path, r.Status, r.Body)
	}
	var out idBody
	r.decode(e.t, &out)
	return out
}

func (e *env) quad(code string) idBody {
	return e.create("/v1/airframes", map[string]any{"code": code, "layout": "quad-x", "cells_s": 6, "model": "Surveyor 4"})
}

// fitQuad fits motors and propellers at every position of a quad-x from at,
// so the airframe has no empty position.
func (e *env) fitQuad(af idBody, prefix, lot string, at time.Time) (motors, props []idBody) {
	e.t.Helper()
	for i, rot := range []fleet.Rotation{fleet.CCW, fleet.CW, fleet.CCW, fleet.CW} {
		m := e.motor(fmt.Sprintf("%s-M%d", prefix, i+1), rot, lot)
		p := e.create("/v1/parts", map[string]any{"kind": "propeller", "serial": fmt.Sprintf("%s-P%d", prefix, i+1),
			"part_number": "PR-1555", "specs": map[string]any{"rotation": rot, "diameter_in": 15, "blades": 2}})
		for _, part := range []idBody{m, p} {
			if r := e.call("POST", "/v1/airframes/"+af.ID+"/fits", tech, map[string]any{"part_id": part.ID,
				"position": fmt.Sprintf("m%d", i+1), "at": at}); r.Status != 201 {
				e.t.Fatalf("fit: %d %s", r.Status, r.Body)
			}
		}
		motors, props = append(motors, m), append(props, p)
	}
	return motors, props
}

func (e *env) motor(serial string, rot fleet.Rotation, lot string) idBody {
	return e.create("/v1/parts", map[string]any{"kind": "motor", "serial": serial, "part_number": "MT-4010",
		"lot": lot, "specs": map[string]any{"rotation": rot, "kv": 370}})
}

// The README walkthrough: create an airframe, fit parts, log a flight, read
// the job manifest (JSON and CSV).
func TestWalkthrough(t *testing.T) {
	e := newEnv(t)
	a := e.quad("HX-01")
	t0 := time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	e.fitQuad(a, "W", "L-2291", t0)
	pack := e.create("/v1/parts", map[string]any{"kind": "pack", "serial": "P-100",
		"specs": map[string]any{"chemistry": "lipo", "cells_s": 6, "cells_p": 1, "rated_mah": 16000}})
	job := e.create("/v1/jobs", map[string]any{"code": "QUARRY-N", "client": "Northfield Aggregates", "site": "North pit"})
	fl := e.call("POST", "/v1/flights", pilot, map[string]any{"airframe_id": a.ID, "job_id": job.ID, "pilot": "test pilot",
		"takeoff_at": t0.Add(time.Hour), "landing_at": t0.Add(time.Hour + 22*time.Minute), "packs": []string{pack.ID}})
	if fl.Status != 201 {
		t.Fatalf("flight: %d %s", fl.Status, fl.Body)
	}
	var m struct {
		Flights []struct {
			Hours float64 `json:"hours"`
			Parts []struct {
				Serial, Lot, Position string
			} `json:"parts"`
			Packs []struct{ Serial string } `json:"packs"`
		} `json:"flights"`
	}
	e.call("GET", "/v1/jobs/"+job.ID+"/manifest", fleet.RoleViewer, nil).decode(t, &m)
	if len(m.Flights) != 1 || len(m.Flights[0].Parts) != 8 || m.Flights[0].Packs[0].Serial != "P-100" {
		t.Fatalf("manifest %+v", m)
	}
	if h := m.Flights[0].Hours; h < 22.0/60-1e-9 || h > 22.0/60+1e-9 {
		t.Fatalf("hours %v, want 22 min", h)
	}
	r := e.call("GET", "/v1/jobs/"+job.ID+"/manifest?format=csv", fleet.RoleViewer, nil)
	rows, err := csv.NewReader(bytes.NewReader(r.Body)).ReadAll()
	if err != nil || r.Status != 200 {
		t.Fatalf("csv: %d %v", r.Status, err)
	}
	if len(rows) != 1+8+1 || rows[0][11] != "serial" || rows[9][9] != "pack" || rows[0][7] != "ready_at_takeoff" || rows[1][7] != "yes" {
		t.Fatalf("csv rows %v", rows)
	}
	// The fitment now has every motor and propeller.
	var fm struct {
		Parts []any                   `json:"parts"`
		Empty []struct{ Kind string } `json:"empty"`
	}
	e.call("GET", "/v1/airframes/"+a.ID+"/fitment", fleet.RoleViewer, nil).decode(t, &fm)
	if len(fm.Parts) != 8 || len(fm.Empty) != 0 {
		t.Fatalf("fitment %+v", fm)
	}
	// The lot trace finds the job.
	var tr struct {
		Jobs []struct{ Code string } `json:"jobs"`
	}
	e.call("GET", "/v1/trace?lot=L-2291", fleet.RoleViewer, nil).decode(t, &tr)
	if len(tr.Jobs) != 1 || tr.Jobs[0].Code != "QUARRY-N" {
		t.Fatalf("trace %+v", tr)
	}
	// Every write left an audit row: 1 airframe + 8 parts + 8 fits + 8 part status changes
	// (stock -> fitted) + 1 pack + 1 job + 1 flight (+ the 4 keys made for the test through the store).
	var audit struct {
		Items []struct{ Entity, Route string } `json:"items"`
	}
	e.call("GET", "/v1/audit?limit=500", admin, nil).decode(t, &audit)
	if len(audit.Items) != 32 {
		t.Fatalf("%d audit rows, want 32", len(audit.Items))
	}
	if last := audit.Items[len(audit.Items)-1]; last.Entity != "flight" || last.Route != "/v1/flights" {
		t.Fatalf("last audit row %+v", last)
	}
}

func TestFitRefusals(t *testing.T) {
	e := newEnv(t)
	a, b := e.quad("HX-02"), e.quad("HX-03")
	m := e.motor("M-77", fleet.CCW, "")
	// quad-x m2 turns cw: a ccw motor there is refused with 422 naming the position.
	r := e.call("POST", "/v1/airframes/"+a.ID+"/fits", tech, map[string]any{"part_id": m.ID, "position": "m2"})
	if p := r.problem(t); r.Status != 422 || p.Field != "position" {
		t.Fatalf("rotation mismatch: %d %+v", r.Status, p)
	}
	if r := e.call("POST", "/v1/airframes/"+a.ID+"/fits", tech, map[string]any{"part_id": m.ID, "position": "m1"}); r.Status != 201 {
		t.Fatalf("fit: %d %s", r.Status, r.Body)
	}
	r = e.call("POST", "/v1/airframes/"+b.ID+"/fits", tech, map[string]any{"part_id": m.ID, "position": "m1"})
	if p := r.problem(t); r.Status != 409 || p.Field != "part_id" {
		t.Fatalf("fitted elsewhere: %d %+v", r.Status, p)
	}
}

// Two requests fitting the same part at once: exactly one wins, the other
// gets 409 — the exclusion constraint decides, not a check-then-insert.
func TestConcurrentFitsOneWins(t *testing.T) {
	e := newEnv(t)
	srv := httptest.NewServer(e.h)
	defer srv.Close()
	for round := 0; round < 5; round++ {
		a, b := e.quad(fmt.Sprintf("CC-%dA", round)), e.quad(fmt.Sprintf("CC-%dB", round))
		m := e.motor(fmt.Sprintf("CM-%d", round), fleet.CCW, "")
		var wg sync.WaitGroup
		codes := make([]int, 2)
		start := make(chan struct{})
		for i, af := range []idBody{a, b} {
			wg.Add(1)
			go func() {
				defer wg.Done()
				body := strings.NewReader(fmt.Sprintf(`{"part_id":%q,"position":"m1"}`, m.ID))
				req, _ := http.NewRequest("POST", srv.URL+"/v1/airframes/"+af.ID+"/fits", body)
				req.Header.Set("Authorization", "Bearer "+e.tokens[tech])
				req.Header.Set("Content-Type", "application/json")
				<-start
				res, err := http.DefaultClient.Do(req)
				if err != nil {
					t.Error(err)
					return
				}
				res.Body.Close()
				codes[i] = res.StatusCode
			}()
		}
		close(start)
		wg.Wait()
		if !(codes[0] == 201 && codes[1] == 409 || codes[0] == 409 && codes[1] == 201) {
			t.Fatalf("round %d: statuses %v, want one 201 and one 409", round, codes)
		}
	}
}

func TestETagAndIfMatch(t *testing.T) {
	e := newEnv(t)
	a := e.quad("HX-05")
	r := e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil)
	tag := r.Header.Get("ETag")
	if tag == "" {
		t.Fatal("no ETag")
	}
	patch := map[string]any{"hold_reason": "arm crack found on walk-round"}
	if r := e.call("PATCH", "/v1/airframes/"+a.ID, tech, patch); r.Status != 428 {
		t.Fatalf("PATCH without If-Match: %d, want 428", r.Status)
	}
	r = e.call("PATCH", "/v1/airframes/"+a.ID, tech, patch, "If-Match", tag)
	var got idBody
	r.decode(t, &got)
	if r.Status != 200 || got.Status != "grounded" || r.Header.Get("ETag") == tag {
		t.Fatalf("PATCH: %d %s", r.Status, r.Body)
	}
	if r := e.call("PATCH", "/v1/airframes/"+a.ID, tech, map[string]any{"hold_reason": nil}, "If-Match", tag); r.Status != 412 {
		t.Fatalf("stale If-Match: %d, want 412", r.Status)
	}
	cur := e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil).Header.Get("ETag")
	r = e.call("PATCH", "/v1/airframes/"+a.ID, tech, map[string]any{"hold_reason": nil}, "If-Match", cur)
	r.decode(t, &got)
	if r.Status != 200 || got.Status != "active" {
		t.Fatalf("release hold: %d %s", r.Status, r.Body)
	}
	// Read-only members cannot be patched.
	r = e.call("PATCH", "/v1/airframes/"+a.ID, tech, map[string]any{"status": "active"}, "If-Match", r.Header.Get("ETag"))
	if p := r.problem(t); r.Status != 400 || p.Field != "status" {
		t.Fatalf("patching status: %d %+v", r.Status, p)
	}
}

func TestBadInputNamesTheField(t *testing.T) {
	e := newEnv(t)
	a := e.quad("HX-06")
	e.fitQuad(a, "B", "", time.Now().Add(-24*time.Hour))
	cases := []struct {
		name, method, path string
		body               any
		status             int
		field              string
	}{
		{"read-only member", "POST", "/v1/airframes", map[string]any{"code": "X1", "layout": "quad-x", "cells_s": 6, "status": "retired"}, 400, "status"},
		{"id not assignable", "POST", "/v1/parts", map[string]any{"kind": "other", "serial": "O1", "id": someID}, 400, "id"},
		{"unknown member", "POST", "/v1/airframes", map[string]any{"code": "X1", "layout": "quad-x", "cells_s": 6, "colour": "red"}, 400, "colour"},
		{"wrong type", "POST", "/v1/airframes", map[string]any{"code": "X1", "layout": "quad-x", "cells_s": "six"}, 400, "cells_s"},
		{"missing code", "POST", "/v1/airframes", map[string]any{"layout": "quad-x", "cells_s": 6}, 400, "code"},
		{"cells out of range", "POST", "/v1/airframes", map[string]any{"code": "X1", "layout": "quad-x", "cells_s": 40}, 400, "cells_s"},
		{"unknown layout", "POST", "/v1/airframes", map[string]any{"code": "X1", "layout": "tri-y", "cells_s": 6}, 422, "layout"},
		{"duplicate code", "POST", "/v1/airframes", map[string]any{"code": "HX-06", "layout": "quad-x", "cells_s": 6}, 409, "code"},
		{"motor specs", "POST", "/v1/parts", map[string]any{"kind": "motor", "serial": "M1", "specs": map[string]any{"rotation": "left"}}, 400, "specs.rotation"},
		{"pack specs member", "POST", "/v1/parts", map[string]any{"kind": "pack", "serial": "P1", "specs": map[string]any{"chemistry": "lipo", "cells_s": 6, "cells_p": 1, "rated_mah": 5000, "volts": 22}}, 400, "specs.volts"},
		{"bad part kind", "POST", "/v1/parts", map[string]any{"kind": "rotor", "serial": "R1"}, 400, "kind"},
		{"bad part id", "POST", "/v1/airframes/" + a.ID + "/fits", map[string]any{"part_id": "nope", "position": "m1"}, 400, "part_id"},
		{"landing before take-off", "POST", "/v1/flights", map[string]any{"airframe_id": a.ID, "pilot": "K", "takeoff_at": "2026-05-01T10:00:00Z", "landing_at": "2026-05-01T09:00:00Z"}, 422, "landing_at"},
		{"blank pilot", "POST", "/v1/flights", map[string]any{"airframe_id": a.ID, "pilot": " ", "takeoff_at": "2026-05-01T10:00:00Z", "landing_at": "2026-05-01T10:20:00Z"}, 400, "pilot"},
		{"job dates", "POST", "/v1/jobs", map[string]any{"code": "J", "client": "C", "starts_on": "2026-05-02", "ends_on": "2026-05-01"}, 400, "ends_on"},
		{"page size", "GET", "/v1/parts?limit=501", nil, 400, "limit"},
		{"bad cursor", "GET", "/v1/parts?cursor=zzz", nil, 400, "cursor"},
		{"trace needs a filter", "GET", "/v1/trace", nil, 400, "lot"},
	}
	for _, c := range cases {
		role := tech
		if c.method == "GET" {
			role = fleet.RoleViewer
		}
		r := e.call(c.method, c.path, role, c.body)
		p := r.problem(t)
		if r.Status != c.status || p.Field != c.field {
			t.Errorf("%s: %d field %q (%s), want %d field %q", c.name, r.Status, p.Field, p.Detail, c.status, c.field)
		}
		if c.field != "" && (len(p.Errors) != 1 || !strings.HasPrefix(p.Errors[0].Pointer, "/"+strings.Split(c.field, ".")[0])) {
			t.Errorf("%s: errors %+v lack a pointer to %s", c.name, p.Errors, c.field)
		}
	}
	// Overlapping flights are refused by the database and reported as 409.
	t1 := time.Now().Add(-3 * time.Hour).UTC().Truncate(time.Second)
	ok := map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "takeoff_at": t1, "landing_at": t1.Add(30 * time.Minute)}
	if r := e.call("POST", "/v1/flights", pilot, ok); r.Status != 201 {
		t.Fatalf("flight: %d %s", r.Status, r.Body)
	}
	ok["takeoff_at"], ok["landing_at"] = t1.Add(15*time.Minute), t1.Add(45*time.Minute)
	r := e.call("POST", "/v1/flights", pilot, ok)
	if p := r.problem(t); r.Status != 409 || p.Field != "takeoff_at" {
		t.Fatalf("overlap: %d %+v", r.Status, p)
	}
}

func TestRequestLimitsAndInternalErrors(t *testing.T) {
	e := newEnv(t)
	big := append([]byte(`{"code":"X","layout":"quad-x","cells_s":6,"notes":"`), bytes.Repeat([]byte("a"), 1<<20)...)
	big = append(big, `"}`...)
	if r := e.call("POST", "/v1/airframes", tech, big); r.Status != 413 {
		t.Fatalf("1 MiB body: %d, want 413", r.Status)
	}
	if r := e.call("PUT", "/v1/airframes", tech, nil); r.Status != 405 || !strings.Contains(r.Header.Get("Allow"), "POST") {
		t.Fatalf("PUT: %d Allow %q, want 405 with Allow", r.Status, r.Header.Get("Allow"))
	}
	if r := e.call("GET", "/v1/nowhere", fleet.RoleViewer, nil); r.Status != 404 {
		t.Fatalf("unknown route: %d", r.Status)
	}
	// Break this test's own database under the service: a 500 tells nothing
	// of the SQL or the table.
	if _, err := pgtest.OwnerConn(t, e.db.Pool().Config().ConnString()).Exec(t.Context(), `DROP TABLE jobs CASCADE`); err != nil {
		t.Fatal(err)
	}
	r := e.call("GET", "/v1/jobs", fleet.RoleViewer, nil)
	p := r.problem(t)
	if r.Status != 500 || p.Detail != "internal error" || bytes.Contains(r.Body, []byte("does not exist")) ||
		bytes.Contains(r.Body, []byte("relation")) || bytes.Contains(r.Body, []byte("SQLSTATE")) {
		t.Fatalf("500 leaks: %d %s", r.Status, r.Body)
	}
	if r := e.call("GET", "/readyz", "", nil); r.Status != 200 {
		t.Fatalf("readyz: %d", r.Status)
	}
}

func TestEventsCreateListResolve(t *testing.T) {
	e := newEnv(t)
	a := e.quad("HX-07")
	r := e.call("POST", "/v1/events", pilot, map[string]any{"kind": "overdischarge", "airframe_id": a.ID, "detail": "3.1 V per cell at landing"})
	var ev struct {
		ID         string  `json:"id"`
		Severity   string  `json:"severity"`
		ResolvedBy *string `json:"resolved_by"`
	}
	r.decode(t, &ev)
	if r.Status != 201 || ev.Severity != "warning" {
		t.Fatalf("create: %d %s", r.Status, r.Body)
	}
	var open struct {
		Items []struct{ ID string } `json:"items"`
	}
	e.call("GET", "/v1/events?open=true&airframe_id="+a.ID, fleet.RoleViewer, nil).decode(t, &open)
	if len(open.Items) != 1 {
		t.Fatalf("%d open events, want 1", len(open.Items))
	}
	tag := r.Header.Get("ETag")
	if r := e.call("PATCH", "/v1/events/"+ev.ID, pilot, map[string]any{"resolved": true}, "If-Match", tag); r.Status != 400 {
		t.Fatalf("resolve without a resolution: %d", r.Status)
	}
	r = e.call("PATCH", "/v1/events/"+ev.ID, tech, map[string]any{"resolved": true, "resolution": "pack checked, resting voltage normal"}, "If-Match", tag)
	r.decode(t, &ev)
	if r.Status != 200 || ev.ResolvedBy == nil || *ev.ResolvedBy != "test technician" {
		t.Fatalf("resolve: %d %s", r.Status, r.Body)
	}
	e.call("GET", "/v1/events?open=true&airframe_id="+a.ID, fleet.RoleViewer, nil).decode(t, &open)
	if len(open.Items) != 0 {
		t.Fatalf("%d open events after resolving, want 0", len(open.Items))
	}
	if r := e.call("PATCH", "/v1/events/"+ev.ID, tech, map[string]any{"resolved": false}, "If-Match", r.Header.Get("ETag")); r.Status != 422 {
		t.Fatalf("reopen: %d, want 422", r.Status)
	}
}

func TestKeysetPagination(t *testing.T) {
	e := newEnv(t)
	for i := 0; i < 7; i++ {
		e.create("/v1/jobs", map[string]any{"code": fmt.Sprintf("PG-%d", i), "client": "Pager Ltd"})
	}
	seen := map[string]bool{}
	path := "/v1/jobs?limit=3"
	pages := 0
	for path != "" {
		r := e.call("GET", path, fleet.RoleViewer, nil)
		var page struct {
			Items      []struct{ ID string } `json:"items"`
			NextCursor string                `json:"next_cursor"`
		}
		r.decode(t, &page)
		for _, it := range page.Items {
			if seen[it.ID] {
				t.Fatalf("job %s on two pages", it.ID)
			}
			seen[it.ID] = true
		}
		pages++
		link := r.Header.Get("Link")
		if (page.NextCursor != "") != (link != "") {
			t.Fatalf("next_cursor %q but Link %q", page.NextCursor, link)
		}
		path = ""
		if link != "" {
			path = strings.TrimSuffix(strings.TrimPrefix(link, "<"), `>; rel="next"`)
		}
	}
	if len(seen) != 7 || pages != 3 {
		t.Fatalf("%d jobs over %d pages, want 7 over 3", len(seen), pages)
	}
}
