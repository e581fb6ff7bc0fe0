package main

import (
	"context"
	"encoding/json"
	"net/url"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// The demo on a given database: the firm is loaded once, the admin token
// works, and its planted stories (DESIGN section 11) show where a technician
// would look: the due list, readiness, health, work records and the trace.
func TestDemoEndToEnd(t *testing.T) {
	t.Parallel()
	// The walk reads as fast as it can with one key from one address: no
	// rate limits here (they have tests of their own in api).
	app, addr, _ := startApp(t, Config{DatabaseURL: pgtest.NewDB(t), Limits: api.Limits{RatePerKey: -1, RatePerAddr: -1}})
	token, err := runDemo(context.Background(), app, 2)
	if err != nil {
		t.Fatal(err)
	}
	var list struct {
		Items []struct{ Code string } `json:"items"`
	}
	if s := get(t, "http://"+addr+"/v1/airframes?limit=100", token, &list); s != 200 || len(list.Items) < 10 {
		t.Fatalf("airframes: %d, %d items", s, len(list.Items))
	}
	// Loading again is a no-op: still the same airframes.
	if _, err := runDemo(context.Background(), app, 2); err != nil {
		t.Fatal(err)
	}
	n := len(list.Items)
	get(t, "http://"+addr+"/v1/airframes?limit=100", token, &list)
	if len(list.Items) != n {
		t.Fatalf("second demo run changed the fleet: %d -> %d airframes", n, len(list.Items))
	}
	if s := get(t, "http://"+addr+"/readyz", "", nil); s != 200 {
		t.Fatalf("readyz %d", s)
	}
	if s := get(t, "http://"+addr+"/v1/airframes", "", nil); s != 401 {
		t.Fatalf("no token: %d", s)
	}
	// The same arguments as runDemo: the same scenario.
	end := time.Now().UTC().Truncate(24 * time.Hour)
	sc := sim.DemoFleet(demoSeed, end.AddDate(0, -2, 0), 2)
	st := sc.Stories
	base := "http://" + addr
	getJSON := func(path string, v any) {
		t.Helper()
		if s := get(t, base+path, token, v); s != 200 {
			t.Fatalf("GET %s: %d", path, s)
		}
	}
	partID := func(serial string) string {
		var l struct {
			Items []struct{ ID string } `json:"items"`
		}
		getJSON("/v1/parts?serial="+url.QueryEscape(serial), &l)
		if len(l.Items) != 1 {
			t.Fatalf("part %s: %d found", serial, len(l.Items))
		}
		return l.Items[0].ID
	}
	airframeID := func(code string) string {
		var l struct {
			Items []struct{ ID, Code string } `json:"items"`
		}
		getJSON("/v1/airframes?limit=100", &l)
		for _, a := range l.Items {
			if a.Code == code {
				return a.ID
			}
		}
		t.Fatalf("no airframe %s", code)
		return ""
	}
	var due struct {
		Items []struct {
			RuleName string `json:"rule_name"`
			Subject  string `json:"subject"`
			Status   string `json:"status"`
		} `json:"items"`
	}
	getJSON("/v1/due?status=overdue", &due)
	overdue := map[string]string{}
	for _, d := range due.Items {
		overdue[d.Subject] = d.RuleName
	}
	strikeProp := sc.Events[st.PropStrikeEvent].PartSerial
	hardAF := sc.Flights[st.HardLandingFlight].Airframe
	if overdue[strikeProp] != "propeller replacement" {
		t.Errorf("struck propeller %s not overdue for replacement; overdue: %v", strikeProp, overdue)
	}
	if overdue[hardAF] != "inspection after hard landing or crash" {
		t.Errorf("hard landing on %s not awaiting inspection; overdue: %v", hardAF, overdue)
	}
	if len(overdue) != 2 {
		t.Errorf("overdue items %v: want only the two stories", overdue)
	}
	// One airframe's periodic inspection is due soon (the README's walk
	// asks the due list for due_soon items and must find one).
	getJSON("/v1/due?status=due_soon", &due)
	soon := false
	for _, d := range due.Items {
		soon = soon || (d.RuleName == "airframe periodic inspection" && d.Status == "due_soon")
	}
	if !soon {
		t.Errorf("no periodic inspection due soon on the demo; due_soon items: %+v", due.Items)
	}
	// The demo firm keeps its programme: no flight took off not ready.
	var fnr struct {
		Items []struct{ Detail string } `json:"items"`
	}
	if getJSON("/v1/events?kind=flown_not_ready", &fnr); len(fnr.Items) != 0 {
		t.Errorf("%d demo flights flown not ready, e.g. %s", len(fnr.Items), fnr.Items[0].Detail)
	}
	var rd struct {
		Ready    bool                    `json:"ready"`
		Blockers []struct{ Code string } `json:"blockers"`
		Warnings []struct{ Code string } `json:"warnings"`
	}
	getJSON("/v1/airframes/"+airframeID(hardAF)+"/readiness", &rd)
	codes := map[string]bool{}
	for _, b := range rd.Blockers {
		codes[b.Code] = true
	}
	if rd.Ready || !codes["unresolved_event"] || !codes["overdue_grounding_rule"] {
		t.Errorf("%s readiness %+v: want unresolved_event and overdue_grounding_rule", hardAF, rd)
	}
	// The pack charged full and left: a storage warning when a pilot picks it.
	getJSON("/v1/airframes/"+airframeID(st.HardDutyAirframe)+"/readiness?packs="+partID(st.StoragePack), &rd)
	flagged := false
	for _, w := range rd.Warnings {
		flagged = flagged || w.Code == "pack_flagged"
	}
	if !flagged {
		t.Errorf("storage pack %s raises no warning: %+v", st.StoragePack, rd)
	}
	// The hard-worked motor has used the most bearing life on its airframe.
	type motorHealth struct {
		Motor struct {
			ConsumedFraction float64 `json:"consumed_fraction"`
		} `json:"motor"`
	}
	var hard motorHealth
	getJSON("/v1/parts/"+partID(st.HardDutyMotor)+"/health", &hard)
	for _, f := range sc.Fits {
		if f.Airframe != st.HardDutyAirframe || !f.To.IsZero() || f.Serial == st.HardDutyMotor {
			continue
		}
		var p struct {
			Items []struct{ ID, Kind string } `json:"items"`
		}
		getJSON("/v1/parts?serial="+url.QueryEscape(f.Serial), &p)
		if len(p.Items) != 1 || p.Items[0].Kind != "motor" {
			continue
		}
		var other motorHealth
		getJSON("/v1/parts/"+p.Items[0].ID+"/health", &other)
		if other.Motor.ConsumedFraction >= hard.Motor.ConsumedFraction {
			t.Errorf("motor %s used %.3g of its bearing life, the hard-duty %s only %.3g",
				f.Serial, other.Motor.ConsumedFraction, st.HardDutyMotor, hard.Motor.ConsumedFraction)
		}
	}
	// The pack whose resistance climbs shows the rise.
	var climb struct {
		Pack struct {
			Resistance *struct {
				RisePct float64 `json:"rise_pct"`
			} `json:"resistance"`
		} `json:"pack"`
	}
	getJSON("/v1/parts/"+partID(st.ClimbingPack)+"/health", &climb)
	if climb.Pack.Resistance == nil || climb.Pack.Resistance.RisePct < 10 {
		t.Errorf("climbing pack %s resistance %+v, want a rise over 10 %%", st.ClimbingPack, climb.Pack.Resistance)
	}
	// The supplier lot is found across airframes and jobs.
	var tr struct {
		Flights []struct {
			AirframeCode string `json:"airframe_code"`
		} `json:"flights"`
		Jobs []json.RawMessage `json:"jobs"`
	}
	getJSON("/v1/trace?lot="+url.QueryEscape(st.TraceLot), &tr)
	seen := map[string]bool{}
	for _, f := range tr.Flights {
		seen[f.AirframeCode] = true
	}
	for _, a := range st.TraceAirframes {
		if !seen[a] {
			t.Errorf("lot %s trace misses airframe %s (saw %v)", st.TraceLot, a, seen)
		}
	}
	if len(tr.Jobs) < 2 {
		t.Errorf("lot %s across %d jobs, want several", st.TraceLot, len(tr.Jobs))
	}
	// The motor swap was made by its work record.
	var wr struct {
		Items []struct {
			Action       string  `json:"action"`
			FittedPartID *string `json:"fitted_part_id"`
		} `json:"items"`
	}
	getJSON("/v1/work-records?part_id="+partID(st.SwapRemoved), &wr)
	if len(wr.Items) != 1 || wr.Items[0].Action != "replace" || wr.Items[0].FittedPartID == nil || *wr.Items[0].FittedPartID != partID(st.SwapFitted) {
		t.Errorf("swap work record %+v", wr.Items)
	}
}
