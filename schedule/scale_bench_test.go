package schedule_test

import (
	"context"
	"fmt"
	"math/rand/v2"
	"sort"
	"testing"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// The large fleet of DESIGN section 10: 500 quad airframes with motors,
// propellers and a flight controller fitted (4,500 parts fitted, the rest in
// stock up to 20,000), and 250,000 flights, bulk-loaded with COPY.
const (
	scaleAirframes = 500
	scaleParts     = 20000
	scaleFlights   = 250000
)

func seedScale(b *testing.B) (*store.DB, []string) {
	b.Helper()
	ctx := context.Background()
	db := store.New(pgtest.NewPool(b))
	pool := db.Pool()
	rng := rand.New(rand.NewPCG(1, 2))
	start := time.Now().AddDate(-2, 0, 0).UTC().Truncate(time.Hour)
	var afs, afRows [][]any
	var ids []string
	for i := 0; i < scaleAirframes; i++ {
		id := uuid.Must(uuid.NewV7()).String()
		ids = append(ids, id)
		afRows = append(afRows, []any{id, fmt.Sprintf("LF-%04d", i), "quad-x", 6})
	}
	afs = afRows
	copyRows(b, pool, "airframes", []string{"id", "code", "layout", "cells_s"}, afs)
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
				fits = append(fits, []any{uuid.Must(uuid.NewV7()).String(), p, af, kind, fmt.Sprintf("m%d", i+1),
					since})
			}
		}
		p := addPart("flight_controller", "")
		parts[len(parts)-1][6] = "fitted"
		fits = append(fits, []any{uuid.Must(uuid.NewV7()).String(), p, af, "flight_controller", "flight_controller", since})
	}
	for n < scaleParts {
		addPart("other", "")
	}
	copyRows(b, pool, "parts", []string{"id", "kind", "serial", "part_number", "lot", "specs", "status"}, parts)
	copyRows(b, pool, "fits", []string{"id", "part_id", "airframe_id", "kind", "position", "during"}, fits)
	var flights [][]any
	perAF := scaleFlights / scaleAirframes
	for _, af := range ids {
		t := start
		for i := 0; i < perAF; i++ {
			t = t.Add(time.Duration(60+rng.IntN(180)) * time.Minute)
			flights = append(flights, []any{uuid.Must(uuid.NewV7()).String(), af, "pilot", t, t.Add(20 * time.Minute)})
		}
	}
	copyRows(b, pool, "flights", []string{"id", "airframe_id", "pilot", "takeoff_at", "landing_at"}, flights)
	if _, err := pool.Exec(ctx, `ANALYZE`); err != nil {
		b.Fatal(err)
	}
	return db, ids
}

func copyRows(b *testing.B, pool interface {
	CopyFrom(context.Context, pgx.Identifier, []string, pgx.CopyFromSource) (int64, error)
}, table string, cols []string, rows [][]any) {
	b.Helper()
	if _, err := pool.CopyFrom(context.Background(), pgx.Identifier{table}, cols, pgx.CopyFromRows(rows)); err != nil {
		b.Fatalf("copy %s: %v", table, err)
	}
}

// latencies runs fn n times on random airframes and returns p50 and p99.
func latencies(b *testing.B, ids []string, n int, fn func(id string) error) (p50, p99 time.Duration) {
	rng := rand.New(rand.NewPCG(3, 4))
	d := make([]time.Duration, n)
	for i := range d {
		id := ids[rng.IntN(len(ids))]
		t0 := time.Now()
		if err := fn(id); err != nil {
			b.Fatal(err)
		}
		d[i] = time.Since(t0)
	}
	sort.Slice(d, func(i, j int) bool { return d[i] < d[j] })
	return d[n/2], d[n*99/100]
}

// BenchmarkScaleLookups measures readiness and fitment on the large fleet
// next to the floor of the fitment's own SQL run directly, in one run:
// go test -bench ScaleLookups -run '^$' -benchtime 1x ./schedule
func BenchmarkScaleLookups(b *testing.B) {
	db, ids := seedScale(b)
	ctx := context.Background()
	prog := schedule.NewProgramme(db, health.New(db))
	t0 := time.Now()
	items, err := prog.RecomputeFleet(ctx)
	if err != nil {
		b.Fatal(err)
	}
	recompute := time.Since(t0)
	now := time.Now()
	for b.Loop() {
		const n = 2000
		// The floor is Fitment's own SQL run directly on the pool.
		floor50, floor99 := latencies(b, ids, n, func(id string) error {
			var positions, parts []byte
			return db.Pool().QueryRow(ctx, store.FitmentSQL, id, now).Scan(&positions, &parts)
		})
		fit50, fit99 := latencies(b, ids, n, func(id string) error { _, err := db.Fitment(ctx, id, now); return err })
		rd50, rd99 := latencies(b, ids, n, func(id string) error { _, err := prog.Readiness(ctx, id, nil); return err })
		b.ReportMetric(float64(fit99.Microseconds())/1000, "fitment-p99-ms")
		b.ReportMetric(float64(rd99.Microseconds())/1000, "readiness-p99-ms")
		b.ReportMetric(float64(floor99.Microseconds())/1000, "floor-sql-p99-ms")
		b.Logf("%d airframes, %d parts, %d flights; fleet due recompute %s (%d items)", scaleAirframes, scaleParts, scaleFlights, recompute, items)
		b.Logf("p50/p99: direct fitment SQL %s/%s; fitment %s/%s; readiness %s/%s; fitment/floor p50 ratio %.2f",
			floor50, floor99, fit50, fit99, rd50, rd99, float64(fit50)/float64(floor50))
	}
}
