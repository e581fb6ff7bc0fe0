package sim

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"
)

// appendFixed agrees with the standard library's strconv.AppendFloat 'f'
// formatting except at decimal ties (where either neighbour is acceptable)
// and for negative zero.
func TestAppendFixedMatchesStrconv(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	vals := []float64{0, 1, -1, 0.5, 9.9995, 123456.78915, -0.0004, 101325, 1e-9, -3.3e-7}
	for range 200000 {
		vals = append(vals, (rng.Float64()-0.5)*math.Pow(10, float64(rng.IntN(9)-3)))
	}
	for _, v := range vals {
		for prec := range 10 {
			got := string(appendFixed(nil, v, prec))
			want := strconv.FormatFloat(v, 'f', prec, 64)
			if got == want {
				continue
			}
			g, _ := strconv.ParseFloat(got, 64)
			w, _ := strconv.ParseFloat(want, 64)
			frac := math.Abs(v*math.Pow10(prec)) - math.Floor(math.Abs(v*math.Pow10(prec)))
			if g == w || math.Abs(frac-0.5) < 1e-6 {
				continue // -0 or a tie
			}
			t.Fatalf("appendFixed(%v, %d) = %s, strconv gives %s", v, prec, got, want)
		}
	}
}
