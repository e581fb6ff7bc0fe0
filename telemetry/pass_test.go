package telemetry

import (
	"math"
	"math/rand/v2"
	"testing"
)

// The fused per-motor pass (newMotorPass) against the separate passes it
// replaced, written out plainly here: integral for the revolutions, each
// sample's trapezoid weight summed over the samples above idle, and
// meansOver over the airborne span. Each sum is taken in the same order,
// so the figures must agree to the bit on random series with blanks.
func TestMotorPassMatchesSeparatePasses(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 9))
	same := func(a, b float64) bool { return math.Float64bits(a) == math.Float64bits(b) || (a != a && b != b) }
	weight := func(ts, y []float64, i int) float64 { // the trapezoid weight, as the separate pass took it
		w := 0.0
		if i > 0 && y[i] == y[i] && y[i-1] == y[i-1] {
			w += (ts[i] - ts[i-1]) / 2
		}
		if i+1 < len(ts) && y[i] == y[i] && y[i+1] == y[i+1] {
			w += (ts[i+1] - ts[i]) / 2
		}
		return w
	}
	for range 3000 {
		n := 1 + rng.IntN(60)
		ts, y := make([]float64, n), make([]float64, n)
		tt := 0.0
		for i := range y {
			tt += 0.01 + rng.Float64()
			ts[i] = tt
			y[i] = math.Round(rng.Float64()*9000*10) / 10
			if rng.IntN(5) == 0 {
				y[i] = math.NaN()
			}
			if rng.IntN(9) == 0 {
				y[i] = 0
			}
		}
		idle := rng.Float64() * 3000
		lo, hi := -1, -1
		if rng.IntN(4) > 0 {
			lo = rng.IntN(n)
			hi = lo + rng.IntN(n-lo)
		}
		ps := newMotorPass(ts, y, idle, 1000, lo, hi)
		revs, _, _ := integral(ts, y)
		var on, onRPM, onRPM2 float64
		for i, v := range y {
			if v > idle {
				w := weight(ts, y, i)
				on += w
				onRPM += w * v
				onRPM2 += w * v * v
			}
		}
		if !same(ps.revs/2, revs) || !same(ps.on, on) || !same(ps.onRPM, onRPM) || !same(ps.onRPM2, onRPM2) {
			t.Fatalf("y %v idle %v: pass gives %v %v %v %v, separate passes %v %v %v %v",
				y, idle, ps.revs/2, ps.on, ps.onRPM, ps.onRPM2, revs, on, onRPM, onRPM2)
		}
		if lo >= 0 {
			m, m2 := ps.aloft.means(ts, y, lo, hi)
			w, w2 := meansOver(ts, y, lo, hi)
			if !same(m, w) || !same(m2, w2) {
				t.Fatalf("y %v %d..%d: pass means %v %v, meansOver %v %v", y, lo, hi, m, m2, w, w2)
			}
		}
	}
}

// least is the first least reading a plain scan finds: NaN blanks skipped,
// every length around the four-way unrolling, and -0 against +0 (equal as
// numbers, so only the scan's order decides which is reported).
func TestLeastMatchesScan(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	negZero := math.Copysign(0, -1)
	for range 5000 {
		n := rng.IntN(13)
		y := make([]float64, n)
		for i := range y {
			switch rng.IntN(6) {
			case 0:
				y[i] = math.NaN()
			case 1:
				y[i] = 0
			case 2:
				y[i] = negZero
			default:
				y[i] = float64(rng.IntN(5))
			}
		}
		want := math.Inf(1)
		for _, v := range y {
			if v < want {
				want = v
			}
		}
		got, ok := least(y)
		if math.Float64bits(got) != math.Float64bits(want) || ok != !math.IsInf(want, 1) {
			t.Fatalf("least(%v) = %v %v, a scan gives %v", y, got, ok, want)
		}
	}
}

// A fix whose latitude or longitude repeats the previous one's reuses its
// sine and cosine: the points are those computed afresh for each fix.
func TestSurfacerReuseMatchesFresh(t *testing.T) {
	rng := rand.New(rand.NewPCG(8, 1))
	s := newSurfacer(WGS84)
	lat, lon := 47.0, 8.0
	for range 2000 {
		if rng.IntN(2) == 0 {
			lat = -90 + 180*rng.Float64()
		}
		if rng.IntN(2) == 0 {
			lon = -180 + 360*rng.Float64()
		}
		fresh := newSurfacer(WGS84)
		if got, want := s.at(lat, lon), fresh.at(lat, lon); got != want {
			t.Fatalf("(%v, %v): reused %v, fresh %v", lat, lon, got, want)
		}
	}
}

// The electrical pass's sums are Trapezoid's and meanOver's to the bit.
func TestElectricalSumsMatchIntegrals(t *testing.T) {
	rng := rand.New(rand.NewPCG(2, 6))
	for range 300 {
		n := 1 + rng.IntN(50)
		l := &Log{Rows: n, T: make([]float64, n), PackV: make([]float64, n), PackA: make([]float64, n)}
		tt := 0.0
		for i := range n {
			tt += 0.01 + rng.Float64()
			l.T[i], l.PackV[i], l.PackA[i] = tt, 20+rng.Float64()*5, rng.Float64()*60
		}
		m, err := Analyze(l, Params{})
		if err != nil {
			t.Fatal(err)
		}
		pw := make([]float64, n)
		for i := range pw {
			pw[i] = l.PackV[i] * l.PackA[i]
		}
		if m.ChargeMah != Trapezoid(l.T, l.PackA)*1000/3600 || m.EnergyWh != Trapezoid(l.T, pw)/3600 ||
			m.LogMeanPowerW != meanOver(l.T, pw, 0, n-1) {
			t.Fatalf("n %d: %v %v %v, integrals give %v %v %v", n, m.ChargeMah, m.EnergyWh, m.LogMeanPowerW,
				Trapezoid(l.T, l.PackA)*1000/3600, Trapezoid(l.T, pw)/3600, meanOver(l.T, pw, 0, n-1))
		}
	}
}
