package schedule_test

import (
	"reflect"
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// at asks readiness as of a moment.
func (b *bench) at(a *fleet.Airframe, at time.Time, packs ...*fleet.Part) *fleet.Readiness {
	b.t.Helper()
	ids := []string{}
	for _, p := range packs {
		ids = append(ids, p.ID)
	}
	rd, err := b.p.ReadinessAt(b.ctx, a.ID, ids, at)
	if err != nil {
		b.t.Fatal(err)
	}
	if !rd.At.Equal(at) {
		b.t.Errorf("answer for %v, asked for %v", rd.At, at)
	}
	return rd
}

// Readiness as of past moments, each judged with what stood then: the due
// status recomputed from the flights and work records up to the moment
// (not today's due list), the parts fitted then, the events open then, the
// pack statuses and the holds in force then.
func TestReadinessAtPastMoments(t *testing.T) {
	b := newBench(t, false)
	a := b.airframe("AS-01", "model-as")
	motors, _ := b.fullQuad(a, b.ago(60*day), 0, "PR-AS")
	pk := b.pack(4, "")
	days := b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: &a.Model, Days: ip(30), Grounding: true})
	b.rule(fleet.ServiceRule{AppliesTo: "airframe", Model: &a.Model, Flights: ip(4)}) // non-grounding: warns
	for _, d := range []int{50, 40, 30, 20} {
		b.flight(a, b.ago(time.Duration(d)*day), 20*time.Minute, pk)
	}
	b.work(fleet.WorkRecord{At: b.ago(15 * day), AirframeID: &a.ID, RuleID: &days.ID, Action: "inspect"})
	// A hard landing on day -8, resolved by a work record on day -6.
	hl := b.event("hard_landing", a, nil, b.ago(8*day))
	b.work(fleet.WorkRecord{At: b.ago(6 * day), AirframeID: &a.ID, Action: "inspect", Resolves: []string{hl.ID}})
	// m2's motor out on day -5, a new one in on day -4.
	if _, err := b.db.Remove(b.ctx, a.ID, store.RemovalRequest{PartID: motors[1].ID, At: b.ago(5 * day)}); err != nil {
		t.Fatal(err)
	}
	b.fit(a, b.motor(fleet.CW, "MT-2814", 0), "m2", b.ago(4*day))
	// The pack retired by a work record on day -3.
	b.work(fleet.WorkRecord{At: b.ago(3 * day), PartID: &pk.ID, Action: "retire", Work: "retired: swollen corner"})

	cases := []struct {
		name               string
		at                 time.Duration // before the bench's clock
		blockers, warnings []string
	}{
		{"25 days after the first flight, 2 flights", 25 * day, nil, nil},
		{"31 days after the first flight, 4 flights: days overdue, flights warn", 19 * day, []string{fleet.ReadyOverdueGrounding}, []string{fleet.ReadyOverdue}},
		{"inspected on day -15", 12 * day, nil, []string{fleet.ReadyOverdue}},
		{"hard landing open", 7 * day, []string{fleet.ReadyUnresolvedEvent}, []string{fleet.ReadyOverdue}},
		{"m2 motor out", 4*day + 12*time.Hour, []string{fleet.ReadyEmptyPosition}, []string{fleet.ReadyOverdue}},
		{"pack retired", 2 * day, []string{fleet.ReadyPackRetired}, []string{fleet.ReadyOverdue}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := b.sub(t)
			s.wantCodes(s.at(a, s.ago(c.at), pk), c.blockers, c.warnings)
		})
	}
	// Today's due list says the days rule is fine now (inspected 15 days
	// ago): the past answers above were recomputed, not read from it.
	b.recompute(a, pk)
	if it := b.item(days, a.ID); it.Status != fleet.DueOK {
		t.Errorf("days rule now: %s", it.Status)
	}

	// A hold placed and released: in force between the two records only
	// (a hold takes effect when recorded; the audit log is its history).
	before := time.Now()
	held, err := b.db.UpdateAirframe(b.ctx, a.ID, a.Version, func(x *fleet.Airframe) error {
		x.HoldReason = sp("arm crack")
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	time.Sleep(20 * time.Millisecond)
	during := time.Now()
	time.Sleep(20 * time.Millisecond)
	if _, err := b.db.UpdateAirframe(b.ctx, a.ID, held.Version, func(x *fleet.Airframe) error {
		x.HoldReason = nil
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	after := time.Now()
	for _, c := range []struct {
		at   time.Time
		held bool
	}{{before, false}, {during, true}, {after, false}} {
		got := slices.ContainsFunc(b.at(a, c.at).Blockers, func(it fleet.ReadinessItem) bool { return it.Code == fleet.ReadyAirframeHeld })
		if got != c.held {
			t.Errorf("held at %v: %v, want %v", c.at, got, c.held)
		}
	}
}

// A verdict reads its rules' histories ahead, several at once; the answer
// is the one read history by history as each rule is judged: the default
// programme on a quad with its packs, at moments before, between and after
// its flights, work records and an event.
func TestReadinessAtSameWithHistoriesReadAhead(t *testing.T) {
	b := newBench(t, true)
	a := b.airframe("RA-01", "model-ra")
	b.fullQuad(a, b.ago(90*day), 12000, "PR-RA")
	pk, pk2 := b.pack(4, ""), b.pack(4, "")
	for d := 80; d > 0; d -= 8 {
		b.flight(a, b.ago(time.Duration(d)*day), 25*time.Minute, pk)
	}
	b.flight(a, b.ago(3*day), 18*time.Minute, pk2)
	b.work(fleet.WorkRecord{At: b.ago(30 * day), AirframeID: &a.ID, Action: "inspect"})
	b.event("hard_landing", a, nil, b.ago(20*day))
	for _, d := range []time.Duration{85 * day, 41 * day, 20*day + time.Hour, 2 * day, 0} {
		at := b.ago(d)
		one := *b.p
		one.HistoriesAtOnce = 1
		alone, err := one.ReadinessAt(b.ctx, a.ID, []string{pk.ID, pk2.ID}, at)
		if err != nil {
			t.Fatal(err)
		}
		ahead, err := b.p.ReadinessAt(b.ctx, a.ID, []string{pk.ID, pk2.ID}, at)
		if err != nil {
			t.Fatal(err)
		}
		alone.CheckedAt, ahead.CheckedAt = time.Time{}, time.Time{}
		if !reflect.DeepEqual(alone, ahead) {
			t.Errorf("%v ago: read ahead %+v\nread one by one %+v", d, ahead, alone)
		}
	}
}
