package telemetry

import (
	"encoding/json"
	"fmt"
	"maps"
	"math"
	"slices"
	"strings"
	"testing"
)

// Regression: a native log with blank GPS cells before the fix (and other
// optional cells blank) was refused at its first data line; it is read,
// the blanks counted, and its figures come from the readings present.
func TestBlankCellsSampleLog(t *testing.T) {
	l := parseFile(t, "blank_cells.csv")
	want := map[string]int{"lat": 6, "lon": 6, "cell_1_v": 10, "cell_2_v": 10, "cell_3_v": 10, "rpm_m2": 1, "baro_pa": 2}
	if !maps.Equal(l.Blank, want) {
		t.Fatalf("blank cells %v, want %v (counted in the file)", l.Blank, want)
	}
	m, err := Analyze(l, Params{CellsS: 3})
	if err != nil {
		t.Fatal(err)
	}
	// Distance fix to fix (rows from t = 3 s): the sum of Inverse, checked
	// against the GDA manual's Vincenty example; the analysis takes 3 m
	// segments by their chord (short of the arc by 1e-13 m), Vincenty
	// stops within 1e-12 rad (6.4 um) per segment.
	first := slices.Index(l.T, 3.0)
	var dist float64
	for i := first + 1; i < l.Rows; i++ {
		s, _, err := Inverse(l.Lat[i-1], l.Lon[i-1], l.Lat[i], l.Lon[i])
		if err != nil {
			t.Fatal(err)
		}
		dist += s
	}
	near(t, "distance_m", m.DistanceM, dist, 14*6.4e-6, "Inverse over the 14 segments between fixes")
	// Minima over the readings, read off the file.
	for i, w := range []float64{4.025, 4.016, 4.021} {
		near(t, fmt.Sprintf("min cell %d", i+1), m.MinCellsV[i], w, 0, "least value in the file's column")
	}
	near(t, "min_cell_v", m.MinCellV, 4.016, 0, "least cell value in the file")
	// rpm_m2's blank at 2.0 s lies between readings 1 s apart: bridged, so
	// its revolutions are the trapezoid over its readings alone.
	var ts, rs []float64
	for i, v := range l.RPM[1].RPM {
		if !math.IsNaN(v) {
			ts, rs = append(ts, l.T[i]), append(rs, v)
		}
	}
	near(t, "revolutions m2", &m.Motors[1].Revolutions, Trapezoid(ts, rs)/60, 1e-9, "trapezoid over the readings")
	// The barometer's two blanks leave 1.5 s between readings, over the
	// 1 s bridged: said so, and the height comes from the readings: the
	// ISA pressure altitude of 97940 Pa above that of 98000 Pa (the
	// readings before take-off at 1.5 s).
	if !slices.ContainsFunc(m.Notes, func(n string) bool {
		return strings.HasPrefix(n, "time without readings") && strings.HasSuffix(n, ": baro_pa 1.5 s")
	}) {
		t.Errorf("notes %q", m.Notes)
	}
	near(t, "max_alt_m", m.MaxAltM, PressureAltitude(97940)-PressureAltitude(98000), 1e-9, "ISA pressure altitude")
	if len(m.Warnings) != 0 {
		t.Errorf("warnings %+v: every column keeps half its readings", m.Warnings)
	}
}

// A column blank in every row is absent: left out of Columns, its figures
// null as when the header lacks it; its blanks are still counted.
func TestBlankColumnIsAbsent(t *testing.T) {
	var b strings.Builder
	b.WriteString("t_s,pack_v,pack_a,rpm_m1,rpm_m2,cell_1_v,cell_2_v,cell_3_v,baro_pa,temp_c\n")
	for i := range 20 {
		a, r := 0.5, 0
		if i >= 5 && i < 15 {
			a, r = 10, 5000
		}
		fmt.Fprintf(&b, "%d,12.%02d,%g,%d,,4.1,,4.0%d,,15\n", i, 50-i, a, r, i%3)
	}
	l := parseString(t, b.String())
	if want := []string{"t_s", "pack_v", "pack_a", "rpm_m1", "cell_1_v", "cell_3_v", "temp_c"}; !slices.Equal(l.Columns, want) {
		t.Errorf("columns %v, want %v", l.Columns, want)
	}
	if want := map[string]int{"rpm_m2": 20, "cell_2_v": 20, "baro_pa": 20}; !maps.Equal(l.Blank, want) {
		t.Errorf("blank %v, want %v", l.Blank, want)
	}
	if len(l.RPM) != 1 || l.Baro != nil || l.Series("baro_pa") != nil || len(l.Cells) != 3 || l.Cells[1] != nil {
		t.Fatalf("rpm %d columns, baro %v, cells %v", len(l.RPM), l.Baro, l.Cells)
	}
	m, err := Analyze(l, Params{})
	if err != nil {
		t.Fatal(err)
	}
	if m.MaxAltM != nil || m.AirDensitySource != "isa_site_elevation" || len(m.Motors) != 1 {
		t.Errorf("max alt %v, density from %s, %d motors", m.MaxAltM, m.AirDensitySource, len(m.Motors))
	}
	raw, _ := json.Marshal(m.MinCellsV)
	if string(raw) != "[4.1,null,4]" {
		t.Errorf("min_cells_v %s", raw)
	}
}

