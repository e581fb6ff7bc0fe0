package wear

import (
	"slices"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

func TestResistanceRise(t *testing.T) {
	// Hand example: baseline 20 mOhm, +1 mOhm per cycle (5 % per cycle), one
	// wild in-flight estimate at cycle 4. Current = median of the last three
	// readings (27, 28, 29) = 28 -> 40 % rise; the Theil-Sen slope
	// (Sen 1968) ignores the outlier: 5 %/cycle, intercept 0.
	var r []ResistancePoint
	for c := 9; c >= 0; c-- { // out of order on purpose
		v := 20.0 + float64(c)
		if c == 4 {
			v = 60
		}
		r = append(r, ResistancePoint{Cycle: float64(c), MOhm: v})
	}
	tr, err := ResistanceRise(20, r)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "current", tr.CurrentMOhm, 28, 1e-12)
	near(t, "rise %", tr.RisePct, 40, 1e-12)
	near(t, "slope %/cycle", tr.SlopePctPerCycle, 5, 1e-12)
	near(t, "intercept %", tr.InterceptPct, 0, 1e-12)
	// No baseline given: median of the first three readings (20, 21, 22).
	tr, _ = ResistanceRise(0, r)
	near(t, "derived baseline", tr.BaselineMOhm, 21, 1e-12)
}

func TestCellImbalance(t *testing.T) {
	// max - min in mV (computed): 4.20 - 4.15 = 50 mV.
	mv, err := CellImbalanceMV([]float64{4.18, 4.15, 4.20, 4.19})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "imbalance", mv, 50, 1e-9)
	if _, err := CellImbalanceMV([]float64{4.1}); err == nil {
		t.Error("one cell accepted")
	}
}

func TestDaysHeldFull(t *testing.T) {
	now := time.Date(2026, 5, 10, 9, 0, 0, 0, time.UTC)
	charged := now.Add(-5*24*time.Hour - 12*time.Hour)
	// LiPo full = 4.20 V (fleet.CellLimits); 4.17 V is within the 0.10 V
	// near-full margin (common practice), 3.85 V (storage) is not.
	d, err := DaysHeldFull(fleet.LiPo, ChargeState{At: charged, CellV: 4.17}, now, 0)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "days", d, 5.5, 1e-12)
	if d, _ := DaysHeldFull(fleet.LiPo, ChargeState{At: charged, CellV: 3.85}, now, 0); d != 0 {
		t.Errorf("storage-charged pack: %v days", d)
	}
	// LiHV full is 4.35 V: 4.20 V is well below it.
	if d, _ := DaysHeldFull(fleet.LiHV, ChargeState{At: charged, CellV: 4.20}, now, 0); d != 0 {
		t.Errorf("LiHV at 4.20 V: %v days", d)
	}
}

func codes(h PackHealth) []string {
	var c []string
	for _, r := range h.Reasons {
		c = append(c, r.Code)
	}
	return c
}

func TestPackStatus(t *testing.T) {
	f := func(v float64) *float64 { return &v }
	cases := []struct {
		name   string
		in     PackReadings
		status string
		codes  []string
	}{
		{"healthy", PackReadings{SoH: f(0.95), IRRisePct: f(10), ImbalanceMV: f(8), Cycles: 40}, StatusServiceable, nil},
		// End of life at 80 % of rated (REFERENCES.md section 4).
		{"worn out", PackReadings{SoH: f(0.79)}, StatusRetire, []string{"soh_end_of_life"}},
		{"fading", PackReadings{SoH: f(0.84)}, StatusWatch, []string{"soh_low"}},
		// Swollen pack: retire, never charge (common practice).
		{"swollen", PackReadings{Swollen: true, SoH: f(0.97)}, StatusRetire, []string{"pack_swollen"}},
		// Held full beyond 3 days (common practice).
		{"left full", PackReadings{DaysHeldFull: 7}, StatusWatch, []string{"stored_full"}},
		{"several", PackReadings{IRRisePct: f(45), ImbalanceMV: f(120), CyclesToEOL: f(5)}, StatusRetire,
			[]string{"resistance_rise", "cell_imbalance_high", "end_of_life_near"}},
	}
	for _, c := range cases {
		h := PackStatus(c.in, PackThresholds{})
		if h.Status != c.status || !slices.Equal(codes(h), c.codes) {
			t.Errorf("%s: got %s %v, want %s %v", c.name, h.Status, codes(h), c.status, c.codes)
		}
	}
	// Thresholds are parameters: a stricter storage limit catches 2 days.
	if h := PackStatus(PackReadings{DaysHeldFull: 2}, PackThresholds{StorageDays: 1}); h.Status != StatusWatch {
		t.Errorf("custom storage limit: %s", h.Status)
	}
}
