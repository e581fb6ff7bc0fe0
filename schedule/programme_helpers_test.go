package schedule_test

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"sync/atomic"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// bench is a programme on a fresh database with a fixed clock and helpers to
// build a small fleet. The clock is the wall clock at the start, truncated to
// the second, so that records dated before it pass the store's future check.
type bench struct {
	t   *testing.T
	ctx context.Context
	db  *store.DB
	hs  *health.Service
	p   *schedule.Programme
	now time.Time
	n   *atomic.Int64
}

// newBench starts a parallel test on its own database. With defaults false
// the migration's default programme is disabled, so only the test's rules
// apply.
func newBench(t *testing.T, defaults bool) *bench {
	t.Parallel()
	db := store.New(pgtest.NewPool(t))
	now := time.Now().UTC().Truncate(time.Second)
	hs := health.New(db)
	hs.Now = func() time.Time { return now }
	p := schedule.NewProgramme(db, hs)
	p.Now = func() time.Time { return now }
	b := &bench{t: t, ctx: store.WithActor(context.Background(), store.Actor{Name: "test"}), db: db, hs: hs, p: p,
		now: now, n: new(atomic.Int64)}
	if !defaults {
		rules, err := db.Rules(b.ctx)
		if err != nil {
			t.Fatal(err)
		}
		for _, r := range rules {
			if _, err := db.UpdateRule(b.ctx, r.ID, r.Version, func(r *fleet.ServiceRule) error {
				r.Enabled = false
				return nil
			}); err != nil {
				t.Fatal(err)
			}
		}
	}
	return b
}

// sub returns the bench bound to a subtest (same database).
func (b *bench) sub(t *testing.T) *bench {
	c := *b
	c.t = t
	return &c
}

// ago is the moment d before the bench's clock.
func (b *bench) ago(d time.Duration) time.Time { return b.now.Add(-d) }

const day = 24 * time.Hour

func fp(v float64) *float64 { return &v }
func ip(v int) *int         { return &v }
func sp(v string) *string   { return &v }

// rule creates a rule; name, action and warn_at default when empty.
func (b *bench) rule(r fleet.ServiceRule) *fleet.ServiceRule {
	b.t.Helper()
	if r.Name == "" {
		r.Name = fmt.Sprintf("rule %d", b.n.Add(1))
	}
	if r.Action == "" {
		r.Action = "inspect"
	}
	if r.WarnAt == 0 {
		r.WarnAt = 0.9
	}
	r.Enabled = true
	out, err := b.db.CreateRule(b.ctx, &r)
	if err != nil {
		b.t.Fatalf("create rule %q: %v", r.Name, err)
	}
	return out
}

// airframe registers a 4S quad-x of the given model.
func (b *bench) airframe(code, model string) *fleet.Airframe {
	b.t.Helper()
	d, empty := 254.0, 1000.0
	a, err := b.db.CreateAirframe(b.ctx, &fleet.Airframe{Code: code, Model: model, Layout: "quad-x", CellsS: 4,
		PacksPerFlight: 1, RotorDiameterMM: &d, EmptyMassG: &empty})
	if err != nil {
		b.t.Fatalf("create airframe %s: %v", code, err)
	}
	return a
}

func (b *bench) part(kind fleet.PartKind, pn, status string, specs any) *fleet.Part {
	b.t.Helper()
	raw, _ := json.Marshal(specs)
	p := &fleet.Part{Kind: kind, Serial: fmt.Sprintf("%s-%03d", kind, b.n.Add(1)), PartNumber: pn, Status: status, Specs: raw}
	if status == fleet.PartRetired {
		p.RetiredReason = sp("end of life")
	}
	out, err := b.db.CreatePart(b.ctx, p)
	if err != nil {
		b.t.Fatalf("create %s: %v", kind, err)
	}
	return out
}

// motor is a motor with a bearing dynamic rating (0: none).
func (b *bench) motor(rot fleet.Rotation, pn string, ratingN float64) *fleet.Part {
	specs := map[string]any{"rotation": rot}
	if ratingN > 0 {
		specs["bearing"] = map[string]any{"count": 2, "dynamic_rating_n": ratingN}
	}
	return b.part(fleet.KindMotor, pn, "", specs)
}

func (b *bench) prop(rot fleet.Rotation, pn string) *fleet.Part {
	return b.part(fleet.KindPropeller, pn, "", map[string]any{"rotation": rot, "diameter_in": 10, "blades": 2})
}

// pack is a LiPo pack of cells in series, 8000 mAh, 16 mOhm baseline.
func (b *bench) pack(cells int, status string) *fleet.Part {
	return b.part(fleet.KindPack, "PK-8000", status, map[string]any{"chemistry": "lipo", "cells_s": cells,
		"cells_p": 1, "rated_mah": 8000, "baseline_ir_mohm": 16})
}

func (b *bench) fit(a *fleet.Airframe, p *fleet.Part, pos string, at time.Time) {
	b.t.Helper()
	if _, err := b.db.Fit(b.ctx, a.ID, store.FitRequest{PartID: p.ID, Position: pos, At: at}); err != nil {
		b.t.Fatalf("fit %s at %s: %v", p.Serial, pos, err)
	}
}

// quadRotations are quad-x's rotations m1..m4 (migration 001).
var quadRotations = []fleet.Rotation{fleet.CCW, fleet.CW, fleet.CCW, fleet.CW}

