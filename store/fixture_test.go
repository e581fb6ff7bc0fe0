package store_test

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// fixture is a store on a fresh database with helpers to build a fleet.
type fixture struct {
	t   *testing.T
	ctx context.Context
	db  *store.DB
	n   int
}

func newFixture(t *testing.T) *fixture {
	t.Parallel()
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test", Method: "TEST"})
	return &fixture{t: t, ctx: ctx, db: store.New(pgtest.NewPool(t))}
}

func (f *fixture) airframe(code, layout string) *fleet.Airframe {
	f.t.Helper()
	a, err := f.db.CreateAirframe(f.ctx, &fleet.Airframe{Code: code, Layout: layout, CellsS: 6, PacksPerFlight: 1})
	if err != nil {
		f.t.Fatalf("create airframe %s: %v", code, err)
	}
	return a
}

func (f *fixture) part(kind fleet.PartKind, lot string, specs any) *fleet.Part {
	f.t.Helper()
	f.n++
	raw, _ := json.Marshal(specs)
	p, err := f.db.CreatePart(f.ctx, &fleet.Part{Kind: kind, Serial: fmt.Sprintf("%s-%03d", kind, f.n),
		PartNumber: "PN-" + string(kind), Lot: lot, Specs: raw})
	if err != nil {
		f.t.Fatalf("create %s: %v", kind, err)
	}
	return p
}

func (f *fixture) motor(rot fleet.Rotation, lot string) *fleet.Part {
	return f.part(fleet.KindMotor, lot, map[string]any{"rotation": rot, "kv": 400})
}

func (f *fixture) prop(rot fleet.Rotation) *fleet.Part {
	return f.part(fleet.KindPropeller, "", map[string]any{"rotation": rot, "diameter_in": 15, "blades": 2})
}

func (f *fixture) pack() *fleet.Part {
	return f.part(fleet.KindPack, "", map[string]any{"chemistry": "lipo", "cells_s": 6, "cells_p": 1, "rated_mah": 10000})
}

func (f *fixture) fit(a *fleet.Airframe, p *fleet.Part, pos string, at time.Time) {
	f.t.Helper()
	if _, err := f.db.Fit(f.ctx, a.ID, store.FitRequest{PartID: p.ID, Position: pos, At: at}); err != nil {
		f.t.Fatalf("fit %s at %s: %v", p.Serial, pos, err)
	}
}

// quadMotors fits four motors of the right rotations on a quad-x at t.
func (f *fixture) quadMotors(a *fleet.Airframe, lot string, at time.Time) []*fleet.Part {
	f.t.Helper()
	var out []*fleet.Part
	for i, rot := range []fleet.Rotation{fleet.CCW, fleet.CW, fleet.CCW, fleet.CW} {
		m := f.motor(rot, lot)
		f.fit(a, m, fmt.Sprintf("m%d", i+1), at)
		out = append(out, m)
	}
	return out
}

func (f *fixture) job(code string) *fleet.Job {
	f.t.Helper()
	j, err := f.db.CreateJob(f.ctx, &fleet.Job{Code: code, Client: "Client of " + code})
	if err != nil {
		f.t.Fatal(err)
	}
	return j
}

func (f *fixture) flight(a *fleet.Airframe, j *fleet.Job, at time.Time, minutes int, packs ...*fleet.Part) *fleet.Flight {
	f.t.Helper()
	fl := &fleet.Flight{AirframeID: a.ID, Pilot: "R. Okafor", TakeoffAt: at, LandingAt: at.Add(time.Duration(minutes) * time.Minute)}
	if j != nil {
		fl.JobID = &j.ID
	}
	for _, p := range packs {
		fl.Packs = append(fl.Packs, fleet.FlightPack{PartID: p.ID})
	}
	out, err := f.db.CreateFlight(f.ctx, fl)
	if err != nil {
		f.t.Fatalf("flight at %s: %v", at, err)
	}
	return out
}

// wantCode fails unless err is a fleet error with code and (when given) field.
func wantCode(t *testing.T, err error, code, field string) {
	t.Helper()
	if got := fleet.ErrorCode(err); got != code {
		t.Fatalf("error = %v (code %q), want code %q", err, got, code)
	}
	if field != "" {
		var fe *fleet.Error
		if !errors.As(err, &fe) || fe.Field != field {
			t.Fatalf("error %v does not name field %q", err, field)
		}
	}
}

// base is a fixed past moment all scenarios start from.
var base = time.Date(2026, 3, 2, 8, 0, 0, 0, time.UTC)
