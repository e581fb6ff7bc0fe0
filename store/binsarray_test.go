package store_test

import (
	"context"
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// jsonBin is a motor run's rpm bin as the ingest writes it (JSON).
type jsonBin struct {
	RPMLo       float64  `json:"rpm_lo"`
	RPMHi       float64  `json:"rpm_hi"`
	Seconds     float64  `json:"seconds"`
	Revolutions float64  `json:"revolutions"`
	MeanThrustN *float64 `json:"mean_thrust_n"`
}

// TestBinsArrayMatchesJSON holds motor_bins_array (the database's
// float8 reading of the bins, migration 021; bins_packed is computed through
// it) to encoding/json's decoding of
// the same JSON, bit for bit: awkward doubles (exponent forms, subnormals,
// the largest double, 17-digit values), a null and a missing thrust, a
// missing field, and many random doubles written as the ingest writes them
// (json.Marshal). encoding/json is the outside reference: both sides must
// round the decimal text correctly (strconv.ParseFloat, PostgreSQL float8in).
func TestBinsArrayMatchesJSON(t *testing.T) {
	db := store.New(pgtest.NewPool(t))
	ctx := context.Background()
	f := func(v float64) *float64 { return &v }
	odd := []float64{0, 1e-07, 5e-324, 2.2250738585072014e-308, math.MaxFloat64, 0.1, 0.30000000000000004,
		123456789.12345678, 1e21, 9007199254740993, 4.9406564584124654e-324, 1.7976931348623157e308}
	var raws []string
	for i, x := range odd {
		b := []jsonBin{{RPMLo: x, RPMHi: float64(i), Seconds: x / 3, Revolutions: x * 0.7, MeanThrustN: f(x)}, {RPMLo: 1, Seconds: x}}
		raw, err := json.Marshal(b)
		if err != nil {
			t.Fatal(err)
		}
		raws = append(raws, string(raw))
	}
	raws = append(raws, `[]`, `[{"rpm_hi": 2, "seconds": 1.5, "revolutions": 3}]`) // rpm_lo and thrust missing
	rng := rand.New(rand.NewPCG(1, 2))
	for range 200 {
		var b []jsonBin
		for range 6 {
			b = append(b, jsonBin{RPMLo: rng.Float64() * 1e4, RPMHi: math.Float64frombits(rng.Uint64()&^(0x7ff<<52) | (uint64(rng.IntN(2046)+1) << 52)),
				Seconds: rng.ExpFloat64(), Revolutions: rng.NormFloat64() * 1e5, MeanThrustN: f(rng.Float64())})
		}
		raw, err := json.Marshal(b)
		if err != nil {
			t.Fatal(err)
		}
		raws = append(raws, string(raw))
	}
	for _, raw := range raws {
		var want []jsonBin
		if err := json.Unmarshal([]byte(raw), &want); err != nil {
			t.Fatal(err)
		}
		var got []*float64
		if err := db.Pool().QueryRow(ctx, `SELECT motor_bins_array($1::jsonb)`, raw).Scan(&got); err != nil {
			t.Fatal(err)
		}
		if len(got) != 5*len(want) {
			t.Fatalf("%s: %d values, want %d", raw, len(got), 5*len(want))
		}
		for i, w := range want {
			for j, x := range []*float64{&w.RPMLo, &w.RPMHi, &w.Seconds, &w.Revolutions, w.MeanThrustN} {
				g := got[5*i+j]
				if (g == nil) != (x == nil) || (g != nil && math.Float64bits(*g) != math.Float64bits(*x)) {
					t.Errorf("%s: bin %d value %d: array %v, JSON %v", raw, i, j, deref(g), deref(x))
				}
			}
		}
	}
}

func deref(p *float64) any {
	if p == nil {
		return nil
	}
	return *p
}