// fullQuad fits four motors and four propellers of the right rotations at at.
func (b *bench) fullQuad(a *fleet.Airframe, at time.Time, motorRating float64, propPN string) (motors, props []*fleet.Part) {
	b.t.Helper()
	for i, rot := range quadRotations {
		m := b.motor(rot, "MT-2814", motorRating)
		pr := b.prop(rot, propPN)
		b.fit(a, m, fmt.Sprintf("m%d", i+1), at)
		b.fit(a, pr, fmt.Sprintf("m%d", i+1), at)
		motors, props = append(motors, m), append(props, pr)
	}
	return motors, props
}

// flight records a manual flight (no log) taking off at at.
func (b *bench) flight(a *fleet.Airframe, at time.Time, d time.Duration, packs ...*fleet.Part) *fleet.Flight {
	b.t.Helper()
	f := &fleet.Flight{AirframeID: a.ID, Pilot: "T. Adeyemi", TakeoffAt: at, LandingAt: at.Add(d)}
	for _, p := range packs {
		f.Packs = append(f.Packs, fleet.FlightPack{PartID: p.ID})
	}
	out, err := b.db.CreateFlight(b.ctx, f)
	if err != nil {
		b.t.Fatalf("flight at %s: %v", at, err)
	}
	return out
}

// spec is the simulator's default flight (seed) of the airframe with the
// pack, taking off at at, logged at hz for durS seconds.
func (b *bench) spec(a *fleet.Airframe, pk *fleet.Part, seed uint64, at time.Time, hz, durS float64) sim.FlightSpec {
	s := sim.DefaultSpec(seed)
	s.Airframe, s.Start = a.Code, at
	s.SampleHz, s.DurationS = hz, durS
	s.Packs[0].Serial = pk.Serial
	return s
}

// logged ingests one simulated flight (health refreshed) and returns the
// simulator's truth.
func (b *bench) logged(a *fleet.Airframe, pk *fleet.Part, spec sim.FlightSpec) sim.Truth {
	b.t.Helper()
	var buf bytes.Buffer
	truth, err := sim.Generate(spec, &buf)
	if err != nil {
		b.t.Fatal(err)
	}
	mass := spec.MassKg * 1000
	in := ingest.Ingester{DB: b.db, Health: b.hs}
	res, err := in.Ingest(b.ctx, ingest.Request{Flight: fleet.Flight{AirframeID: a.ID, Pilot: "test",
		TakeoffMassG: &mass, Packs: []fleet.FlightPack{{PartID: pk.ID, Slot: 1}}}, Log: buf.Bytes()})
	if err != nil {
		b.t.Fatal(err)
	}
	if res.HealthErr != nil {
		b.t.Fatal(res.HealthErr)
	}
	return truth
}

func (b *bench) event(kind string, airframe *fleet.Airframe, part *fleet.Part, at time.Time) *fleet.Event {
	b.t.Helper()
	e := &fleet.Event{Kind: kind, At: at, Detail: "reported by the pilot"}
	if airframe != nil {
		e.AirframeID = &airframe.ID
	}
	if part != nil {
		e.PartID = &part.ID
	}
	out, err := b.db.CreateEvent(b.ctx, e)
	if err != nil {
		b.t.Fatal(err)
	}
	return out
}

func (b *bench) work(w fleet.WorkRecord) *fleet.WorkRecord {
	b.t.Helper()
	if w.Work == "" {
		w.Work = "done per the programme"
	}
	w.PerformedBy = "K. Lindqvist"
	out, err := b.db.CreateWorkRecord(b.ctx, &w)
	if err != nil {
		b.t.Fatalf("work record: %v", err)
	}
	return out
}

// recompute rewrites the airframe's due list (with the packs given).
func (b *bench) recompute(a *fleet.Airframe, packs ...*fleet.Part) {
	b.t.Helper()
	ids := []string{}
	for _, p := range packs {
		ids = append(ids, p.ID)
	}
	if _, err := b.p.RecomputeAirframe(b.ctx, a.ID, ids); err != nil {
		b.t.Fatal(err)
	}
}

// item returns the stored due item of a rule on a subject.
func (b *bench) item(r *fleet.ServiceRule, subjectID string) *fleet.DueItem {
	b.t.Helper()
	items, err := b.db.DueItems(b.ctx, store.DueFilter{SubjectID: subjectID})
	if err != nil {
		b.t.Fatal(err)
	}
	for _, it := range items {
		if it.RuleID != nil && *it.RuleID == r.ID {
			return it
		}
	}
	b.t.Fatalf("no due item of rule %q on %s (items %d)", r.Name, subjectID, len(items))
	return nil
}

// usage returns one limit's usage of an item.
func (b *bench) usage(it *fleet.DueItem, limit string) fleet.LimitUsage {
	b.t.Helper()
	for _, u := range it.Usage {
		if u.Limit == limit {
			return u
		}
	}
	b.t.Fatalf("item %s/%s has no %s limit: %+v", it.RuleName, it.Subject, limit, it.Usage)
	return fleet.LimitUsage{}
}

// wantStatus fails unless the item has the status.
func (b *bench) wantStatus(it *fleet.DueItem, status string) {
	b.t.Helper()
	if it.Status != status {
		b.t.Errorf("%s on %s: status %s (fraction %.6g, %s), want %s", it.RuleName, it.Subject, it.Status, it.Fraction,
			it.Reason, status)
	}
}

// near fails unless got is within rel (relative) of want.
func near(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.Abs(got-want) > rel*math.Abs(want) {
		t.Errorf("%s = %.9g, want %.9g (tolerance %.2g relative)", what, got, want, rel)
	}
}

// decode unmarshals a stored view.
func decode[T any](t *testing.T, raw []byte) *T {
	t.Helper()
	var v T
	if err := json.Unmarshal(raw, &v); err != nil {
		t.Fatal(err)
	}
	return &v
}

// transition is one Notify call.
type transition struct{ from, to, rule, subject string }