// A column with readings in under half the samples warns, naming the
// figures that rest on it.
func TestBlankWarning(t *testing.T) {
	var b strings.Builder
	b.WriteString("t_s,pack_v,pack_a,lat,lon\n")
	for i := range 10 {
		pos := ","
		if i >= 6 { // a fix in 4 of 10 samples
			pos = fmt.Sprintf("47.%04d,8", i)
		}
		fmt.Fprintf(&b, "%d,12,1,%s\n", i, pos)
	}
	m, err := Analyze(parseString(t, b.String()), Params{})
	if err != nil {
		t.Fatal(err)
	}
	if len(m.Warnings) != 1 {
		t.Fatalf("warnings %+v", m.Warnings)
	}
	w := m.Warnings[0]
	if w.Column != "lat" || w.Readings != 4 || w.Samples != 10 || !slices.Equal(w.Figures, []string{"distance_m", "max_range_m"}) ||
		!strings.Contains(w.Detail, "lat/lon has readings in 4 of 10 samples") {
		t.Errorf("warning %+v", w)
	}
}

// Vibration is high-passed over each run of consecutive readings, never
// across a gap: a 25 Hz vibration of amplitude 1 m/s^2, with a 20 m/s^2
// shift of the mean during a 0.1 s gap (a jolt the log did not see), gives
// the vibration's RMS. Reference: a sinusoid's RMS is A/sqrt 2;
// the zero-phase filter passes it at |H|^2, |H| of a first-order high-pass
// w_a RC / sqrt(1 + (w_a RC)^2) at the frequency the bilinear transform
// maps it to, w_a = (2/T) tan(w T / 2) (frequency warping; Oppenheim and
// Schafer, Discrete-Time Signal Processing, section 7.1.2).
func TestVibrationOverRuns(t *testing.T) {
	const hz, f, amp, shift, cutoff = 200.0, 25.0, 1.0, 20.0, 2.0
	gap := func(ts float64) bool { return ts >= 10 && ts < 10.1 }
	log := func(fill bool) *Log {
		var b strings.Builder
		b.WriteString("t_s,pack_v,pack_a,acc_x\n")
		for i := range int(20 * hz) {
			ts := float64(i) / hz
			x := amp * math.Sin(2*math.Pi*f*ts)
			if ts >= 10.1 {
				x += shift
			}
			acc := fmt.Sprintf("%.6f", x)
			switch {
			case gap(ts) && fill: // what bridging would do: a ramp across the gap
				acc = fmt.Sprintf("%.6f", shift*(ts-10)/0.1)
			case gap(ts):
				acc = ""
			}
			fmt.Fprintf(&b, "%.3f,12,1,%s\n", ts, acc)
		}
		return parseString(t, b.String())
	}
	m, err := Analyze(log(false), Params{VibrationCutoffHz: cutoff})
	if err != nil {
		t.Fatal(err)
	}
	dt := 1 / hz
	wa := 2 / dt * math.Tan(2*math.Pi*f*dt/2)
	rc := 1 / (2 * math.Pi * cutoff)
	h := wa * rc / math.Sqrt(1+wa*wa*rc*rc)
	want := amp / math.Sqrt2 * h * h
	// 1 %: each of the two runs starts and ends the filter at rest, a
	// transient decaying with RC = 80 ms; its energy is of the order of
	// RC / run length (under 2 % of the 10 s runs' energy), under 1 % of RMS.
	near(t, "vibration x over runs", m.Vibration.X, want, 0.01*want, "sinusoid RMS through the bilinear high-pass")
	// Filtered across the gap (filled by a ramp), the shift would count as
	// vibration: the check above must be able to tell.
	filled, _ := Analyze(log(true), Params{VibrationCutoffHz: cutoff})
	if !(*filled.Vibration.X > 1.05*want) {
		t.Errorf("filtering across the filled gap gives %v: the test would not see a filter run across a gap", *filled.Vibration.X)
	}
}
