package ingest_test

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"testing"
	"time"

	"github.com/jackc/pgx/v5/pgxpool"
	kgzip "github.com/klauspost/compress/gzip"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// rig is an ingester on a fresh database holding the simulator's airframe
// and pack; its logs are 5-minute simulator flights.
type rig struct {
	t    *testing.T
	ctx  context.Context
	db   *store.DB
	in   *ingest.Ingester
	spec sim.FlightSpec
}

func newRig(t *testing.T) *rig {
	t.Helper()
	return newRigOn(t, pgtest.NewPool(t))
}

// newRigOn is newRig on a pool of the caller's.
func newRigOn(t *testing.T, pool *pgxpool.Pool) *rig {
	t.Helper()
	r := &rig{t: t, ctx: store.WithActor(context.Background(), store.Actor{Name: "test"}), db: store.New(pool)}
	r.in = &ingest.Ingester{DB: r.db}
	r.spec = sim.DefaultSpec(3)
	r.spec.DurationS = 300
	r.spec.Start = time.Now().Add(-48 * time.Hour).UTC().Truncate(time.Second)
	if _, err := r.db.CreateAirframe(r.ctx, &fleet.Airframe{Code: r.spec.Airframe, Layout: "quad-x", CellsS: 4,
		PacksPerFlight: 1}); err != nil {
		t.Fatal(err)
	}
	pk := r.spec.Packs[0]
	specs, _ := json.Marshal(map[string]any{"chemistry": "lipo", "cells_s": pk.CellsS, "cells_p": pk.CellsP, "rated_mah": pk.RatedMah})
	if _, err := r.db.CreatePart(r.ctx, &fleet.Part{Kind: fleet.KindPack, Serial: pk.Serial, Specs: specs}); err != nil {
		t.Fatal(err)
	}
	return r
}

// log is the simulator's log of a flight hour hours after the first, and
// the text gzipped when gzip is set.
func (r *rig) log(hour int, gzip bool) (text, body []byte) {
	r.t.Helper()
	s := r.spec
	s.Start = r.spec.Start.Add(time.Duration(hour) * time.Hour)
	var buf bytes.Buffer
	if _, err := sim.Generate(s, &buf); err != nil {
		r.t.Fatal(err)
	}
	text, body = buf.Bytes(), buf.Bytes()
	if gzip {
		var z bytes.Buffer
		w, _ := kgzip.NewWriterLevel(&z, kgzip.BestCompression)
		w.Write(text)
		w.Close()
		body = z.Bytes()
	}
	return text, body
}

// upload ingests the log of hour; it must be a new flight.
func (r *rig) upload(hour int, gzip bool) (id string, text []byte, err error) {
	text, body := r.log(hour, gzip)
	res, err := r.in.Ingest(r.ctx, ingest.Request{Flight: fleet.Flight{Pilot: "test"}, Log: body})
	if err == nil && !res.Created {
		err = fmt.Errorf("not a new flight: %+v", res)
	}
	return res.FlightID, text, err
}

// count is the number of rows of table.
func (r *rig) count(table string) int {
	r.t.Helper()
	var n int
	if err := r.db.Pool().QueryRow(r.ctx, `SELECT count(*) FROM `+table).Scan(&n); err != nil {
		r.t.Fatal(err)
	}
	return n
}

// ready is a verdict with nothing against the flight, for a Judge stub.
func ready() *fleet.Readiness {
	return &fleet.Readiness{Ready: true, Blockers: []fleet.ReadinessItem{}, Warnings: []fleet.ReadinessItem{}}
}
