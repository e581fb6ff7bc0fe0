package api_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// Bad times, implausible times and numbers, null for a required member and
// unknown referenced records are refused with the member named (before the
// fix: no field, or accepted).
func TestValidationNamesTheFieldEveryTime(t *testing.T) {
	e := newEnv(t)
	a := e.quad("VB-01")
	job := e.create("/v1/jobs", map[string]any{"code": "VB-J", "client": "Harbour Board"})
	part := e.create("/v1/parts", map[string]any{"kind": "other", "serial": "VB-O1"})
	now := time.Now().UTC().Truncate(time.Second)
	e.fitQuad(a, "VB", "", now.Add(-48*time.Hour)) // ready to fly: only the input is at fault
	flight := func(takeoff, landing any) map[string]any {
		return map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "takeoff_at": takeoff, "landing_at": landing}
	}
	cases := []struct {
		name, method, path string
		role               fleet.Role
		body               any
		status             int
		field              string
	}{
		{"events open=1", "GET", "/v1/events?open=1", pilot, nil, 400, "open"},
		{"discrepancies open=yes", "GET", "/v1/discrepancies?open=yes", pilot, nil, 400, "open"},
		{"notices active=TRUE", "GET", "/v1/notices?active=TRUE", pilot, nil, 400, "active"},
		{"records logs=1", "GET", "/v1/airframes/" + a.ID + "/records?logs=1", tech, nil, 400, "logs"},
		{"event time not RFC 3339", "POST", "/v1/events", pilot, map[string]any{"kind": "note", "airframe_id": a.ID, "at": "yesterday"}, 400, "at"},
		{"event time as a number", "POST", "/v1/events", pilot, map[string]any{"kind": "note", "airframe_id": a.ID, "at": 1715678400}, 400, "at"},
		{"flight time as a number", "POST", "/v1/flights", pilot, flight(1715678400, now), 400, "takeoff_at"},
		{"flight time as an object", "POST", "/v1/flights", pilot, flight(now.Add(-time.Hour), map[string]any{}), 400, "landing_at"},
		{"fit time without zone", "POST", "/v1/airframes/" + a.ID + "/fits", tech, map[string]any{"part_id": part.ID, "at": "2026-05-14T09:30:00"}, 400, "at"},
		{"work record time", "POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "work": "w", "performed_by": "p", "airframe_id": a.ID, "at": true}, 400, "at"},
		{"event in year 9999", "POST", "/v1/events", pilot, map[string]any{"kind": "note", "airframe_id": a.ID, "at": "9999-12-31T00:00:00Z"}, 400, "at"},
		{"event before 2000", "POST", "/v1/events", pilot, map[string]any{"kind": "note", "airframe_id": a.ID, "at": "1999-12-31T23:59:59Z"}, 400, "at"},
		{"flight in year 1", "POST", "/v1/flights", pilot, flight("0001-01-01T00:00:00Z", "0001-01-01T00:20:00Z"), 400, "takeoff_at"},
		{"flight tomorrow", "POST", "/v1/flights", pilot, flight(now.Add(24*time.Hour), now.Add(25*time.Hour)), 400, "takeoff_at"},
		{"fit in 1990", "POST", "/v1/airframes/" + a.ID + "/fits", tech, map[string]any{"part_id": part.ID, "at": "1990-01-01T00:00:00Z"}, 400, "at"},
		{"work record next year", "POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "work": "w", "performed_by": "p", "airframe_id": a.ID, "at": now.AddDate(1, 0, 0)}, 400, "at"},
		{"rule limit 1e308", "POST", "/v1/service-rules", admin, map[string]any{"name": "r", "applies_to": "airframe", "flight_hours": 1e308, "action": "inspect"}, 400, "flight_hours"},
		{"rule days 1e9", "POST", "/v1/service-rules", admin, map[string]any{"name": "r", "applies_to": "airframe", "days": 1000000000, "action": "inspect"}, 400, "days"},
		{"rule revolutions 1e300", "POST", "/v1/service-rules", admin, map[string]any{"name": "r", "applies_to": "motor", "revolutions": 1e300, "action": "replace"}, 400, "revolutions"},
		{"number beyond float64", "POST", "/v1/airframes", tech, []byte(`{"code":"VB-X","layout":"quad-x","cells_s":6,"mtow_g":1e400}`), 400, "mtow_g"},
		{"unknown rule_id", "POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "work": "w", "performed_by": "p", "airframe_id": a.ID, "rule_id": someID}, 422, "rule_id"},
		{"unknown corrects_id", "POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "work": "w", "performed_by": "p", "airframe_id": a.ID, "corrects_id": someID}, 422, "corrects_id"},
		{"unknown job_id", "POST", "/v1/flights", pilot, map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "job_id": someID, "takeoff_at": now.Add(-2 * time.Hour), "landing_at": now.Add(-time.Hour)}, 422, "job_id"},
	}
	for _, c := range cases {
		r := e.call(c.method, c.path, c.role, c.body)
		p := r.problem(t)
		if r.Status != c.status || p.Field != c.field {
			t.Errorf("%s: %d field %q (%s), want %d field %q", c.name, r.Status, p.Field, p.Detail, c.status, c.field)
		}
	}

	// null for a required member of a PATCH is refused; for an optional one
	// it clears it.
	nulls := []struct{ path, body, field string }{
		{"/v1/airframes/" + a.ID, `{"code":null}`, "code"},
		{"/v1/airframes/" + a.ID, `{"cells_s":null}`, "cells_s"},
		{"/v1/jobs/" + job.ID, `{"client":null}`, "client"},
		{"/v1/parts/" + part.ID, `{"serial":null}`, "serial"},
		{"/v1/parts/" + part.ID, `{"notes":null}`, "notes"},
	}
	for _, n := range nulls {
		cur := e.call("GET", n.path, fleet.RoleViewer, nil)
		r := e.call("PATCH", n.path, tech, []byte(n.body), "If-Match", cur.Header.Get("ETag"))
		if p := r.problem(t); r.Status != 400 || p.Field != n.field {
			t.Errorf("PATCH %s %s: %d field %q, want 400 naming %s", n.path, n.body, r.Status, p.Field, n.field)
		}
		if after := e.call("GET", n.path, fleet.RoleViewer, nil); after.Header.Get("ETag") != cur.Header.Get("ETag") {
			t.Errorf("PATCH %s %s changed the record", n.path, n.body)
		}
	}
	cur := e.call("GET", "/v1/parts/"+part.ID, fleet.RoleViewer, nil)
	if r := e.call("PATCH", "/v1/parts/"+part.ID, tech, []byte(`{"mass_g":null,"lot":"L-1"}`), "If-Match", cur.Header.Get("ETag")); r.Status != 200 {
		t.Fatalf("clearing an optional member: %d %s", r.Status, r.Body)
	}
	// The same null rule on create.
	r := e.call("POST", "/v1/jobs", tech, []byte(`{"code":null,"client":"c"}`))
	if p := r.problem(t); r.Status != 400 || p.Field != "code" {
		t.Errorf("create with code null: %d %q", r.Status, p.Field)
	}
}

// A required reason or name must have visible characters: zero-width
// spaces, joiners, a BOM, Hangul fillers or the braille blank alone are
// refused (before the fix a zero-width space passed as an override reason).
func TestReasonsNeedVisibleCharacters(t *testing.T) {
	e := newEnv(t)
	a := e.quad("VZ-01")
	now := time.Now().UTC().Truncate(time.Second)
	ev := e.create("/v1/events", map[string]any{"kind": "overcurrent", "airframe_id": a.ID})
	part := e.create("/v1/parts", map[string]any{"kind": "other", "serial": "VZ-O1"})
	for _, blank := range []string{"\u200b", "\u200b\u200c\u200d", "\ufeff", " \u3164 ", "\u2800", "\u00a0\t"} {
		cases := []struct {
			name, method, path string
			role               fleet.Role
			body               any
			field              string
		}{
			{"override reason", "POST", "/v1/flights", pilot, map[string]any{"airframe_id": a.ID, "pilot": "test pilot",
				"takeoff_at": now.Add(-2 * time.Hour), "landing_at": now.Add(-time.Hour), "override_reason": blank}, "override_reason"},
			{"pilot", "POST", "/v1/flights", tech, map[string]any{"airframe_id": a.ID, "pilot": blank,
				"takeoff_at": now.Add(-2 * time.Hour), "landing_at": now.Add(-time.Hour), "override_reason": "ok"}, "pilot"},
			{"hold reason", "PATCH", "/v1/airframes/" + a.ID, tech, map[string]any{"hold_reason": blank}, "hold_reason"},
			{"retired reason", "PATCH", "/v1/parts/" + part.ID, tech, map[string]any{"status": "retired", "retired_reason": blank}, "retired_reason"},
			{"resolution", "PATCH", "/v1/events/" + ev.ID, tech, map[string]any{"resolved": true, "resolution": blank}, "resolution"},
			{"work", "POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "work": blank, "performed_by": "p", "airframe_id": a.ID}, "work"},
			{"performed by", "POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "work": "w", "performed_by": blank, "airframe_id": a.ID}, "performed_by"},
			{"key name", "POST", "/v1/keys", admin, map[string]any{"name": blank, "role": "viewer"}, "name"},
		}
		for _, c := range cases {
			var headers []string
			if c.method == "PATCH" {
				headers = []string{"If-Match", e.call("GET", c.path, fleet.RoleViewer, nil).Header.Get("ETag")}
			}
			r := e.call(c.method, c.path, c.role, c.body, headers...)
			if p := r.problem(t); r.Status != 400 || p.Field != c.field {
				t.Errorf("%s %q: %d field %q (%s), want 400 naming %s", c.name, blank, r.Status, p.Field, p.Detail, c.field)
			}
		}
	}
	// Visible text in any script, or a symbol, passes.
	cur := e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil)
	if r := e.call("PATCH", "/v1/airframes/"+a.ID, tech, map[string]any{"hold_reason": "\u200b🔧"}, "If-Match", cur.Header.Get("ETag")); r.Status != 200 {
		t.Fatalf("a symbol as the reason: %d %s", r.Status, r.Body)
	}
}
