package telemetry

import (
	"encoding/csv"
	"fmt"
	"math"
	"os"
	"strconv"
	"strings"
	"testing"
)

// TestNASAB0005Charge integrates an open-dataset discharge: NASA Ames PCoE
// battery set, cell B0005, discharge cycle 100 (testdata/reference/README.md).
func TestNASAB0005Charge(t *testing.T) {
	f, err := os.Open("../testdata/reference/nasa_pcoe_B0005_discharge_cycle100.csv")
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	col := map[string]int{}
	for i, n := range recs[0] {
		col[n] = i
	}
	var b strings.Builder
	b.WriteString("# NASA PCoE B0005 discharge cycle 100, recast in our format\nt_s,pack_v,pack_a\n")
	for _, r := range recs[1:] {
		cur, err := strconv.ParseFloat(r[col["current"]], 64)
		if err != nil {
			t.Fatal(err)
		}
		// The dataset counts discharge current negative; pack_a counts it positive.
		fmt.Fprintf(&b, "%s,%s,%.17g\n", r[col["discharge_time"]], r[col["voltage"]], -cur)
	}
	l := parseString(t, b.String())
	m, err := Analyze(l, Params{CellsS: 1})
	if err != nil {
		t.Fatal(err)
	}
	// Recorded capacity 1.485868 Ah (dataset); REFERENCES.md section 4 asks
	// for agreement within 0.5 %.
	if rel := math.Abs(m.ChargeMah-1485.868) / 1485.868; rel > 0.005 {
		t.Errorf("charge = %.3f mAh, %.3f %% from the recorded 1485.868 mAh", m.ChargeMah, rel*100)
	}
	// REFERENCES.md section 4 (computed): the trapezoid integral is 1.4888 Ah.
	if math.Abs(m.ChargeMah-1488.8) > 0.05 {
		t.Errorf("charge = %.3f mAh, want 1488.8 (REFERENCES 4, computed)", m.ChargeMah)
	}
	// The cycle runs to the 2.7 V cut-off (dataset README), so the lowest
	// voltage must be near it and the load well past the rest threshold.
	if m.MinPackV > 2.75 || m.PeakA < 2 {
		t.Errorf("min V %.3f, peak A %.3f: not the 2 A discharge to 2.7 V", m.MinPackV, m.PeakA)
	}
}

// ivLog is a pulse log after IEC 61960's d.c. resistance method (0.2 C for
// 10 s, then 1 C for 1 s), sampled at 10 Hz, with the computed-check values
// of REFERENCES.md section 4: I1 0.4 A at U1 3.900 V, I2 2.0 A at U2 3.840 V.
// drift lowers the open-circuit voltage by that many volts a second.
func ivLog(pulses int, drift float64) string {
	var b strings.Builder
	b.WriteString("t_s,pack_v,pack_a,cell_1_v\n")
	for p := range pulses {
		for i := range 110 {
			t := float64(p*110+i) / 10
			u, c := 3.900, 0.4
			if i >= 100 {
				u, c = 3.840, 2.0
			}
			u -= drift * t
			fmt.Fprintf(&b, "%.1f,%.6f,%.3f,%.6f\n", t, u, c, u)
		}
	}
	return b.String()
}

func TestResistanceComputedCheck(t *testing.T) {
	m, err := Analyze(parseString(t, ivLog(5, 0)), Params{CellsS: 1, RestCurrentA: 0.1})
	if err != nil {
		t.Fatal(err)
	}
	// R = (U1 - U2) / (I2 - I1) = 37.5 mOhm (REFERENCES.md section 4, computed check).
	if m.IRMohm == nil || math.Abs(*m.IRMohm-37.5) > 1e-9 {
		t.Fatalf("ir_mohm = %v, want 37.5 (REFERENCES 4)", fmtPtr(m.IRMohm))
	}
	if m.IRCellMohm == nil || math.Abs(*m.IRCellMohm-37.5) > 1e-9 {
		t.Errorf("ir_cell_mohm = %v, want 37.5 for one cell", fmtPtr(m.IRCellMohm))
	}
	if len(m.IRCellsMohm) != 1 || m.IRCellsMohm[0] == nil || math.Abs(*m.IRCellsMohm[0]-37.5) > 1e-9 {
		t.Errorf("per-cell IR = %v, want [37.5]", m.IRCellsMohm)
	}
	// Each pulse has a rising and a falling step, each seen by the two sample
	// pairs 0.2 s apart that straddle it.
	if m.IRSteps != 5*2*2-2 {
		t.Errorf("ir_steps = %d, want 18", m.IRSteps)
	}
	// With the open-circuit voltage falling 1 mV/s the rising and falling
	// steps err by +-0.125 mOhm (0.2 mV over 1.6 A) and the median stays within.
	m, _ = Analyze(parseString(t, ivLog(5, 0.001)), Params{CellsS: 1})
	if m.IRMohm == nil || math.Abs(*m.IRMohm-37.5) > 0.13 {
		t.Errorf("with drift: ir_mohm = %v, want 37.5 +- 0.13", fmtPtr(m.IRMohm))
	}
}

func fmtPtr(p *float64) string {
	if p == nil {
		return "null"
	}
	return strconv.FormatFloat(*p, 'g', 10, 64)
}

func TestResistanceUnderNoise(t *testing.T) {
	// The benchmark log is built with 2.5 mOhm per cell, six cells (15 mOhm
	// pack), 0.3 A current noise and 2 mV cell noise: the median of step
	// estimates must recover that truth within 2 % (pack) and 3 % (cells).
	l, err := Parse(strings.NewReader(string(benchLog())), Limits{})
	if err != nil {
		t.Fatal(err)
	}
	m, err := Analyze(l, benchParams)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "ir_mohm", m.IRMohm, 15, 0.3, "construction")
	near(t, "ir_cell_mohm", m.IRCellMohm, 2.5, 0.05, "construction")
	for i, r := range m.IRCellsMohm {
		near(t, fmt.Sprintf("cell %d", i+1), r, 2.5, 0.075, "construction")
	}
}
