package api_test

import (
	"fmt"
	"math/rand/v2"
	"net/url"
	"slices"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// takeoffVerdict is the part of a flight the back-fill test reads.
type takeoffVerdict struct {
	ID        string    `json:"id"`
	TakeoffAt time.Time `json:"takeoff_at"`
	Packs     []struct {
		PartID string `json:"part_id"`
	}
	ReadinessAtTakeoff *struct {
		Ready    bool                    `json:"ready"`
		Blockers []struct{ Code string } `json:"blockers"`
	} `json:"readiness_at_takeoff"`
	Warnings []struct{ Code string } `json:"warnings"`
	Events   []struct{ Kind string } `json:"events"`
}

// A year of flight logs back-filled out of order for an airframe under the
// default programme's 90-day periodic inspection (grounding), overdue
// today: every flight lands (none is refused because the airframe is not
// ready now, as the old readiness gate did), exactly the flights that took off
// while the inspection was overdue carry a flown_not_ready event, and
// readiness?at= their take-off agrees with each flight's stored verdict.
// One inspection record is entered late (back-dated) halfway through the
// uploads, and the earliest flight arrives among the last: both change the
// verdicts of flights recorded before them, which must be re-judged.
func TestBackfillYearOfLogs(t *testing.T) {
	e := newEnv(t)
	const code = "BF-07"
	a := e.create("/v1/airframes", map[string]any{"code": code, "layout": "quad-x", "cells_s": 4,
		"rotor_diameter_mm": 254, "empty_mass_g": 1000, "model": "Backfill 4"})
	day0 := time.Now().UTC().Truncate(24*time.Hour).AddDate(-1, 0, 0).Add(10 * time.Hour)
	at := func(day int) time.Time { return day0.AddDate(0, 0, day) }
	e.fitQuad(a, "BF", "", at(-1))
	packs := []sim.PackState{}
	for i := range 3 {
		p := sim.DefaultSpec(1).Packs[0]
		p.Serial = fmt.Sprintf("BF-PK%d", i+1)
		packs = append(packs, p)
		e.create("/v1/parts", map[string]any{"kind": "pack", "serial": p.Serial, "mass_g": 500,
			"specs": map[string]any{"chemistry": "lipo", "cells_s": p.CellsS, "cells_p": p.CellsP, "rated_mah": p.RatedMah,
				"baseline_ir_mohm": p.BaselineIRmOhm, "c_rating": 25}})
	}
	var rules struct {
		Items []struct{ ID, Name string } `json:"items"`
	}
	e.call("GET", "/v1/service-rules", fleet.RoleViewer, nil).decode(t, &rules)
	var inspection string
	for _, r := range rules.Items {
		if r.Name == "airframe periodic inspection" { // 25 h or 90 days, grounding (migration 005)
			inspection = r.ID
		}
	}
	inspect := func(day int) {
		t.Helper()
		if r := e.call("POST", "/v1/work-records", tech, map[string]any{"action": "inspect", "rule_id": inspection,
			"airframe_id": a.ID, "at": at(day).Add(-time.Hour), "work": "periodic inspection, no findings",
			"performed_by": "R. Castell"}); r.Status != 201 {
			t.Fatalf("inspection on day %d: %d %s", day, r.Status, r.Body)
		}
	}

	// A flight a week for a year, 3-minute logs at 10 Hz; no take-off falls
	// within a day of a limit or an inspection, so the seconds a simulated
	// take-off moves do not matter.
	var days []int
	for d := 0; d <= 364; d += 7 {
		days = append(days, d)
	}
	logs := map[int][]byte{}
	for i, d := range days {
		spec := sim.DefaultSpec(uint64(100 + i))
		spec.Airframe, spec.Start, spec.DurationS, spec.SampleHz = code, at(d), 180, 10
		spec.Packs = []sim.PackState{packs[i%len(packs)]}
		spec.Packs[0].Cycles = float64(i/len(packs)) * 0.4
		logs[d], _ = genLog(t, spec)
	}
	// The inspection on day 102 is on record from the start; the one on day
	// 160 is entered late. Never inspected before day 102, the airframe is
	// overdue from day 90 (90 days after its first flight) to day 102; from
	// day 160 it is overdue again from day 250 on, and still is today: the
	// uploads back-fill flights of an airframe that is not ready now.
	inspect(102)
	order := slices.Clone(days)
	rand.New(rand.NewPCG(8, 2026)).Shuffle(len(order), func(i, j int) { order[i], order[j] = order[j], order[i] })
	// The earliest flight arrives among the last uploads.
	i0 := slices.Index(order, 0)
	order[i0], order[len(order)-2] = order[len(order)-2], order[i0]
	for n, d := range order {
		if n == len(order)/2 {
			inspect(160)
		}
		r := e.upload(map[string]any{"pilot": "test pilot"}, logs[d], fleet.RolePilot)
		if r.Status != 201 {
			t.Fatalf("upload of day %d: %d %s", d, r.Status, r.Body)
		}
	}

	overdue := map[int]bool{}
	for _, d := range days {
		overdue[d] = d == 91 || d == 98 || d >= 252
	}
	var flights []takeoffVerdict
	for cursor := ""; ; {
		var page struct {
			Items      []takeoffVerdict `json:"items"`
			NextCursor string           `json:"next_cursor"`
		}
		e.call("GET", "/v1/flights?limit=50&airframe_id="+a.ID+"&cursor="+cursor, fleet.RoleViewer, nil).decode(t, &page)
		flights = append(flights, page.Items...)
		if cursor = page.NextCursor; cursor == "" {
			break
		}
	}
	if len(flights) != len(days) {
		t.Fatalf("%d flights recorded, want %d", len(flights), len(days))
	}
	flagged := 0
	for _, f := range flights {
		day := int(f.TakeoffAt.Sub(day0).Hours() / 24)
		var d takeoffVerdict
		e.call("GET", "/v1/flights/"+f.ID, fleet.RoleViewer, nil).decode(t, &d)
		rd := d.ReadinessAtTakeoff
		if rd == nil {
			t.Fatalf("day %d: no verdict", day)
		}
		nfr := 0
		for _, ev := range d.Events {
			if ev.Kind == fleet.EventFlownNotReady {
				nfr++
			}
		}
		want := overdue[day]
		var codes []string
		for _, b := range rd.Blockers {
			codes = append(codes, b.Code)
		}
		if rd.Ready == want || nfr != map[bool]int{true: 1, false: 0}[want] ||
			(want && !slices.Equal(codes, []string{fleet.ReadyOverdueGrounding})) {
			t.Errorf("day %d: ready %v, blockers %v, %d flown_not_ready events; want overdue %v", day, rd.Ready, codes, nfr, want)
		}
		if want && (len(d.Warnings) == 0 || d.Warnings[0].Code != fleet.ReadyOverdueGrounding) {
			t.Errorf("day %d: warnings %v, want the blocker first", day, d.Warnings)
		}
		if nfr == 1 {
			flagged++
		}
		// readiness?at= the take-off, with the flight's packs, agrees.
		var ids []string
		for _, p := range d.Packs {
			ids = append(ids, p.PartID)
		}
		q := url.Values{"at": {f.TakeoffAt.Format(time.RFC3339Nano)}, "packs": {strings.Join(ids, ",")}}
		var asOf struct {
			Ready    bool                    `json:"ready"`
			Blockers []struct{ Code string } `json:"blockers"`
		}
		e.call("GET", "/v1/airframes/"+a.ID+"/readiness?"+q.Encode(), fleet.RoleViewer, nil).decode(t, &asOf)
		var asOfCodes []string
		for _, b := range asOf.Blockers {
			asOfCodes = append(asOfCodes, b.Code)
		}
		if asOf.Ready != rd.Ready || !slices.Equal(asOfCodes, codes) {
			t.Errorf("day %d: readiness?at= says ready %v %v, the flight's verdict %v %v", day, asOf.Ready, asOfCodes, rd.Ready, codes)
		}
	}
	var open struct {
		Items []struct{ ID string } `json:"items"`
	}
	e.call("GET", "/v1/events?limit=500&kind=flown_not_ready&airframe_id="+a.ID, fleet.RoleViewer, nil).decode(t, &open)
	want := 0
	for _, o := range overdue {
		if o {
			want++
		}
	}
	if flagged != want || len(open.Items) != want {
		t.Errorf("%d flights flagged, %d flown_not_ready events; want %d", flagged, len(open.Items), want)
	}
	// The late inspection and the late first flight re-judged flights
	// recorded before them: revised verdicts are in the audit log, and
	// flown_not_ready events opened before the inspection was on record
	// were withdrawn.
	var revisions, eventRows struct {
		Items []struct {
			Before map[string]any `json:"before"`
			After  map[string]any `json:"after"`
		} `json:"items"`
	}
	e.call("GET", "/v1/audit?limit=500&entity=flight_readiness", admin, nil).decode(t, &revisions)
	e.call("GET", "/v1/audit?limit=500&entity=event", admin, nil).decode(t, &eventRows)
	withdrawn := 0
	for _, r := range eventRows.Items {
		if r.Before != nil && r.After == nil {
			withdrawn++
		}
	}
	if len(revisions.Items) == 0 || withdrawn == 0 {
		t.Errorf("%d verdict revisions, %d events withdrawn: the late records re-judged nothing", len(revisions.Items), withdrawn)
	}
	t.Logf("%d flights back-filled out of order, %d flown not ready; %d verdicts revised, %d flown_not_ready events withdrawn",
		len(flights), flagged, len(revisions.Items), withdrawn)
}
