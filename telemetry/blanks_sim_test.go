package telemetry_test

import (
	"bytes"
	"maps"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/telemetry"
)

// blankCells rewrites a native log leaving blank the cells pick chooses
// (row counts data rows from 0, col is the header's name); it returns the
// log and the number of cells blanked per column.
func blankCells(t testing.TB, native []byte, pick func(row int, ts float64, col string) bool) ([]byte, map[string]int) {
	t.Helper()
	var out bytes.Buffer
	var header []string
	counts := map[string]int{}
	row := 0
	for line := range strings.SplitSeq(strings.TrimSuffix(string(native), "\n"), "\n") {
		if line == "" || line[0] == '#' {
			out.WriteString(line + "\n")
			continue
		}
		fs := strings.Split(line, ",")
		if header == nil {
			header = fs
			out.WriteString(line + "\n")
			continue
		}
		ts, err := strconv.ParseFloat(fs[0], 64)
		if err != nil {
			t.Fatal(err)
		}
		for i, c := range header {
			if pick(row, ts, c) {
				fs[i] = ""
				counts[c]++
			}
		}
		out.WriteString(strings.Join(fs, ",") + "\n")
		row++
	}
	return out.Bytes(), counts
}

// gpsFixAtS, baroGap: the blanking patterns of the tests below.
const gpsFixAtS = 30.0

var baroGap = [2]float64{120, 150} // seconds of log time without pressure, mid-cruise

// pattern blanks: lat/lon before the GPS has a fix (the first 30 s), every
// other row of every cell column (a cell sensor that reports every second
// row), 5 % of each rotor's rpm cells at random (a telemetry link dropping
// frames), and the barometer for 30 s mid-flight.
func pattern(seed uint64) func(row int, ts float64, col string) bool {
	rng := rand.New(rand.NewPCG(seed, 5))
	return func(row int, ts float64, col string) bool {
		switch {
		case col == "lat" || col == "lon":
			return ts < gpsFixAtS
		case strings.HasPrefix(col, "cell_"):
			return row%2 == 1
		case strings.HasPrefix(col, "rpm_"):
			return rng.Float64() < 0.05
		case col == "baro_pa":
			return ts >= baroGap[0] && ts < baroGap[1]
		}
		return false
	}
}

// blankFlight simulates one flight, then parses the full log and the log
// with the pattern's cells blank.
func blankFlight(t *testing.T, seed uint64) (spec sim.FlightSpec, tr sim.Truth, full, blanked *telemetry.Log, native, holed []byte, counts map[string]int) {
	t.Helper()
	spec = sim.DefaultSpec(seed)
	spec.DurationS = 300
	var b bytes.Buffer
	tr, err := sim.Generate(spec, &b)
	if err != nil {
		t.Fatal(err)
	}
	native = b.Bytes()
	holed, counts = blankCells(t, native, pattern(seed))
	if full, err = telemetry.Parse(bytes.NewReader(native), telemetry.Limits{}); err != nil {
		t.Fatal(err)
	}
	if blanked, err = telemetry.Parse(bytes.NewReader(holed), telemetry.Limits{}); err != nil {
		t.Fatalf("the log with blank cells was refused: %v", err)
	}
	return spec, tr, full, blanked, native, holed, counts
}

