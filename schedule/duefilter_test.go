package schedule_test

import (
	"fmt"
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

// A readiness answer reads of the due list the items it weighs: a service
// rule's items that are overdue or due soon, of the airframe and of each
// named pack, in the list's order, with their rule, subject, status,
// grounding and reason as the whole list has them (store.ReadinessNow reads
// them with a statement of their own, readinessDueSQL).
func TestReadinessReadsTheDueItemsItWeighs(t *testing.T) {
	b := newBench(t, false)
	x := b.airframe("RD-X", "model-RD")
	b.fullQuad(x, b.ago(60*day), 2000, "PR-11")
	pk := b.pack(4, "")
	b.rule(fleet.ServiceRule{AppliesTo: "motor", Flights: ip(6), Days: ip(90)})
	b.rule(fleet.ServiceRule{AppliesTo: "motor", Flights: ip(40), Grounding: true})
	b.rule(fleet.ServiceRule{AppliesTo: "airframe", Flights: ip(9)})
	b.rule(fleet.ServiceRule{AppliesTo: "airframe", Flights: ip(10), WarnAt: 0.5})
	b.rule(fleet.ServiceRule{AppliesTo: "pack", Flights: ip(8), Grounding: true})
	b.rule(fleet.ServiceRule{AppliesTo: "pack", Flights: ip(12), WarnAt: 0.5})
	b.rule(fleet.ServiceRule{AppliesTo: "pack", Flights: ip(100)})
	due := b.ago(-10 * day).Format(time.DateOnly)
	b.notice(fleet.Notice{Reference: "AD-RD-1", IssuedOn: b.ago(30 * day).Format(time.DateOnly), Category: fleet.NoticeMandatory,
		Applicability: fleet.NoticeApplicability{AirframeModels: []string{"model-RD"}}, Window: fleet.NoticeWindow{DueOn: &due}})
	for i := range 8 {
		b.flight(x, b.ago(time.Duration(30-3*i)*day), 20*time.Minute, pk)
	}
	if _, err := b.p.RecomputeFleet(b.ctx); err != nil {
		t.Fatal(err)
	}
	all, err := b.db.DueItems(b.ctx, store.DueFilter{})
	if err != nil {
		t.Fatal(err)
	}
	statuses, notices := map[string]int{}, 0
	for _, it := range all {
		statuses[it.Status]++
		if it.NoticeID != nil {
			notices++
		}
	}
	if statuses[fleet.DueOverdue] == 0 || statuses[fleet.DueSoon] == 0 || statuses[fleet.DueOK] == 0 || notices == 0 {
		t.Fatalf("the list is too plain to test: %v, %d notice items", statuses, notices)
	}
	rn, err := b.db.ReadinessNow(b.ctx, x.ID, b.now, []string{pk.ID})
	if err != nil {
		t.Fatal(err)
	}
	weighs := func(it *fleet.DueItem) string {
		return fmt.Sprintf("%s|%s|%s|%v|%s", it.RuleName, it.Subject, it.Status, it.Grounding, it.Reason)
	}
	for _, c := range []struct {
		name string
		got  []*fleet.DueItem
		of   func(*fleet.DueItem) bool
	}{
		{"airframe", rn.Due, func(it *fleet.DueItem) bool { return it.AirframeID != nil && *it.AirframeID == x.ID }},
		{"pack", rn.Packs[pk.ID].Due, func(it *fleet.DueItem) bool { return it.SubjectID == pk.ID }},
	} {
		var want []*fleet.DueItem
		for _, it := range all {
			if c.of(it) && it.RuleID != nil && (it.Status == fleet.DueOverdue || it.Status == fleet.DueSoon) {
				want = append(want, it)
			}
		}
		if len(want) == 0 {
			t.Fatalf("%s: nothing overdue or due soon to read", c.name)
		}
		if !slices.Equal(mapKeys(c.got, weighs), mapKeys(want, weighs)) {
			t.Errorf("%s: read %v, want %v", c.name, mapKeys(c.got, weighs), mapKeys(want, weighs))
		}
	}
}
