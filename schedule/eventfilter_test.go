package schedule_test

import (
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// Every combination of the event list's filters selects what it says from
// all events, in id order, page by page: the statement is now written per
// combination (store.eventsQuery), not as one catch-all.
func TestEventFiltersSelectFromAllEvents(t *testing.T) {
	b := newBench(t, false)
	x, y := b.airframe("EF-X", "EF"), b.airframe("EF-Y", "EF")
	_, props := b.fullQuad(x, b.ago(60*day), 2000, "PR-10")
	pk := b.pack(4, "")
	fl := b.flight(x, b.ago(20*day), 20*time.Minute, pk)
	var mine []*fleet.Event
	for i, e := range []struct {
		kind     string
		af       *fleet.Airframe
		part     *fleet.Part
		resolved bool
	}{
		{"hard_landing", x, nil, false}, {"overtemp", x, props[0], true}, {"prop_strike", x, props[1], false},
		{"pack_swelling", nil, pk, false}, {"note", y, nil, true}, {"hard_landing", y, nil, false}, {"note", nil, props[0], false},
		{"overtemp", x, nil, false}, {"note", x, props[0], true},
	} {
		ev := b.event(e.kind, e.af, e.part, b.ago(time.Duration(15-i)*day))
		if e.resolved {
			yes, why := true, "inspected, nothing found"
			var err error
			if ev, err = b.db.UpdateEvent(b.ctx, ev.ID, ev.Version, store.EventPatch{Resolved: &yes, Resolution: &why}); err != nil {
				t.Fatal(err)
			}
		}
		mine = append(mine, ev)
	}
	// One event of the flight, as ingest opens them.
	ev, err := b.db.CreateEvent(b.ctx, &fleet.Event{Kind: "overtemp", At: fl.TakeoffAt, AirframeID: &x.ID, FlightID: &fl.ID,
		Detail: "motor temperature over its limit"})
	if err != nil {
		t.Fatal(err)
	}
	mine = append(mine, ev)
	all, _, err := b.db.Events(b.ctx, store.EventFilter{}, store.Page{Limit: store.MaxPageSize})
	if err != nil {
		t.Fatal(err)
	}
	if len(all) < len(mine) {
		t.Fatalf("%d events listed, %d recorded", len(all), len(mine))
	}
	yes, no := true, false
	for _, af := range []string{"", x.ID, y.ID} {
		for _, part := range []string{"", props[0].ID, pk.ID} {
			for _, flight := range []string{"", fl.ID} {
				for _, kind := range []string{"", "hard_landing", "overtemp", "note"} {
					for _, open := range []*bool{nil, &yes, &no} {
						f := store.EventFilter{AirframeID: af, PartID: part, FlightID: flight, Kind: kind, Open: open}
						var want []string
						for _, e := range all {
							if (af == "" || (e.AirframeID != nil && *e.AirframeID == af)) &&
								(part == "" || (e.PartID != nil && *e.PartID == part)) &&
								(flight == "" || (e.FlightID != nil && *e.FlightID == flight)) &&
								(kind == "" || e.Kind == kind) && (open == nil || (e.ResolvedAt == nil) == *open) {
								want = append(want, e.ID)
							}
						}
						// Pages of two, following the cursor.
						var got []string
						p := store.Page{Limit: 2}
						for range 20 {
							list, next, err := b.db.Events(b.ctx, f, p)
							if err != nil {
								t.Fatalf("%+v: %v", f, err)
							}
							for _, e := range list {
								got = append(got, e.ID)
							}
							if next == "" {
								break
							}
							p.Cursor = next
						}
						if !slices.Equal(got, want) {
							t.Errorf("filter %+v: %d events %v, want %d %v", f, len(got), got, len(want), want)
						}
					}
				}
			}
		}
	}
}
