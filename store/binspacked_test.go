package store_test

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgtype"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// TestBinsPackedMatchesArray holds motor_runs.bins_packed (migration 023),
// as RotorRunsOf decodes it in either format, to motor_bins_array (held to
// encoding/json by TestBinsArrayMatchesJSON) bit for bit, NULLs in place:
// awkward doubles, a null and a missing thrust, an empty list, and random
// bins written as the ingest writes them.
func TestBinsPackedMatchesArray(t *testing.T) {
	pool := pgtest.NewPool(t)
	ctx := context.Background()
	f := func(v float64) *float64 { return &v }
	var bins [][]jsonBin
	for i, x := range []float64{0, 1e-07, 5e-324, 2.2250738585072014e-308, math.MaxFloat64, 0.1,
		0.30000000000000004, 123456789.12345678, 1e21, 9007199254740993} {
		bins = append(bins, []jsonBin{{RPMLo: x, RPMHi: float64(i), Seconds: x / 3, Revolutions: x * 0.7, MeanThrustN: f(x)}, {RPMLo: 1, Seconds: x}})
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for range 100 {
		var b []jsonBin
		for range 6 {
			b = append(b, jsonBin{RPMLo: rng.Float64() * 1e4, RPMHi: rng.Float64() * 1e4, Seconds: rng.ExpFloat64(),
				Revolutions: rng.NormFloat64() * 1e5, MeanThrustN: f(rng.Float64())})
		}
		bins = append(bins, b)
	}
	raws := []string{`[]`, `[{"rpm_hi": 2, "seconds": 1.5, "revolutions": 3}]`}
	for _, b := range bins {
		raw, err := json.Marshal(b)
		if err != nil {
			t.Fatal(err)
		}
		raws = append(raws, string(raw))
	}
	for _, mode := range []pgx.QueryExecMode{pgx.QueryExecModeCacheStatement, pgx.QueryExecModeSimpleProtocol} {
		for _, raw := range raws {
			var want []*float64
			if err := pool.QueryRow(ctx, `SELECT motor_bins_array($1::jsonb)`, raw).Scan(&want); err != nil {
				t.Fatal(err)
			}
			rows, err := pool.Query(ctx, `SELECT motor_bins_packed($1::jsonb)`, mode, raw)
			if err != nil {
				t.Fatal(err)
			}
			if !rows.Next() {
				t.Fatal(rows.Err())
			}
			got, err := store.PackedBins(rows.FieldDescriptions()[0].Format, rows.RawValues()[0])
			rows.Close()
			if err != nil {
				t.Fatalf("%v %s: %v", mode, raw, err)
			}
			if got == nil || len(got) != len(want) {
				t.Fatalf("%v %s: %d values (nil %v), want %d", mode, raw, len(got), got == nil, len(want))
			}
			for i, w := range want {
				g := got[i]
				if (g == nil) != (w == nil) || (g != nil && math.Float64bits(*g) != math.Float64bits(*w)) {
					t.Errorf("%v %s: value %d: packed %v, array %v", mode, raw, i, deref(g), deref(w))
				}
			}
		}
	}
}

// TestPackedBinsRefuses: a NULL, an unknown tag and a value cut short are
// errors, not zeros.
func TestPackedBinsRefuses(t *testing.T) {
	for name, b := range map[string][]byte{
		"null":      nil,
		"tag":       {2},
		"short":     {1, 0, 0, 0},
		"after one": {0, 1, 0x3f, 0xf0, 0, 0, 0, 0, 0},
	} {
		if got, err := store.PackedBins(pgtype.BinaryFormatCode, b); err == nil {
			t.Errorf("%s: %v, want an error", name, got)
		}
	}
	got, err := store.PackedBins(pgtype.BinaryFormatCode, []byte{0, 1, 0x3f, 0xf0, 0, 0, 0, 0, 0, 0})
	if err != nil || len(got) != 2 || got[0] != nil || *got[1] != 1 {
		t.Errorf("null then 1: %v, %v", got, err)
	}
}
