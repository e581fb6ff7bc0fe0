package api_test

import (
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// The programme routes through the real router, validated against the
// document: rule CRUD with validation, a replacement work record swapping a
// part, the due list reacting at once, readiness, the flight gate with its
// flight recorded anyway with its verdict (never refused: regression for
// the old 409 gate), the override reason kept, and the spares forecast.
func TestProgrammeRoutes(t *testing.T) {
	e := newEnv(t)
	a := e.quad("PG-01")
	t0 := time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	motors, props := e.fitQuad(a, "PG", "", t0)

	// Validation names the field; the default programme is listed.
	for _, c := range []struct {
		body  map[string]any
		field string
	}{
		{map[string]any{"name": "x", "applies_to": "motor", "action": "inspect"}, "flight_hours"},
		{map[string]any{"name": "x", "applies_to": "airframe", "cycles": 10, "action": "inspect"}, "cycles"},
		{map[string]any{"name": "x", "applies_to": "pack", "soh_below_pct": 120, "action": "retire"}, "soh_below_pct"},
		{map[string]any{"name": "x", "applies_to": "rotor", "flights": 3, "action": "inspect"}, "applies_to"},
		{map[string]any{"name": "x", "applies_to": "airframe", "flights": 3, "action": "polish"}, "action"},
		{map[string]any{"name": "x", "applies_to": "airframe", "on_events": []string{"bird"}, "action": "inspect"}, "on_events"},
	} {
		r := e.call("POST", "/v1/service-rules", admin, c.body)
		if p := r.problem(t); r.Status != 400 || p.Field != c.field {
			t.Errorf("rule %v: %d field %q, want 400 %q", c.body, r.Status, p.Field, c.field)
		}
	}
	var rules struct {
		Items []struct {
			ID   string `json:"id"`
			Name string `json:"name"`
		} `json:"items"`
	}
	e.call("GET", "/v1/service-rules", fleet.RoleViewer, nil).decode(t, &rules)
	if len(rules.Items) != 7 {
		t.Fatalf("%d default rules, want 7", len(rules.Items))
	}
	// A strict rule: every motor is due after 2 flights, grounding.
	rule := e.call("POST", "/v1/service-rules", admin, map[string]any{"name": "motor check every 2 flights",
		"applies_to": "motor", "flights": 2, "grounding": true, "action": "replace"})
	var rl idBody
	rule.decode(t, &rl)
	if rule.Status != 201 {
		t.Fatalf("create rule: %d %s", rule.Status, rule.Body)
	}
	pack := e.create("/v1/parts", map[string]any{"kind": "pack", "serial": "PG-PK", "part_number": "PK-6S",
		"specs": map[string]any{"chemistry": "lipo", "cells_s": 6, "cells_p": 1, "rated_mah": 16000}})
	flight := func(h int, override string) *resp {
		at := time.Now().Add(-time.Duration(h) * time.Hour).UTC().Truncate(time.Second)
		body := map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "takeoff_at": at, "landing_at": at.Add(20 * time.Minute),
			"packs": []string{pack.ID}}
		if override != "" {
			body["override_reason"] = override
		}
		return e.call("POST", "/v1/flights", pilot, body)
	}
	for _, h := range []int{10, 8} {
		if r := flight(h, ""); r.Status != 201 {
			t.Fatalf("flight: %d %s", r.Status, r.Body)
		}
	}
	// Two flights: every motor is overdue, the airframe is grounded at once.
	var rd struct {
		Ready    bool                    `json:"ready"`
		Blockers []struct{ Code string } `json:"blockers"`
	}
	e.call("GET", "/v1/airframes/"+a.ID+"/readiness?packs="+pack.ID, fleet.RoleViewer, nil).decode(t, &rd)
	if rd.Ready || len(rd.Blockers) != 4 || rd.Blockers[0].Code != "overdue_grounding_rule" {
		t.Fatalf("readiness after two flights %+v", rd)
	}
	var af idBody
	e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil).decode(t, &af)
	if af.Status != "grounded" {
		t.Fatalf("airframe status %q with overdue grounding items, want grounded", af.Status)
	}
	// A flight while grounded is recorded all the same, flagged: its
	// verdict, the blockers as warnings and one flown_not_ready event.
	type verdict struct {
		ID                 string                  `json:"id"`
		OverrideReason     *string                 `json:"override_reason"`
		Warnings           []struct{ Code string } `json:"warnings"`
		ReadinessAtTakeoff *struct {
			Ready    bool                    `json:"ready"`
			Blockers []struct{ Code string } `json:"blockers"`
		} `json:"readiness_at_takeoff"`
		Events []struct{ Kind, Detail string } `json:"events"`
	}
	r := flight(6, "")
	var grounded verdict
	r.decode(t, &grounded)
	if r.Status != 201 || grounded.ReadinessAtTakeoff == nil || grounded.ReadinessAtTakeoff.Ready ||
		len(grounded.ReadinessAtTakeoff.Blockers) != 4 || len(grounded.Warnings) < 4 || grounded.Warnings[0].Code != "overdue_grounding_rule" {
		t.Fatalf("flight while grounded: %d %s", r.Status, r.Body)
	}
	if len(grounded.Events) != 1 || grounded.Events[0].Kind != "flown_not_ready" {
		t.Fatalf("flight while grounded: events %+v, want one flown_not_ready", grounded.Events)
	}
	r = flight(4, "ferry to the workshop, approved by the maintenance lead")
	var fl verdict
	r.decode(t, &fl)
	if r.Status != 201 || fl.OverrideReason == nil || len(fl.Events) != 1 {
		t.Fatalf("overridden flight: %d %s", r.Status, r.Body)
	}
	var audit struct {
		Items []struct {
			After struct {
				OverrideReason *string `json:"override_reason"`
			} `json:"after"`
		} `json:"items"`
	}
	e.call("GET", "/v1/audit?entity=flight&entity_id="+fl.ID, admin, nil).decode(t, &audit)
	if len(audit.Items) != 1 || audit.Items[0].After.OverrideReason == nil {
		t.Fatalf("override not in the audit log: %+v", audit.Items)
	}
	var due struct {
		Items []struct {
			Subject string `json:"subject"`
			Status  string `json:"status"`
		} `json:"items"`
	}
	e.call("GET", "/v1/due?status=overdue&airframe="+a.ID, fleet.RoleViewer, nil).decode(t, &due)
	if len(due.Items) != 5 {
		t.Fatalf("%d overdue items, want the 4 motors and the review of the flights flown not ready: %+v", len(due.Items), due.Items)
	}
	// Spares: four motor replacements expected, one spare in stock.
	spare := e.motor("PG-SPARE", fleet.CCW, "")
	var fc struct {
		PartNumbers []struct {
			PartNumber string `json:"part_number"`
			Expected   int    `json:"expected"`
			InStock    int    `json:"in_stock"`
			Shortfall  int    `json:"shortfall"`
		} `json:"part_numbers"`
	}
	e.call("GET", "/v1/forecast/parts?days=30", fleet.RoleViewer, nil).decode(t, &fc)
	found := false
	for _, p := range fc.PartNumbers {
		if p.PartNumber == "MT-4010" {
			found = true
			if p.Expected < 4 || p.InStock != 1 || p.Shortfall != p.Expected-1 {
				t.Errorf("motor demand %+v", p)
			}
		}
	}
	if !found {
		t.Errorf("no motor demand in %+v", fc)
	}
	// A replacement record swaps m1's motor in one transaction and resets its item.
	r = e.call("POST", "/v1/work-records", tech, map[string]any{"action": "replace", "rule_id": rl.ID,
		"removed_part_id": motors[0].ID, "fitted_part_id": spare.ID, "work": "motor replaced after check",
		"performed_by": "T. Okoye", "approved_by": "M. Ruiz"})
	var wr struct {
		Position      *string  `json:"position"`
		AirframeID    *string  `json:"airframe_id"`
		AirframeHours *float64 `json:"airframe_hours"`
	}
	r.decode(t, &wr)
	if r.Status != 201 || wr.Position == nil || *wr.Position != "m1" || wr.AirframeHours == nil || *wr.AirframeHours < 0.99 {
		t.Fatalf("work record: %d %s", r.Status, r.Body)
	}
	var fm struct {
		Parts []struct{ Serial, Position, Kind string } `json:"parts"`
	}
	e.call("GET", "/v1/airframes/"+a.ID+"/fitment", fleet.RoleViewer, nil).decode(t, &fm)
	for _, p := range fm.Parts {
		if p.Position == "m1" && p.Kind == "motor" && p.Serial != "PG-SPARE" {
			t.Fatalf("m1 motor after replacement %s", p.Serial)
		}
	}
	e.call("GET", "/v1/due?status=overdue&airframe="+a.ID, fleet.RoleViewer, nil).decode(t, &due)
	if len(due.Items) != 4 || due.Items[0].Subject != "PG-01" {
		t.Fatalf("%d overdue after replacing one motor, want 3 motors and the review: %+v", len(due.Items), due.Items)
	}
	// Disable the strict rule: the airframe flies again.
	cur := e.call("GET", "/v1/service-rules/"+rl.ID, fleet.RoleViewer, nil)
	if r := e.call("PATCH", "/v1/service-rules/"+rl.ID, admin, map[string]any{"enabled": false}, "If-Match", cur.Header.Get("ETag")); r.Status != 200 {
		t.Fatalf("disable rule: %d %s", r.Status, r.Body)
	}
	e.call("GET", "/v1/airframes/"+a.ID+"/readiness", fleet.RoleViewer, nil).decode(t, &rd)
	if !rd.Ready {
		t.Fatalf("readiness after disabling the rule %+v", rd)
	}
	e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil).decode(t, &af)
	if af.Status != "active" {
		t.Fatalf("airframe status %q after disabling the rule, want active", af.Status)
	}
	// The review: a technician's work record against the review rule
	// resolves the two flown_not_ready events and clears the due item.
	var evs struct {
		Items []struct{ ID string } `json:"items"`
	}
	e.call("GET", "/v1/events?kind=flown_not_ready&open=true&airframe_id="+a.ID, fleet.RoleViewer, nil).decode(t, &evs)
	if len(evs.Items) != 2 {
		t.Fatalf("%d open flown_not_ready events, want 2", len(evs.Items))
	}
	var review string
	e.call("GET", "/v1/service-rules", fleet.RoleViewer, nil).decode(t, &rules)
	for _, r := range rules.Items {
		if r.Name == "review of a flight flown not ready" {
			review = r.ID
		}
	}
	if r := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "rule_id": review,
		"airframe_id": a.ID, "work": "reviewed both flights: motors past their check interval; checked, no defect",
		"performed_by": "T. Okoye", "resolves": []string{evs.Items[0].ID, evs.Items[1].ID}}); r.Status != 201 {
		t.Fatalf("review record: %d %s", r.Status, r.Body)
	}
	e.call("GET", "/v1/due?status=overdue&airframe="+a.ID, fleet.RoleViewer, nil).decode(t, &due)
	if len(due.Items) != 0 {
		t.Fatalf("overdue after the review: %+v", due.Items)
	}
	// A rule with work records cannot be deleted (disable it instead).
	cur = e.call("GET", "/v1/service-rules/"+rl.ID, fleet.RoleViewer, nil)
	if r := e.call("DELETE", "/v1/service-rules/"+rl.ID, admin, nil, "If-Match", cur.Header.Get("ETag")); r.Status != 409 {
		t.Fatalf("delete rule with records: %d", r.Status)
	}
	_ = props
}