// A simulated flight with cells blanked in known patterns gives the figures
// computed independently from the full log at the rows that kept their
// readings.
func TestBlankCellsAgainstFullLog(t *testing.T) {
	spec, tr, full, bl, _, _, counts := blankFlight(t, 41)
	if !maps.Equal(bl.Blank, counts) {
		t.Fatalf("blank counts %v, blanked %v", bl.Blank, counts)
	}
	if !slices.Equal(bl.Columns, full.Columns) {
		t.Errorf("columns %v, full log %v", bl.Columns, full.Columns)
	}
	p := flightParams(spec, tr, 25)
	fm, bm := analyze(t, full, p), analyze(t, bl, p)

	// Pack columns are never blank: their figures are the full log's.
	for _, c := range [][2]float64{{bm.ChargeMah, fm.ChargeMah}, {bm.EnergyWh, fm.EnergyWh}, {bm.MinPackV, fm.MinPackV}} {
		if c[0] != c[1] {
			t.Errorf("pack figure %v, full log %v", c[0], c[1])
		}
	}

	// Distance and range over the fixes present. Reference: the full log's
	// positions from the first fix on, measured segment by segment with
	// telemetry.Inverse (Vincenty, checked against the GDA manual's worked
	// example in TestVincentyWorkedExample). The analysis measures segments
	// under 1 km by their chord (shorter than the arc by s^3 / (24 R^2),
	// 1e-22 m at 20 cm), while Vincenty's iteration stops once the longitude
	// on the auxiliary sphere moves by under 1e-12 rad, which leaves up to
	// 1e-12 x 6378137 m = 6.4 um per segment: the tolerance is that times
	// the segments (seen: 3 mm over 1.4e4 segments).
	first := slices.IndexFunc(full.T, func(ts float64) bool { return ts >= gpsFixAtS })
	var dist, far float64
	for i := first + 1; i < full.Rows; i++ {
		s, _, err := telemetry.Inverse(full.Lat[i-1], full.Lon[i-1], full.Lat[i], full.Lon[i])
		if err != nil {
			t.Fatal(err)
		}
		dist += s
		r, _, _ := telemetry.Inverse(full.Lat[first], full.Lon[first], full.Lat[i], full.Lon[i])
		far = max(far, r)
	}
	vincenty := 1e-12 * 6378137.0
	within(t, "distance over the fixes present", bm.DistanceM, dist, vincenty*float64(full.Rows-1-first))
	within(t, "max range from the first fix", bm.MaxRangeM, far, vincenty)
	// And the full log's figure less the stretch before the fix.
	var before float64
	for i := 1; i <= first; i++ {
		s, _, _ := telemetry.Inverse(full.Lat[i-1], full.Lon[i-1], full.Lat[i], full.Lon[i])
		before += s
	}
	within(t, "full-log distance less the stretch before the fix", bm.DistanceM, *fm.DistanceM-before, vincenty*float64(first))

	// Cell minima over the readings: the least value at the rows that kept
	// one (every even row), read from the full log.
	lowest := math.Inf(1)
	for k, c := range full.Cells {
		want := math.Inf(1)
		for i := 0; i < full.Rows; i += 2 {
			want = min(want, c[i])
		}
		lowest = min(lowest, want)
		if got := bm.MinCellsV[k]; got == nil || *got != want {
			t.Errorf("cell %d minimum %v, least reading %v", k+1, fmtp(got), want)
		}
	}
	if bm.MinCellV == nil || *bm.MinCellV != lowest || bm.MinCellSource != "cells" {
		t.Errorf("min cell %v (%s), least reading %v", fmtp(bm.MinCellV), bm.MinCellSource, lowest)
	}

	// Revolutions: the blanks (all in gaps under a second) are bridged by
	// the chord of their neighbouring readings, so each motor's figure
	// differs from the full log's by the trapezoidal integral of the
	// full-log rpm's departure from that chord, which is at most the gap's
	// length times the largest departure in it (the departure is zero at the
	// gap's ends). That bound, summed over the gaps, is the tolerance.
	for k, r := range full.RPM {
		raw := bl.RPM[k].RPM
		bound := chordBound(t, full.T, r.RPM, raw)
		got, want := bm.Motors[k].Revolutions, fm.Motors[k].Revolutions
		if d := math.Abs(got - want); !(d <= bound) {
			t.Errorf("motor %s: revolutions %.3f, full log %.3f: off by %.4g, over the bound %.4g", r.Position, got, want, d, bound)
		}
		// The bound must be well inside the tolerance against the
		// truth (tolRevsRel, 0.5 %), or this check would add nothing to it.
		if bound > tolRevsRel/5*want {
			t.Errorf("motor %s: the bound %.4g is too loose to test anything", r.Position, bound)
		}
		// The issue's own tolerance against the simulator's truth still holds.
		if e := math.Abs(got-tr.Revolutions[k]) / tr.Revolutions[k]; e > tolRevsRel {
			t.Errorf("motor %s: revolutions %.1f, truth %.1f", r.Position, got, tr.Revolutions[k])
		}
		var sum float64
		for _, b := range bm.Motors[k].Bins {
			sum += b.Revolutions
		}
		if math.Abs(sum-got) > 1e-9*got {
			t.Errorf("motor %s: bins add up to %.6f revolutions, the motor %.6f", r.Position, sum, got)
		}
		t.Logf("motor %s: revolutions %.4f, full log %.4f, bound %.3g", r.Position, got, want, bound)
	}

	// Height above take-off from the pressure readings: the greatest pressure
	// altitude (telemetry.PressureAltitude, checked against the ISA table in
	// atmosphere_test.go) less the median before take-off.
	var ref []float64
	top := math.Inf(-1)
	for i, pa := range full.Baro {
		if full.T[i] >= baroGap[0] && full.T[i] < baroGap[1] {
			continue
		}
		h := telemetry.PressureAltitude(pa)
		top = max(top, h)
		if full.T[i] < *bm.AirborneFromS {
			ref = append(ref, h)
		}
	}
	slices.Sort(ref)
	within(t, "max altitude from the readings", bm.MaxAltM, top-(ref[(len(ref)-1)/2]+ref[len(ref)/2])/2, 1e-9)

	// Air density: time-weighted mean over the airborne span of
	// telemetry.AirDensity (checked against the ISA table) over the
	// intervals whose both ends have a pressure reading; the 30 s gap is left out.
	var s, span float64
	in := func(i int) bool { return !(full.T[i] >= baroGap[0] && full.T[i] < baroGap[1]) }
	lo := slices.IndexFunc(full.T, func(ts float64) bool { return ts >= *bm.AirborneFromS })
	hi := slices.IndexFunc(full.T, func(ts float64) bool { return ts > *bm.AirborneToS }) - 1
	for i := lo + 1; i <= hi; i++ {
		if in(i) && in(i-1) {
			dt := full.T[i] - full.T[i-1]
			s += dt * (telemetry.AirDensity(full.Baro[i], full.Temp[i]) + telemetry.AirDensity(full.Baro[i-1], full.Temp[i-1])) / 2
			span += dt
		}
	}
	if d := math.Abs(bm.AirDensity-s/span) / (s / span); d > 1e-12 || bm.AirDensitySource != "baro_temp" {
		t.Errorf("air density %v (%s), from the readings %v", bm.AirDensity, bm.AirDensitySource, s/span)
	}
	if !slices.ContainsFunc(bm.Notes, func(n string) bool {
		return strings.HasPrefix(n, "time without readings") && strings.HasSuffix(n, ": baro_pa 30 s")
	}) {
		t.Errorf("no note of the barometer gap: %q", bm.Notes)
	}

	// Acceleration was not blanked: vibration and landing are the full log's.
	if *bm.Vibration.X != *fm.Vibration.X || *bm.Vibration.Z != *fm.Vibration.Z || *bm.LandingG != *fm.LandingG {
		t.Errorf("vibration or landing moved: %v %v %v, full %v %v %v", *bm.Vibration.X, *bm.Vibration.Z, *bm.LandingG,
			*fm.Vibration.X, *fm.Vibration.Z, *fm.LandingG)
	}
	// Every column keeps at least half its readings: no warning.
	if len(bm.Warnings) != 0 {
		t.Errorf("warnings %+v", bm.Warnings)
	}
}

