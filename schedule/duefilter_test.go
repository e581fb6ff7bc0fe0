package schedule_test

import (
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// Every combination of the due list's filters selects what the filter says
// from the whole list, in the whole list's order: the list's statement is
// now written per combination (store.dueItemsQuery), not as one catch-all.
func TestDueFiltersSelectFromTheWholeList(t *testing.T) {
	b := newBench(t, false)
	x, y := b.airframe("DF-X", "DF"), b.airframe("DF-Y", "DF")
	xMotors, _ := b.fullQuad(x, b.ago(60*day), 2000, "PR-10")
	b.fullQuad(y, b.ago(60*day), 2000, "PR-10")
	pk := b.pack(4, "")
	b.rule(fleet.ServiceRule{AppliesTo: "motor", Flights: ip(6), Days: ip(90)})
	b.rule(fleet.ServiceRule{AppliesTo: "airframe", Flights: ip(9)})
	b.rule(fleet.ServiceRule{AppliesTo: "pack", Flights: ip(20)})
	for i := range 8 {
		b.flight(x, b.ago(time.Duration(30-3*i)*day), 20*time.Minute, pk)
		if i%2 == 0 {
			b.flight(y, b.ago(time.Duration(29-3*i)*day), 20*time.Minute)
		}
	}
	if _, err := b.p.RecomputeFleet(b.ctx); err != nil {
		t.Fatal(err)
	}
	all, err := b.db.DueItems(b.ctx, store.DueFilter{})
	if err != nil {
		t.Fatal(err)
	}
	statuses := map[string]int{}
	for _, it := range all {
		statuses[it.Status]++
	}
	if len(all) < 10 || statuses[fleet.DueOverdue] == 0 || statuses[fleet.DueSoon]+statuses[fleet.DueOK] == 0 {
		t.Fatalf("the fleet's list is too plain to test the filters: %d items, %v", len(all), statuses)
	}
	soon := b.now.Add(60 * day)
	for _, status := range []string{"", fleet.DueOverdue, fleet.DueSoon, fleet.DueOK} {
		for _, af := range []string{"", x.ID} {
			for _, before := range []*time.Time{nil, &soon} {
				for _, subject := range []string{"", xMotors[0].ID, pk.ID} {
					f := store.DueFilter{Status: status, AirframeID: af, Before: before, SubjectID: subject}
					got, err := b.db.DueItems(b.ctx, f)
					if err != nil {
						t.Fatalf("%+v: %v", f, err)
					}
					var want []*fleet.DueItem
					for _, it := range all {
						if (status == "" || it.Status == status) && (af == "" || (it.AirframeID != nil && *it.AirframeID == af)) &&
							(before == nil || it.Status == fleet.DueOverdue || (it.ForecastDate != nil && it.ForecastDate.Before(*before))) &&
							(subject == "" || it.SubjectID == subject) {
							want = append(want, it)
						}
					}
					key := func(it *fleet.DueItem) string { return it.SubjectID + "/" + it.RuleName }
					if !slices.Equal(mapKeys(got, key), mapKeys(want, key)) {
						t.Errorf("filter %+v: %v, want %v", f, mapKeys(got, key), mapKeys(want, key))
					}
				}
			}
		}
	}
}

func mapKeys[T any](xs []T, key func(T) string) []string {
	out := make([]string, len(xs))
	for i, x := range xs {
		out[i] = key(x)
	}
	return out
}
