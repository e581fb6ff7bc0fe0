// Package scale seeds the large fleet of DESIGN section 10 for benchmarks:
// 500 quad airframes with motors, propellers and a flight controller fitted
// (4,500 parts fitted, the rest in stock up to 20,000) and 250,000 flights,
// bulk-loaded with COPY. Deterministic but for the ids (UUIDv7).
package scale

import (
	"context"
	"fmt"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"
	"github.com/jackc/pgx/v5/pgxpool"
)

// The fleet's size.
const (
	Airframes = 500
	Parts     = 20000
	Flights   = 250000
)

// Seed loads the fleet into the database behind pool (as a role that may
// insert into the register) and returns the airframe ids.
func Seed(tb testing.TB, pool *pgxpool.Pool) []string {
	tb.Helper()
	ctx := context.Background()
	rng := rand.New(rand.NewPCG(1, 2))
	start := time.Now().AddDate(-2, 0, 0).UTC().Truncate(time.Hour)
	var afs [][]any
	var ids []string
	for i := 0; i < Airframes; i++ {
		id := uuid.Must(uuid.NewV7()).String()
		ids = append(ids, id)
		afs = append(afs, []any{id, fmt.Sprintf("LF-%04d", i), "quad-x", 6})
	}
	copyRows(tb, pool, "airframes", []string{"id", "code", "layout", "cells_s"}, afs)
	var parts, fits [][]any
	since := pgtype.Range[pgtype.Timestamptz]{Lower: pgtype.Timestamptz{Time: start, Valid: true},
		LowerType: pgtype.Inclusive, UpperType: pgtype.Unbounded, Valid: true}
	n := 0
	addPart := func(kind, rot string) string {
		n++
		id := uuid.Must(uuid.NewV7()).String()
		specs := `{}`
		switch kind {
		case "motor":
			specs = `{"rotation":"` + rot + `"}`
		case "propeller":
			specs = `{"rotation":"` + rot + `","diameter_in":15,"blades":2}`
		}
		parts = append(parts, []any{id, kind, fmt.Sprintf("S-%06d", n), "PN-" + kind, fmt.Sprintf("LOT-%03d", n%300), specs, "stock"})
		return id
	}
	for _, af := range ids {
		for i, rot := range []string{"ccw", "cw", "ccw", "cw"} {
			for _, kind := range []string{"motor", "propeller"} {
				p := addPart(kind, rot)
				parts[len(parts)-1][6] = "fitted"
				fits = append(fits, []any{uuid.Must(uuid.NewV7()).String(), p, af, kind, fmt.Sprintf("m%d", i+1), since})
			}
		}
		p := addPart("flight_controller", "")
		parts[len(parts)-1][6] = "fitted"
		fits = append(fits, []any{uuid.Must(uuid.NewV7()).String(), p, af, "flight_controller", "flight_controller", since})
	}
	for n < Parts {
		addPart("other", "")
	}
	copyRows(tb, pool, "parts", []string{"id", "kind", "serial", "part_number", "lot", "specs", "status"}, parts)
	copyRows(tb, pool, "fits", []string{"id", "part_id", "airframe_id", "kind", "position", "during"}, fits)
	var flights [][]any
	perAF := Flights / Airframes
	for _, af := range ids {
		t := start
		for i := 0; i < perAF; i++ {
			t = t.Add(time.Duration(60+rng.IntN(180)) * time.Minute)
			flights = append(flights, []any{uuid.Must(uuid.NewV7()).String(), af, "pilot", t, t.Add(20 * time.Minute)})
		}
	}
	copyRows(tb, pool, "flights", []string{"id", "airframe_id", "pilot", "takeoff_at", "landing_at"}, flights)
	if _, err := pool.Exec(ctx, `ANALYZE`); err != nil {
		tb.Fatal(err)
	}
	return ids
}

func copyRows(tb testing.TB, pool *pgxpool.Pool, table string, cols []string, rows [][]any) {
	tb.Helper()
	if _, err := pool.CopyFrom(context.Background(), pgx.Identifier{table}, cols, pgx.CopyFromRows(rows)); err != nil {
		tb.Fatalf("copy %s: %v", table, err)
	}
}