// chordBound is the bound on the change of the trapezoidal integral of y
// (rev/min, so divided by 60) when the blanks of raw are replaced by the
// chord between their neighbouring readings.
func chordBound(t *testing.T, ts, y, raw []float64) float64 {
	var bound float64
	prev := -1
	for i, v := range raw {
		if v != v {
			continue
		}
		if prev >= 0 && i > prev+1 {
			if ts[i]-ts[prev] > telemetry.DefaultMaxGapS {
				t.Fatalf("a gap of %g s: the random pattern should leave only short ones", ts[i]-ts[prev])
			}
			worst := 0.0
			for k := prev + 1; k < i; k++ {
				chord := y[prev] + (y[i]-y[prev])*(ts[k]-ts[prev])/(ts[i]-ts[prev])
				worst = max(worst, math.Abs(y[k]-chord))
			}
			bound += (ts[i] - ts[prev]) * worst / 60
		}
		prev = i
	}
	if raw[0] != raw[0] || raw[len(raw)-1] != raw[len(raw)-1] {
		t.Fatal("the pattern blanked a first or last sample; the bound does not cover it")
	}
	return bound + 1e-9 // and the rounding of two sums of 1e4 terms
}

func within(t *testing.T, what string, got *float64, want, tol float64) {
	t.Helper()
	if got == nil || !(math.Abs(*got-want) <= tol) {
		t.Errorf("%s = %s, want %.9g within %g", what, fmtp(got), want, tol)
	}
}

