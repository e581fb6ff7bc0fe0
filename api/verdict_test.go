package api_test

import (
	"bytes"
	"encoding/csv"
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

func (v *takeoffVerdict) codes() (blockers, warnings []string) {
	if v.ReadinessAtTakeoff != nil {
		for _, b := range v.ReadinessAtTakeoff.Blockers {
			blockers = append(blockers, b.Code)
		}
	}
	for _, w := range v.Warnings {
		if !slices.Contains(warnings, w.Code) {
			warnings = append(warnings, w.Code)
		}
	}
	return blockers, warnings
}

func (v *takeoffVerdict) flownNotReady() int {
	n := 0
	for _, e := range v.Events {
		if e.Kind == fleet.EventFlownNotReady {
			n++
		}
	}
	return n
}

// Records are facts: flights the old gate refused (409 for an airframe not
// ready, retired or with a retired pack, 422 for a retired pack) are
// recorded, flagged by their verdict; a take-off with no parts on record
// says so in its warnings without being flagged; the manifest shows the
// verdict in a column and keeps a row for a flight with no part on record.
func TestFlightsRecordedWithVerdict(t *testing.T) {
	e := newEnv(t)
	job := e.create("/v1/jobs", map[string]any{"code": "VD-JOB", "client": "Fenwick Surveys"})
	hoursAgo := func(h int) time.Time {
		return time.Now().Add(-time.Duration(h) * time.Hour).UTC().Truncate(time.Second)
	}
	flight := func(airframe string, at time.Time, packs ...string) (*resp, takeoffVerdict) {
		t.Helper()
		if packs == nil {
			packs = []string{}
		}
		r := e.call("POST", "/v1/flights", pilot, map[string]any{"airframe_id": airframe, "job_id": job.ID,
			"pilot": "test pilot", "takeoff_at": at, "landing_at": at.Add(2 * time.Minute), "packs": packs})
		var v takeoffVerdict
		r.decode(t, &v)
		return r, v
	}

	// No part on record: recorded and ready (a multirotor that flew had its
	// rotors), with the register's gaps as warnings.
	bare := e.quad("VD-BARE")
	r, v := flight(bare.ID, hoursAgo(30))
	blockers, warnings := v.codes()
	if r.Status != 201 || v.ReadinessAtTakeoff == nil || !v.ReadinessAtTakeoff.Ready || len(blockers) != 0 ||
		!slices.Contains(warnings, fleet.ReadyEmptyPosition) || !slices.Contains(warnings, fleet.ReadyNoMotors) || v.flownNotReady() != 0 {
		t.Fatalf("flight with no parts on record: %d blockers %v warnings %v events %v", r.Status, blockers, warnings, v.Events)
	}

	// A retired pack (the old code refused it with 422).
	a := e.quad("VD-01")
	e.fitQuad(a, "VD", "", time.Now().Add(-72*time.Hour))
	pack := e.create("/v1/parts", map[string]any{"kind": "pack", "serial": "VD-PK", "specs": map[string]any{
		"chemistry": "lipo", "cells_s": 6, "cells_p": 1, "rated_mah": 16000}})
	if r := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "retire", "part_id": pack.ID,
		"at": time.Now().Add(-40 * time.Hour), "work": "retired: puffed", "performed_by": "K. Lind"}); r.Status != 201 {
		t.Fatalf("retire pack: %d %s", r.Status, r.Body)
	}
	r, v = flight(a.ID, hoursAgo(30), pack.ID)
	blockers, _ = v.codes()
	if r.Status != 201 || v.ReadinessAtTakeoff.Ready || !slices.Equal(blockers, []string{fleet.ReadyPackRetired}) || v.flownNotReady() != 1 {
		t.Fatalf("flight with a retired pack: %d blockers %v events %v", r.Status, blockers, v.Events)
	}
	// The same pack before its retirement was fine.
	r, v = flight(a.ID, hoursAgo(45), pack.ID)
	if r.Status != 201 || !v.ReadinessAtTakeoff.Ready || v.flownNotReady() != 0 {
		t.Fatalf("flight before the pack's retirement: %d %s", r.Status, r.Body)
	}

	// A held airframe (the old code refused with 409): held now, so a flight
	// now is flagged; the hold history says a flight before it was not.
	cur := e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil)
	if r := e.call("PATCH", "/v1/airframes/"+a.ID, tech, map[string]any{"hold_reason": "arm crack"},
		"If-Match", cur.Header.Get("ETag")); r.Status != 200 {
		t.Fatalf("hold: %d %s", r.Status, r.Body)
	}
	r, v = flight(a.ID, time.Now().Add(time.Second)) // after the hold was recorded
	blockers, _ = v.codes()
	if r.Status != 201 || !slices.Contains(blockers, fleet.ReadyAirframeHeld) || v.flownNotReady() != 1 {
		t.Fatalf("flight while held: %d blockers %v", r.Status, blockers)
	}
	r, v = flight(a.ID, hoursAgo(20))
	blockers, _ = v.codes()
	if r.Status != 201 || slices.Contains(blockers, fleet.ReadyAirframeHeld) {
		t.Fatalf("flight before the hold: %d blockers %v", r.Status, blockers)
	}

	// A retired airframe's earlier flight is back-filled (the old code
	// refused with 409): recorded, and ready then.
	cur = e.call("GET", "/v1/airframes/"+bare.ID, fleet.RoleViewer, nil)
	if r := e.call("DELETE", "/v1/airframes/"+bare.ID, admin, nil, "If-Match", cur.Header.Get("ETag")); r.Status != 200 {
		t.Fatalf("retire airframe: %d %s", r.Status, r.Body)
	}
	r, v = flight(bare.ID, hoursAgo(50))
	if r.Status != 201 || !v.ReadinessAtTakeoff.Ready {
		t.Fatalf("back-filled flight of a retired airframe: %d %s", r.Status, r.Body)
	}

	// The manifest: the verdict per flight, in JSON and in the CSV columns,
	// and a row for the flights with no part on record.
	var m struct {
		Flights []struct {
			FlightID             string  `json:"flight_id"`
			FlownNotReadyEventID *string `json:"flown_not_ready_event_id"`
			ReadinessAtTakeoff   *struct {
				Ready bool `json:"ready"`
			} `json:"readiness_at_takeoff"`
		} `json:"flights"`
	}
	e.call("GET", "/v1/jobs/"+job.ID+"/manifest", fleet.RoleViewer, nil).decode(t, &m)
	notReady := 0
	for _, f := range m.Flights {
		if f.ReadinessAtTakeoff == nil || (f.FlownNotReadyEventID != nil) == f.ReadinessAtTakeoff.Ready {
			t.Errorf("manifest flight %+v", f)
		} else if !f.ReadinessAtTakeoff.Ready {
			notReady++
		}
	}
	if len(m.Flights) != 6 || notReady != 2 {
		t.Fatalf("manifest: %d flights, %d not ready; want 6 and 2", len(m.Flights), notReady)
	}
	r = e.call("GET", "/v1/jobs/"+job.ID+"/manifest?format=csv", fleet.RoleViewer, nil)
	rows, err := csv.NewReader(bytes.NewReader(r.Body)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	byFlight := map[string][]string{}
	for _, row := range rows[1:] {
		byFlight[row[1]] = append(byFlight[row[1]], row[7]+"|"+row[8])
	}
	if len(byFlight) != 6 {
		t.Fatalf("csv covers %d flights, want 6: %v", len(byFlight), rows)
	}
	if got := slices.Compact(byFlight[v.ID]); !slices.Equal(got, []string{"yes|"}) {
		t.Errorf("csv rows of the retired airframe's flight %v, want one row, ready", byFlight[v.ID])
	}
	seen := map[string]bool{}
	for _, cells := range byFlight {
		for _, c := range slices.Compact(cells) {
			seen[c] = true
		}
	}
	if !seen["no|"+fleet.ReadyPackRetired] || !seen["no|"+fleet.ReadyAirframeHeld] {
		t.Errorf("csv verdict cells %v", seen)
	}
}
