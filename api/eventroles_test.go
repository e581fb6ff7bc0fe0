package api_test

import (
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// A pilot cannot clear a grounding blocker: resolving a grounding event
// (hard landing, crash, strike, flown not ready, pack swelling) takes a
// technician's work record; a pilot may still add notes to an event they
// recorded, and edits no one else's (before the fix a pilot PATCHed a hard
// landing resolved and the airframe read ready).
func TestGroundingEventsNeedAWorkRecord(t *testing.T) {
	e := newEnv(t)
	a := e.quad("GE-01")
	e.fitQuad(a, "GE", "", time.Now().Add(-48*time.Hour))
	ready := func() bool {
		var rd struct{ Ready bool }
		e.call("GET", "/v1/airframes/"+a.ID+"/readiness", fleet.RoleViewer, nil).decode(t, &rd)
		return rd.Ready
	}
	if !ready() {
		t.Fatal("the airframe is not ready before any event")
	}
	for _, kind := range fleet.GroundingEventKinds {
		if !slices.Contains(fleet.EventKinds, kind) {
			continue // flown_not_ready is recorded by the service once flights record readiness
		}
		ev := e.call("POST", "/v1/events", pilot, map[string]any{"kind": kind, "airframe_id": a.ID, "detail": "seen on " + kind})
		if ev.Status != 201 {
			t.Fatalf("%s: %d %s", kind, ev.Status, ev.Body)
		}
		var id idBody
		ev.decode(t, &id)
		tag := ev.Header.Get("ETag")
		r := e.call("PATCH", "/v1/events/"+id.ID, pilot, map[string]any{"resolved": true, "resolution": "looked fine"}, "If-Match", tag)
		if p := r.problem(t); r.Status != 403 || p.Field != "resolved" {
			t.Errorf("pilot resolves own %s: %d %+v", kind, r.Status, p)
		}
		r = e.call("PATCH", "/v1/events/"+id.ID, tech, map[string]any{"resolved": true, "resolution": "looked fine"}, "If-Match", tag)
		if p := r.problem(t); r.Status != 422 || p.Field != "resolved" {
			t.Errorf("technician resolves %s by PATCH: %d %+v", kind, r.Status, p)
		}
		// Notes: the pilot who recorded it may add to the detail.
		r = e.call("PATCH", "/v1/events/"+id.ID, pilot, map[string]any{"detail": "seen on " + kind + "; left arm creaks"}, "If-Match", tag)
		if r.Status != 200 {
			t.Errorf("pilot adds a note to own %s: %d %s", kind, r.Status, r.Body)
		}
		// The technician's work record resolves it.
		w := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "work": "inspected after " + kind,
			"performed_by": "test technician", "airframe_id": a.ID, "resolves": []string{id.ID}})
		if w.Status != 201 {
			t.Fatalf("work record: %d %s", w.Status, w.Body)
		}
		var got struct {
			ResolvedAt *time.Time `json:"resolved_at"`
		}
		e.call("GET", "/v1/events/"+id.ID, fleet.RoleViewer, nil).decode(t, &got)
		if got.ResolvedAt == nil {
			t.Errorf("%s: the work record did not resolve it", kind)
		}
	}
	// A hard landing blocks readiness and the pilot cannot lift it.
	ev := e.create("/v1/events", map[string]any{"kind": "hard_landing", "airframe_id": a.ID})
	cur := e.call("GET", "/v1/events/"+ev.ID, fleet.RoleViewer, nil)
	if r := e.call("PATCH", "/v1/events/"+ev.ID, pilot, map[string]any{"resolved": true, "resolution": "fine"}, "If-Match", cur.Header.Get("ETag")); r.Status != 403 {
		t.Fatalf("pilot resolves a technician's hard landing: %d", r.Status)
	}
	if ready() {
		t.Fatal("the airframe reads ready with an open hard landing")
	}
	// Pilots edit only their own events, even to add notes; a non-grounding
	// event of their own they may resolve.
	if r := e.call("PATCH", "/v1/events/"+ev.ID, pilot, map[string]any{"detail": "mine now"}, "If-Match", cur.Header.Get("ETag")); r.Status != 403 {
		t.Fatalf("pilot edits a technician's event: %d", r.Status)
	}
	own := e.call("POST", "/v1/events", pilot, map[string]any{"kind": "overcurrent", "airframe_id": a.ID})
	var ownID idBody
	own.decode(t, &ownID)
	if r := e.call("PATCH", "/v1/events/"+ownID.ID, pilot, map[string]any{"resolved": true, "resolution": "throttle curve fixed"}, "If-Match", own.Header.Get("ETag")); r.Status != 200 {
		t.Fatalf("pilot resolves own overcurrent: %d %s", r.Status, r.Body)
	}
}

// A key belongs to a person: a flight's pilot defaults to the key's
// person, and a pilot records no flight for someone else; a technician may.
func TestFlightPilotIsTheKeysPerson(t *testing.T) {
	e := newEnv(t)
	var k struct {
		Person string `json:"person"`
		Token  string `json:"token"`
	}
	r := e.call("POST", "/v1/keys", admin, map[string]any{"name": "field tablet 3", "person": "A. Moreau", "role": "pilot"})
	r.decode(t, &k)
	if r.Status != 201 || k.Person != "A. Moreau" {
		t.Fatalf("key: %d %s", r.Status, r.Body)
	}
	e.tokens["moreau"] = k.Token
	a := e.quad("PP-01")
	at := time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	e.fitQuad(a, "PP", "", at)
	flight := func(pilot any, n int) map[string]any {
		f := map[string]any{"airframe_id": a.ID, "takeoff_at": at.Add(time.Duration(n) * time.Hour),
			"landing_at": at.Add(time.Duration(n)*time.Hour + 20*time.Minute)}
		if pilot != nil {
			f["pilot"] = pilot
		}
		return f
	}
	var fl struct{ Pilot string }
	r = e.call("POST", "/v1/flights", "moreau", flight(nil, 1))
	r.decode(t, &fl)
	if r.Status != 201 || fl.Pilot != "A. Moreau" {
		t.Fatalf("no pilot given: %d pilot %q", r.Status, fl.Pilot)
	}
	if r := e.call("POST", "/v1/flights", "moreau", flight("a. moreau", 2)); r.Status != 201 {
		t.Fatalf("own name in other case: %d %s", r.Status, r.Body)
	}
	r = e.call("POST", "/v1/flights", "moreau", flight("B. Okafor", 3))
	if p := r.problem(t); r.Status != 403 || p.Field != "pilot" {
		t.Fatalf("pilot records a flight for someone else: %d %+v", r.Status, p)
	}
	if r := e.call("POST", "/v1/flights", tech, flight("B. Okafor", 4)); r.Status != 201 {
		t.Fatalf("technician records a flight for a pilot: %d %s", r.Status, r.Body)
	}
	var keys struct {
		Items []struct{ Name, Person string } `json:"items"`
	}
	e.call("GET", "/v1/keys", admin, nil).decode(t, &keys)
	for _, it := range keys.Items {
		if it.Person == "" {
			t.Errorf("key %s has no person", it.Name)
		}
	}
}