// The same blanked log in each foreign layout, read through its map, gives
// the native figures (the 1e-9 of TestLayoutsGiveNativeFigures) and the
// same blank counts.
func TestBlankCellsMappedLayouts(t *testing.T) {
	spec, tr, _, bl, _, holed, _ := blankFlight(t, 43)
	p := flightParams(spec, tr, 25)
	p.Airborne = nil
	want := analyze(t, bl, p)
	cms := simMaps(t)
	for i, lay := range sim.LogLayouts() {
		var b bytes.Buffer
		if err := lay.Rewrite(holed, &b); err != nil {
			t.Fatal(err)
		}
		ml, err := telemetry.ParseMapped(bytes.NewReader(b.Bytes()), cms[i], telemetry.Limits{})
		if err != nil {
			t.Fatalf("layout %s: %v", lay.Name, err)
		}
		if !maps.Equal(ml.Blank, bl.Blank) {
			t.Errorf("layout %s: blank counts %v, native %v", lay.Name, ml.Blank, bl.Blank)
		}
		sameFigures(t, lay.Name, want, analyze(t, ml, p), 1e-9)
	}
}

// Landing load from the readings present: with the acceleration blank on
// every axis for 0.1 s around the touchdown peak, the figure is the
// greatest |acc| / g of the full log's rows in the search window that kept
// their readings (the window: DefaultLandingWindowS before the end of the
// airborne span to 2 s after it).
func TestBlankLandingFromReadings(t *testing.T) {
	spec := sim.DefaultSpec(47)
	spec.DurationS, spec.LandingG = 200, 3.2
	var b bytes.Buffer
	tr, err := sim.Generate(spec, &b)
	if err != nil {
		t.Fatal(err)
	}
	full, err := telemetry.Parse(bytes.NewReader(b.Bytes()), telemetry.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	p := flightParams(spec, tr, 25)
	fm := analyze(t, full, p)
	peak := *fm.LandingAt
	hole := func(ts float64) bool { return math.Abs(ts-peak) <= 0.05 }
	holed, counts := blankCells(t, b.Bytes(), func(_ int, ts float64, col string) bool {
		return strings.HasPrefix(col, "acc_") && hole(ts)
	})
	bl, err := telemetry.Parse(bytes.NewReader(holed), telemetry.Limits{})
	if err != nil {
		t.Fatal(err)
	}
	bm := analyze(t, bl, p)
	lo := slices.IndexFunc(full.T, func(ts float64) bool { return ts >= p.Airborne.FromS })
	hi := slices.IndexFunc(full.T, func(ts float64) bool { return ts > p.Airborne.ToS }) - 1
	end := full.T[hi]
	want := -1.0
	for i, ts := range full.T {
		if ts < end-telemetry.DefaultLandingWindowS || ts > end+2 || hole(ts) {
			continue
		}
		want = max(want, math.Sqrt(full.AccX[i]*full.AccX[i]+full.AccY[i]*full.AccY[i]+full.AccZ[i]*full.AccZ[i])/telemetry.G0)
	}
	if lo < 0 || counts["acc_z"] == 0 || !(want < *fm.LandingG) {
		t.Fatalf("set-up: span from row %d, %d cells blanked, %v below the full peak %v", lo, counts["acc_z"], want, *fm.LandingG)
	}
	within(t, "landing g from the readings present", bm.LandingG, want, 0)
}
