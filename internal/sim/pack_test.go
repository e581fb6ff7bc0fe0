package sim

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/stat"
)

func TestOCVCurves(t *testing.T) {
	for _, c := range []struct {
		chem string
		full float64
	}{
		{LiPo, 4.20},  // NASA PCoE README: charge CC to 4.2 V
		{LiIon, 4.20}, // same source
		{LiHV, 4.35},  // common practice
	} {
		if v := OCV(c.chem, 1); math.Abs(v-c.full) > 1e-12 {
			t.Errorf("%s full = %.3f V, want %.2f", c.chem, v, c.full)
		}
		prev := math.Inf(-1)
		for k := 0; k <= 1000; k++ {
			soc := float64(k) / 1000
			v := OCV(c.chem, soc)
			if v <= prev {
				t.Fatalf("%s: OCV not increasing at SoC %.3f", c.chem, soc)
			}
			prev = v
			if back := SoCFromOCV(c.chem, v); math.Abs(back-soc) > 1e-9 {
				t.Fatalf("%s: SoC %.3f -> %.4f V -> %.6f", c.chem, soc, v, back)
			}
		}
	}
	// The brief's anchor (from memory): LiPo about 3.3 V at 5 %.
	if v := OCV(LiPo, 0.05); math.Abs(v-3.3) > 0.05 {
		t.Errorf("LiPo at 5 %% = %.2f V", v)
	}
}

func TestPackLaws(t *testing.T) {
	p := PackState{RatedMah: 5000, BaselineIRmOhm: 20, IRGrowth: 0.002, FadeCoeff: 0.01, Cycles: 100}
	if got := p.CapacityMah(); math.Abs(got-5000*(1-0.01*10)) > 1e-9 {
		t.Errorf("sqrt law capacity %.3f", got)
	}
	p.FadeLaw, p.FadeCoeff = FadeLinear, 0.0005
	if got := p.CapacityMah(); math.Abs(got-5000*(1-0.05)) > 1e-9 {
		t.Errorf("linear law capacity %.3f", got)
	}
	if got := p.IRmOhm(); math.Abs(got-20*1.2) > 1e-9 {
		t.Errorf("IR %.3f", got)
	}
}

// Capacity and resistance measured from noise-free logs at several cycle
// counts follow the stated laws: a least-squares fit (gonum stat) of the
// measured values recovers the coefficients. Capacity is measured the way a
// pack-health model would: coulomb-counted charge over the change in state
// of charge read from the rest voltages (corrected for the avionics current
// by the step-measured resistance) through the OCV curve.
func TestLawsRecoveredFromLogs(t *testing.T) {
	for _, law := range []FadeLaw{FadeSqrt, FadeLinear} {
		coeff := map[FadeLaw]float64{FadeSqrt: 0.01, FadeLinear: 0.0006}[law]
		var xs, caps, cyc, irs []float64
		for _, c := range []float64{0, 40, 120, 250, 400} {
			s := quietSpec(uint64(c) + 100)
			s.DurationS = 600
			s.Packs[0].Cycles, s.Packs[0].FadeLaw, s.Packs[0].FadeCoeff = c, law, coeff
			s.Packs[0].IRGrowth, s.Packs[0].CellSpread = 0.002, 0
			tr, log := generate(t, s)
			pl := parseLog(t, log)
			ts, v, i := pl.col(t, "t_s"), pl.col(t, "pack_v"), pl.col(t, "pack_a")
			r := medianStepResistance(ts, v, i)
			cells := float64(s.Packs[0].CellsS)
			soc := func(k int) float64 { return SoCFromOCV(LiPo, (v[k]+i[k]*r)/cells) }
			capMah := trapz(ts, i) / 3.6 / (soc(0) - soc(len(v)-1))
			if relErr(capMah, tr.Packs[0].CapacityMah) > 0.01 {
				t.Errorf("law %d, %g cycles: measured capacity %.0f mAh, truth %.0f", law, c, capMah, tr.Packs[0].CapacityMah)
			}
			x := c
			if law == FadeSqrt {
				x = math.Sqrt(c)
			}
			xs, caps = append(xs, x), append(caps, capMah/s.Packs[0].RatedMah)
			cyc, irs = append(cyc, c), append(irs, r*1000)
		}
		a, b := stat.LinearRegression(xs, caps, nil, false)
		if math.Abs(a-1) > 0.01 || relErr(-b, coeff) > 0.05 {
			t.Errorf("law %d: fitted capacity fraction %.4f - %.5f x, want 1 - %.5f x", law, a, -b, coeff)
		}
		r0, g := stat.LinearRegression(cyc, irs, nil, false)
		if relErr(r0, 16) > 0.01 || relErr(g/r0, 0.002) > 0.03 {
			t.Errorf("law %d: fitted IR %.3f mOhm (1 + %.5f n), want 16 (1 + 0.002 n)", law, r0, g/r0)
		}
	}
}

// A weak cell group shows: lowest cell voltage under load and at the end.
func TestWeakCell(t *testing.T) {
	s := quietSpec(23)
	s.DurationS = 600
	s.Packs[0].WeakCell, s.Packs[0].WeakCellCapacity, s.Packs[0].WeakCellIR = 3, 0.85, 1.5
	tr, log := generate(t, s)
	pl := parseLog(t, log)
	last := len(pl.rows) - 1
	weak := pl.col(t, "cell_3_v")[last]
	for _, c := range []string{"cell_1_v", "cell_2_v", "cell_4_v"} {
		if v := pl.col(t, c)[last]; v-weak < 0.01 {
			t.Errorf("%s ends at %.4f V, weak cell at %.4f V", c, v, weak)
		}
	}
	var minCell = math.Inf(1)
	for _, v := range pl.col(t, "cell_3_v") {
		minCell = math.Min(minCell, v)
	}
	if math.Abs(minCell-tr.MinCellV) > 2e-3 {
		t.Errorf("min cell in log %.4f V, truth %.4f", minCell, tr.MinCellV)
	}
}
