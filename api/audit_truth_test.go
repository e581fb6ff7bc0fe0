package api_test

import (
	"encoding/json"
	"reflect"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
)

// auditRows reads every audit row of one record, oldest first.
func (e *env) auditRows(entity, id string) []struct {
	Before json.RawMessage `json:"before"`
	After  json.RawMessage `json:"after"`
} {
	e.t.Helper()
	var l struct {
		Items []struct {
			Before json.RawMessage `json:"before"`
			After  json.RawMessage `json:"after"`
		} `json:"items"`
	}
	r := e.call("GET", "/v1/audit?limit=500&entity="+entity+"&entity_id="+id, admin, nil)
	if r.Status != 200 {
		e.t.Fatalf("audit: %d %s", r.Status, r.Body)
	}
	r.decode(e.t, &l)
	return l.Items
}

func sameJSON(t *testing.T, a, b []byte) bool {
	t.Helper()
	var x, y any
	if err := json.Unmarshal(a, &x); err != nil {
		t.Fatalf("%v: %s", err, a)
	}
	if err := json.Unmarshal(b, &y); err != nil {
		t.Fatalf("%v: %s", err, b)
	}
	return reflect.DeepEqual(x, y)
}

// The audit log tells the truth about every PATCH: for every PATCH route
// and a range of patches (members with pointer, slice, raw JSON and plain
// values, set, changed and cleared), the row's before equals the record as
// read just before the request and its after equals the record as read just
// after. A refused patch leaves the record and the log unchanged. (Before the
// fix the working copy shared specs bytes, on_events and every pointer with
// the record read, so the patch rewrote "before" in place — or, for specs,
// corrupted it into a 500.)
func TestPatchAuditMatchesReads(t *testing.T) {
	e := newEnv(t)
	af := e.create("/v1/airframes", map[string]any{"code": "AT-1", "layout": "quad-x", "cells_s": 6,
		"empty_mass_g": 2400, "mtow_g": 6000, "rotor_diameter_mm": 380, "hold_reason": "arm crack", "notes": "n"})
	motor := e.create("/v1/parts", map[string]any{"kind": "motor", "serial": "AT-M1", "part_number": "MT-4010",
		"acquired_on": "2026-01-05", "mass_g": 120,
		"specs": map[string]any{"rotation": "ccw", "kv": 370, "bearing": map[string]any{"count": 2, "dynamic_rating_n": 1800}}})
	gimbal := e.create("/v1/parts", map[string]any{"kind": "gimbal", "serial": "AT-G1",
		"specs": map[string]any{"axes": 3, "firmware": "v1.2.3-long-enough-to-be-overwritten"}})
	job := e.create("/v1/jobs", map[string]any{"code": "AT-J", "client": "Harbour Board", "starts_on": "2026-02-01",
		"ends_on": "2026-03-01"})
	rule := e.call("POST", "/v1/service-rules", admin, map[string]any{"name": "after events", "applies_to": "airframe",
		"flight_hours": 20, "on_events": []string{"hard_landing", "prop_strike", "crash"}, "action": "inspect"})
	if rule.Status != 201 {
		t.Fatalf("rule: %d %s", rule.Status, rule.Body)
	}
	var ruleID idBody
	rule.decode(t, &ruleID)
	ev := e.call("POST", "/v1/events", tech, map[string]any{"kind": "overcurrent", "airframe_id": af.ID, "detail": "peak 90 A"})
	if ev.Status != 201 {
		t.Fatalf("event: %d %s", ev.Status, ev.Body)
	}
	var evID idBody
	ev.decode(t, &evID)
	notice := e.create("/v1/notices", map[string]any{"reference": "AT-SB-1", "title": "clamp torque", "issued_on": "2026-01-05",
		"category": "mandatory", "required_work": "re-torque",
		"applicability": map[string]any{"part_kind": "flight_controller", "part_numbers": []string{"FC-7"},
			"software": []map[string]any{{"part_kind": "flight_controller", "below": "4.2.0"}}},
		"window": map[string]any{"flight_hours": 10, "from": "applicable"}})

	cmap := e.call("POST", "/v1/column-maps", tech, map[string]any{"name": "AT map", "time": map[string]any{"column": "T"},
		"columns": map[string]any{"pack_v": map[string]any{"from": "V"}, "pack_a": map[string]any{"from": "A", "scale": 0.01}},
		"detect":  []string{"T", "V"}})
	if cmap.Status != 201 {
		t.Fatalf("column map: %d %s", cmap.Status, cmap.Body)
	}
	var cmapID idBody
	cmap.decode(t, &cmapID)

	type patch struct {
		body   string
		status int
	}
	cases := []struct {
		entity, path string
		role         fleet.Role
		patches      []patch
	}{
		{"airframe", "/v1/airframes/" + af.ID, tech, []patch{
			{`{"notes":"x"}`, 200},
			{`{"hold_reason":"prop chip"}`, 200},
			{`{"mtow_g":6500,"empty_mass_g":2500}`, 200},
			{`{"rotor_diameter_mm":null}`, 200},
			{`{"rotor_diameter_mm":400}`, 200},
			{`{"hold_reason":null}`, 200},
			{`{"mtow_g":1}`, 400},
		}},
		{"part", "/v1/parts/" + motor.ID, tech, []patch{
			{`{"notes":"x"}`, 200},
			{`{"specs":{"rotation":"ccw","kv":400}}`, 200},
			{`{"specs":{"rotation":"ccw","kv":400,"bearing":{"count":2,"dynamic_rating_n":2000,"life_factor":1.5}}}`, 200},
			{`{"mass_g":118,"acquired_on":"2026-01-06"}`, 200},
			{`{"acquired_on":null,"lot":"L-9"}`, 200},
			{`{"specs":{"rotation":"sideways"}}`, 400},
		}},
		{"part", "/v1/parts/" + gimbal.ID, tech, []patch{
			{`{"notes":"y"}`, 200},
			{`{"specs":{"axes":2}}`, 200},
		}},
		{"job", "/v1/jobs/" + job.ID, tech, []patch{
			{`{"site":"North pit"}`, 200},
			{`{"starts_on":"2026-02-02"}`, 200},
			{`{"ends_on":null}`, 200},
			{`{"ends_on":"2026-01-01"}`, 400},
		}},
		{"service_rule", "/v1/service-rules/" + ruleID.ID, admin, []patch{
			{`{"on_events":["crash"]}`, 200},
			{`{"on_events":["pack_swelling","crash"],"flight_hours":25}`, 200},
			{`{"flight_hours":null,"days":90}`, 200},
			{`{"description":"after any event of these kinds"}`, 200},
			{`{"on_events":["nope"]}`, 400},
		}},
		{"column_map", "/v1/column-maps/" + cmapID.ID, tech, []patch{
			{`{"detect":["T","V","A"]}`, 200},
			{`{"columns":{"pack_v":{"from":"V","scale":0.001},"pack_a":{"from":"A","negate":true}}}`, 200},
			{`{"time":{"column":"T","unit":"ms","origin":"start"},"delimiter":";"}`, 200},
			{`{"detect":[]}`, 200},
			{`{"columns":{"pack_v":{"from":"V","scale":0}}}`, 400},
		}},
		{"notice", "/v1/notices/" + notice.ID, tech, []patch{
			{`{"revision":"2"}`, 200},
			{`{"applicability":{"part_kind":"flight_controller","part_numbers":["FC-7","FC-9"],"software":[{"part_kind":"flight_controller","min":"4.0.0","below":"4.3.0"}]}}`, 200},
			{`{"window":{"days":30,"from":"issue","recurring":true}}`, 200},
			{`{"category":"advisory","title":"arm clamp torque"}`, 200},
			{`{"window":{"days":30,"recurring":true,"due_on":"2026-05-01"}}`, 400},
		}},
		{"event", "/v1/events/" + evID.ID, tech, []patch{
			{`{"detail":"peak 95 A"}`, 200},
			{`{"severity":"critical"}`, 200},
			{`{"resolved":true,"resolution":"connector reseated"}`, 200},
		}},
	}
	covered := map[string]bool{}
	for _, c := range cases {
		covered[c.path[:strings.LastIndex(c.path, "/")]+"/:id"] = true
		id := c.path[strings.LastIndex(c.path, "/")+1:]
		for _, p := range c.patches {
			before := e.call("GET", c.path, fleet.RoleViewer, nil)
			rows := len(e.auditRows(c.entity, id))
			r := e.call("PATCH", c.path, c.role, []byte(p.body), "If-Match", before.Header.Get("ETag"))
			if r.Status != p.status {
				t.Fatalf("PATCH %s %s: %d %s, want %d", c.path, p.body, r.Status, r.Body, p.status)
			}
			after := e.call("GET", c.path, fleet.RoleViewer, nil)
			log := e.auditRows(c.entity, id)
			if p.status != 200 {
				if len(log) != rows || !sameJSON(t, before.Body, after.Body) {
					t.Fatalf("refused PATCH %s %s changed the record or the log", c.path, p.body)
				}
				continue
			}
			if len(log) != rows+1 {
				t.Fatalf("PATCH %s %s: %d new audit rows, want 1", c.path, p.body, len(log)-rows)
			}
			last := log[len(log)-1]
			if !sameJSON(t, last.Before, before.Body) {
				t.Errorf("PATCH %s %s: audit before\n %s\nrecord read before\n %s", c.path, p.body, last.Before, before.Body)
			}
			if !sameJSON(t, last.After, after.Body) || !sameJSON(t, r.Body, after.Body) {
				t.Errorf("PATCH %s %s: audit after\n %s\nrecord read after\n %s", c.path, p.body, last.After, after.Body)
			}
		}
	}
	for _, r := range api.Routes {
		if r.Method == "PATCH" && !covered[r.Path] {
			t.Errorf("PATCH %s is not walked by this test", r.Path)
		}
	}
}
