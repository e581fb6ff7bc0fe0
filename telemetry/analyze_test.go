package telemetry

import (
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
)

func near(t *testing.T, name string, got *float64, want, tol float64, src string) {
	t.Helper()
	if got == nil {
		t.Errorf("%s = null, want %g (%s)", name, want, src)
	} else if math.Abs(*got-want) > tol {
		t.Errorf("%s = %.9g, want %.9g +- %g (%s)", name, *got, want, tol, src)
	}
}

func TestThrottleOnlyLog(t *testing.T) {
	l := parseFile(t, "throttle_only.csv")
	m, err := Analyze(l, Params{CellsS: 4})
	if err != nil {
		t.Fatal(err)
	}
	// Hand sums (trapezoid over 1 s steps) of the file's current:
	// 0.5 + 6.25 + 13 + 14.25 + 14.25 + 7.3 + 0.55 = 56.1 A s = 15.5833 mAh.
	if math.Abs(m.ChargeMah-56.1/3.6) > 1e-9 {
		t.Errorf("charge = %v mAh, want %v (hand sum)", m.ChargeMah, 56.1/3.6)
	}
	if m.PeakA != 14.5 || m.MinPackV != 15.98 || math.Abs(m.PeakPowerW-16.00*14.5) > 1e-9 {
		t.Errorf("peak A %v, min V %v, peak W %v", m.PeakA, m.MinPackV, m.PeakPowerW)
	}
	// Throttle above the 0.1 idle at t = 2..5 s: 3 s plus half of each edge step.
	near(t, "run_s", m.RunS, 4, 1e-12, "hand count")
	near(t, "airborne_from_s", m.AirborneFromS, 2, 0, "file")
	near(t, "airborne_to_s", m.AirborneToS, 5, 0, "file")
	near(t, "min_cell_v", m.MinCellV, 15.98/4, 1e-12, "pack_v / cells_s")
	near(t, "rest_v_start", m.RestVStart, 16.795, 1e-12, "median of the two rest samples")
	near(t, "rest_v_end", m.RestVEnd, 16.45, 1e-12, "later half of the final rest")
	// Power: the airborne mean (t = 2..5 s) is the trapezoid of V I, 193.2,
	// 224.28, 232, 223.72 W, over 3 s = 664.74 / 3 W; the whole-log mean,
	// rest included, 899.7475 / 7 W (hand sums).
	near(t, "mean_power_w", &m.MeanPowerW, 664.74/3, 1e-9, "hand sum, airborne")
	near(t, "log_mean_power_w", &m.LogMeanPowerW, 899.7475/7, 1e-9, "hand sum, whole log")
	if m.MeanPowerSource != "airborne" {
		t.Errorf("mean power source %q", m.MeanPowerSource)
	}
	// Without rpm or throttle there is no span: the whole log, said so.
	req, _ := Analyze(parseFile(t, "required_only.csv"), Params{})
	if req.MeanPowerSource != "log" || req.MeanPowerW != req.LogMeanPowerW {
		t.Errorf("required-only log: mean power %v (%s), log mean %v", req.MeanPowerW, req.MeanPowerSource, req.LogMeanPowerW)
	}
	if m.AirbornePowerW == nil {
		t.Errorf("airborne power missing: the throttle gives the airborne span")
	}
	for name, p := range map[string]*float64{"hover_rpm": m.HoverRPM, "thrust_k": m.ThrustK,
		"efficiency_index": m.EfficiencyIndex, "max_alt_m": m.MaxAltM, "landing_g": m.LandingG,
		"distance_m": m.DistanceM, "max_range_m": m.MaxRangeM} {
		if p != nil {
			t.Errorf("%s = %v, want null (no column or mass for it)", name, *p)
		}
	}
	if len(m.Motors) != 0 || m.Vibration != nil || len(m.Events) != 0 {
		t.Errorf("motors %v vibration %v events %v invented", m.Motors, m.Vibration, m.Events)
	}
	b, _ := json.Marshal(m)
	for _, want := range []string{`"hover_rpm":null`, `"thrust_k":null`, `"vibration_rms":null`, `"motors":[]`, `"run_s":4`} {
		if !strings.Contains(string(b), want) {
			t.Errorf("JSON lacks %s: %s", want, b)
		}
	}
	// With mass and rotor size the efficiency index needs no rpm.
	m, _ = Analyze(l, Params{MassKg: 1.5, RotorDiameterM: 0.254, Rotors: 4})
	if m.EfficiencyIndex == nil || m.ThrustK != nil {
		t.Errorf("efficiency %v thrust_k %v: want an index and no thrust constant", m.EfficiencyIndex, m.ThrustK)
	}
}

func TestRequiredOnlyLog(t *testing.T) {
	l := parseFile(t, "required_only.csv")
	m, err := Analyze(l, Params{MassKg: 1.2, RotorDiameterM: 0.2, Rotors: 4, Chemistry: fleet.LiPo})
	if err != nil {
		t.Fatal(err)
	}
	// Hand sum: 0.5 s steps of 0.4, 0.4, 9.0, 9.5, 9.2, 0.4, 0.4 A.
	want := 0.5 * (0.4 + 4.7 + 9.25 + 9.35 + 4.8 + 0.4) / 3.6
	if math.Abs(m.ChargeMah-want) > 1e-9 || m.PeakA != 9.5 {
		t.Errorf("charge %v (want %v), peak A %v", m.ChargeMah, want, m.PeakA)
	}
	for name, p := range map[string]*float64{"run_s": m.RunS, "airborne_from_s": m.AirborneFromS,
		"min_cell_v": m.MinCellV, "ir_mohm": m.IRMohm, "hover_rpm": m.HoverRPM, "thrust_k": m.ThrustK,
		"efficiency_index": m.EfficiencyIndex, "airborne_power_w": m.AirbornePowerW, "max_alt_m": m.MaxAltM,
		"landing_g": m.LandingG, "distance_m": m.DistanceM} {
		if p != nil {
			t.Errorf("%s = %v, want null", name, *p)
		}
	}
	if m.AirDensitySource != "isa_site_elevation" || math.Abs(m.AirDensity-Rho0) > 1e-5 {
		t.Errorf("air density %v from %s, want ISA sea level", m.AirDensity, m.AirDensitySource)
	}
	if len(m.Notes) == 0 {
		t.Errorf("no notes say why figures are missing")
	}
}

// flight describes a synthetic 50 Hz quad flight: rest 0..5 s, hover with
// rpm stepping straight to the hover values 5..54 s, rest to 60 s.
type flight struct {
	rpm          [4]float64
	baro, gps    bool
	climbM       float64                           // peak height of a triangular climb profile
	vib          func(t float64) (x, y, z float64) // added to gravity while aloft
	current      func(t float64) float64           // aloft; default 10 A
	cellDip      [2]float64                        // cell 3 at 2.9 V over this interval
	landingSpike float64                           // |acc| in g at 54.5 s
	dt           float64                           // sample step; 0 means fDt (50 Hz)
}

const (
	fDt, fUp, fDown, fEnd = 0.02, 5.0, 54.0, 60.0
)

func (f flight) csv() string {
	var b strings.Builder
	b.WriteString("t_s,pack_v,pack_a,rpm_m1,rpm_m2,rpm_m3,rpm_m4,cell_1_v,cell_2_v,cell_3_v,cell_4_v,cell_5_v,cell_6_v,acc_x,acc_y,acc_z")
	if f.baro {
		b.WriteString(",baro_pa,temp_c")
	}
	if f.gps {
		b.WriteString(",lat,lon")
	}
	b.WriteString("\n")
	dt := fDt
	if f.dt > 0 {
		dt = f.dt
	}
	n := int(math.Round(fEnd / dt))
	for k := 0; k <= n; k++ {
		t := float64(k) * dt
		aloft := t >= fUp-1e-9 && t <= fDown+1e-9
		v, c := 25.2, 0.5
		rpm := [4]float64{}
		ax, ay, az := 0.0, 0.0, G0
		h := 0.0
		if aloft {
			v, c, rpm = 22.2, 10.0, f.rpm
			if f.current != nil {
				c = f.current(t)
			}
			if f.vib != nil {
				x, y, z := f.vib(t)
				ax, ay, az = ax+x, ay+y, az+z
			}
			h = f.climbM * (1 - math.Abs(t-(fUp+fDown)/2)/((fDown-fUp)/2))
		}
		if f.landingSpike > 0 && math.Abs(t-54.5) < 1e-9 {
			az = f.landingSpike * G0
		}
		cell := v / 6
		fmt.Fprintf(&b, "%.2f,%.4f,%.4f,%g,%g,%g,%g", t, v, c, rpm[0], rpm[1], rpm[2], rpm[3])
		for i := range 6 {
			cv := cell
			if i == 2 && t >= f.cellDip[0] && t <= f.cellDip[1] {
				cv = 2.9
			}
			fmt.Fprintf(&b, ",%.4f", cv)
		}
		fmt.Fprintf(&b, ",%.6f,%.6f,%.6f", ax, ay, az)
		if f.baro {
			fmt.Fprintf(&b, ",%.4f,%.4f", ISAPressure(h), ISATemperature(h)-273.15)
		}
		if f.gps {
			// North and back along the meridian of 8 deg E, 0.0063 deg each way.
			lat := 47 + 0.0063*(h/math.Max(f.climbM, 1))
			fmt.Fprintf(&b, ",%.9f,8", lat)
		}
		b.WriteString("\n")
	}
	return b.String()
}

func TestSyntheticHover(t *testing.T) {
	f := flight{rpm: [4]float64{5000, 5100, 4900, 5000}, baro: true, gps: true, climbM: 40}
	m, err := Analyze(parseString(t, f.csv()), Params{MassKg: 1.5, RotorDiameterM: 0.254, Rotors: 4})
	if err != nil {
		t.Fatal(err)
	}
	near(t, "airborne_from_s", m.AirborneFromS, fUp, 1e-9, "construction")
	near(t, "airborne_to_s", m.AirborneToS, fDown, 1e-9, "construction")
	// Each rpm steps in one 0.02 s sample step, so each edge adds half a step.
	near(t, "run_s", m.RunS, fDown-fUp+fDt, 1e-9, "construction")
	// Impulse balance (DESIGN section 5): mean thrust aloft = weight, T = k rpm^2.
	sumSq := 5000.0*5000 + 5100*5100 + 4900*4900 + 5000*5000
	near(t, "thrust_k", m.ThrustK, 1.5*G0/sumSq, 1e-15, "m g / sum rpm^2")
	var thrust float64
	for i, mr := range m.Motors {
		r := f.rpm[i]
		// revolutions: r/60 over the hover plus the two edge triangles.
		if want := r / 60 * (fDown - fUp + fDt); math.Abs(mr.Revolutions-want) > 1e-6 {
			t.Errorf("%s revolutions %v, want %v", mr.Position, mr.Revolutions, want)
		}
		near(t, mr.Position+" mean_rpm", mr.MeanRPM, r, 1e-9, "constant rpm")
		// Load spectrum: the hover's 49 s in the rpm's bin, plus its share of
		// the two 0.02 s ramps (rpm linear between samples); the ramps cross
		// every lower bin in 0.02 x 1000/r s each way (computed).
		var revs float64
		for _, b := range mr.Bins {
			revs += b.Revolutions
			want := 2 * fDt * 1000 / r
			if b.RPMLo == math.Floor(r/1000)*1000 {
				want = fDown - fUp + 2*fDt*(r-b.RPMLo)/r
			}
			if math.Abs(b.Seconds-want) > 1e-9 {
				t.Errorf("%s bin %v-%v: %v s, want %v", mr.Position, b.RPMLo, b.RPMHi, b.Seconds, want)
			}
		}
		if len(mr.Bins) != int(r/1000)+1 || math.Abs(revs-mr.Revolutions) > 1e-9 {
			t.Errorf("%s bins %+v", mr.Position, mr.Bins)
		}
		thrust += *mr.ThrustMeanN
	}
	if math.Abs(thrust-1.5*G0) > 1e-9 {
		t.Errorf("motor thrusts sum to %v N, want the weight %v N", thrust, 1.5*G0)
	}
	// Efficiency index = P_measured / (4 P_ideal); P = 22.2 V x 10 A aloft;
	// P_ideal per rotor from the measured density (ISA sea level to 40 m).
	near(t, "airborne_power_w", m.AirbornePowerW, 222, 1e-9, "construction")
	rho := m.AirDensity
	if m.AirDensitySource != "baro_temp" || rho > Rho0 || rho < ISADensity(40) {
		t.Errorf("air density %v (%s), want between ISA at 40 m and sea level", rho, m.AirDensitySource)
	}
	near(t, "efficiency_index", m.EfficiencyIndex, 222/(4*IdealHoverPower(1.5*G0/4, rho, 0.254)), 1e-9, "definition")
	near(t, "max_alt_m", m.MaxAltM, 40, 0.01, "ISA pressure of the profile")
	// Track: out and back, 700.376688567 m each way (GeographicLib GeodSolve).
	near(t, "distance_m", m.DistanceM, 2*700.376688567, 1e-5, "GeodSolve")
	near(t, "max_range_m", m.MaxRangeM, 700.376688567, 1e-6, "GeodSolve")
	if m.Vibration == nil || *m.Vibration.X > 1e-9 || *m.Vibration.Z > 1e-9 {
		t.Errorf("still airframe has vibration %+v", m.Vibration)
	}
	near(t, "landing_g", m.LandingG, 1, 1e-6, "gravity only")
	if len(m.Events) != 0 {
		t.Errorf("events on a clean flight: %+v", m.Events)
	}

	// Without baro the density is ISA at the site: REFERENCES.md section 3
	// gives P_ideal = 22.0815 W per rotor at 2000 m (1.5 kg, D 0.254 m).
	f.baro = false
	m, _ = Analyze(parseString(t, f.csv()), Params{MassKg: 1.5, RotorDiameterM: 0.254, SiteElevationM: 2000})
	// Tolerance: the reference's last digit and the table density's rounding.
	near(t, "ideal_power_w", m.IdealPowerW, 4*22.0815, 4*1e-4, "REFERENCES 3")
	near(t, "efficiency_index at 2000 m", m.EfficiencyIndex, 222/(4*22.0815), 1e-5, "REFERENCES 3")
}

func TestVibration(t *testing.T) {
	// A 20 Hz tone of amplitude A has RMS A / sqrt(2) (definition of RMS). At
	// 50 Hz sampling the corner is min(2 Hz, 25 Hz / 10) = 2 Hz; its bilinear
	// high-pass maps 20 Hz to 49 Hz analog and passes it at |H|^2 =
	// 49^2/(49^2+2^2) = 0.998; it leaves 0.25 % of a 0.1 Hz, 2 m/s^2
	// manoeuvre and nothing of gravity.
	vib := func(t float64) (x, y, z float64) {
		return math.Sin(2*math.Pi*20*t) + 2*math.Sin(2*math.Pi*0.1*t), 0, 0.5 * math.Sin(2*math.Pi*20*t+1)
	}
	gain := 0.998
	// Rotors at 1200 rpm turn at 20 Hz, below the 25 Hz Nyquist frequency:
	// the tone is the rotor's, resolvable, and its frequency is reported.
	m, err := Analyze(parseString(t, flight{rpm: [4]float64{1200, 1200, 1200, 1200}, vib: vib}.csv()), Params{})
	if err != nil {
		t.Fatal(err)
	}
	v := m.Vibration
	t.Logf("vibration x %s y %s z %s peak %s Hz at %.4g Hz, cut-off %.3g Hz", fmtPtr(v.X), fmtPtr(v.Y), fmtPtr(v.Z), fmtPtr(v.PeakHz), v.SampleHz, v.CutoffHz)
	near(t, "vibration x", v.X, gain/math.Sqrt2, 0.01, "RMS of a sine")
	near(t, "vibration y", v.Y, 0, 1e-9, "no signal")
	near(t, "vibration z", v.Z, 0.5*gain/math.Sqrt2, 0.005, "RMS of a sine")
	// 2451 airborne samples give 2048-point Welch segments: bins of 50/2048 Hz.
	near(t, "peak_hz", v.PeakHz, 20, 50.0/2048, "tone frequency, one FFT bin")
	near(t, "rotor_hz", v.RotorHz, 20, 1e-9, "1200 rpm / 60")
	near(t, "sample_hz", &v.SampleHz, 50, 1e-9, "construction")
	near(t, "cutoff_hz", &v.CutoffHz, 2, 0, "min(2, 25/10)")
	if v.RotorResolvable == nil || !*v.RotorResolvable || v.Caveat != "" {
		t.Errorf("20 Hz rotor at 50 Hz sampling: resolvable %v, caveat %q", v.RotorResolvable, v.Caveat)
	}
	// Rotors at 6000 rpm turn at 100 Hz, above the Nyquist frequency: the
	// 20 Hz line can only be an alias or something else, so no peak is
	// reported, the RMS is given as broadband with the caveat.
	m, _ = Analyze(parseString(t, flight{rpm: [4]float64{6000, 6000, 6000, 6000}, vib: vib}.csv()), Params{})
	v = m.Vibration
	near(t, "broadband x", v.X, gain/math.Sqrt2, 0.01, "RMS of a sine")
	if v.PeakHz != nil || v.RotorResolvable == nil || *v.RotorResolvable ||
		!strings.HasPrefix(v.Caveat, "rotor vibration not resolvable at 50 Hz") || !slices.Contains(m.Notes, v.Caveat) {
		t.Errorf("100 Hz rotor at 50 Hz sampling: peak %s, resolvable %v, caveat %q", fmtPtr(v.PeakHz), v.RotorResolvable, v.Caveat)
	}
	// A 10 Hz log: the corner follows the sample rate, min(2 Hz, 5 Hz / 10)
	// = 0.5 Hz, so a 1.5 Hz vibration keeps its RMS: the bilinear map sends
	// 1.5 Hz at 10 Hz sampling to (10/pi) tan(0.15 pi) = 1.622 Hz analog, and
	// the forward-backward first-order high-pass passes 1.622^2 /
	// (1.622^2 + 0.5^2) = 0.913 of the amplitude (computed). A fixed 2 Hz
	// corner passed 1.622^2 / (1.622^2 + 2^2) = 0.397: most of the band gone.
	slow := func(t float64) (x, y, z float64) { return math.Sin(2 * math.Pi * 1.5 * t), 0, 0 }
	m, _ = Analyze(parseString(t, flight{rpm: [4]float64{1200, 1200, 1200, 1200}, vib: slow, dt: 0.1}.csv()), Params{})
	near(t, "10 Hz cutoff_hz", &m.Vibration.CutoffHz, 0.5, 1e-9, "min(2, 5/10)")
	near(t, "10 Hz vibration x", m.Vibration.X, 0.913/math.Sqrt2, 0.01, "RMS of a sine through the high-pass")
	// An explicit corner is kept.
	m, _ = Analyze(parseString(t, flight{rpm: [4]float64{1200, 1200, 1200, 1200}, vib: vib}.csv()), Params{VibrationCutoffHz: 5})
	near(t, "explicit cutoff_hz", &m.Vibration.CutoffHz, 5, 0, "given")
}

func TestEvents(t *testing.T) {
	f := flight{
		rpm: [4]float64{5000, 5000, 5000, 5000},
		current: func(t float64) float64 {
			switch {
			case t >= 20 && t < 21: // 1 s at 15 A: sustained overcurrent
				return 15
			case math.Abs(t-30) < 1e-9: // one sample at 40 A: not sustained
				return 40
			}
			return 9
		},
		cellDip:      [2]float64{40, 41},
		landingSpike: 2.8,
	}
	p := Params{Chemistry: fleet.LiPo, RatedMah: 1000, CRating: 10}
	m, err := Analyze(parseString(t, f.csv()), p)
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]Event{}
	for _, e := range m.Events {
		got[e.Kind] = e
	}
	// Limits: 10 C x 1000 mAh = 10 A; LiPo floor 3.0 V (fleet, common
	// practice); hard landing 2.5 g (default).
	want := []Event{
		{Kind: "overcurrent", AtS: 20, Value: 15, Limit: 10, Severity: "critical"},
		{Kind: "overdischarge", AtS: 40, Value: 2.9, Limit: 3.0, Severity: "warning"},
		{Kind: "hard_landing", AtS: 54.5, Value: 2.8, Limit: 2.5, Severity: "warning"},
	}
	for _, w := range want {
		e, ok := got[w.Kind]
		if !ok {
			t.Errorf("no %s event", w.Kind)
			continue
		}
		if math.Abs(e.AtS-w.AtS) > 1e-9 || math.Abs(e.Value-w.Value) > 1e-9 || e.Limit != w.Limit || e.Severity != w.Severity || e.Detail == "" {
			t.Errorf("%s = %+v, want %+v", w.Kind, e, w)
		}
	}
	if len(m.Events) != len(want) {
		t.Errorf("events = %+v", m.Events)
	}
	// Per cell: cell 3 dips to 2.9 V, the others go no lower than the pack's
	// 22.2 V / 6 aloft (construction).
	if len(m.MinCellsV) != 6 {
		t.Fatalf("min_cells_v %v", m.MinCellsV)
	}
	for i, v := range m.MinCellsV {
		want := 22.2 / 6
		if i == 2 {
			want = 2.9
		}
		near(t, fmt.Sprintf("min cell %d", i+1), v, want, 1e-4, "construction, 4 decimals in the log")
	}
	// A 0.1 s dip is shorter than the 0.5 s needed, and the 40 A sample alone
	// never counted; with the landing limit raised no event remains.
	p.HardLandingG, p.CRating = 3, 20
	f.cellDip = [2]float64{40, 40.1}
	m, _ = Analyze(parseString(t, f.csv()), p)
	if len(m.Events) != 0 {
		t.Errorf("events with raised limits and a short dip = %+v, want none", m.Events)
	}
}

func TestParamsAndSpans(t *testing.T) {
	l := parseFile(t, "example.csv")
	for _, p := range []Params{{MassKg: -1}, {SiteElevationM: math.NaN()}, {Rotors: -4},
		{Airborne: &Span{FromS: 2, ToS: 1}}, {RPMBinWidth: math.Inf(1)}} {
		_, err := Analyze(l, p)
		if fleet.ErrorCode(err) != fleet.EINVALID {
			t.Errorf("Analyze(%+v) err = %v, want invalid", p, err)
		}
	}
	if _, err := Analyze(&Log{}, Params{}); err == nil {
		t.Errorf("empty log analysed")
	}
	// The documented example analyses with every figure its columns allow.
	m, err := Analyze(l, Params{MassKg: 2, RotorDiameterM: 0.3})
	if err != nil {
		t.Fatal(err)
	}
	if m.ThrustK == nil || m.HoverRPM == nil || m.MaxAltM == nil || m.DistanceM == nil ||
		m.LandingG == nil || m.MinCellSource != "cells" || m.AirDensitySource != "baro_temp" || len(m.Motors) != 4 {
		t.Errorf("example log figures missing: %+v", m)
	}
	// A given airborne span replaces the one found from rpm.
	m, _ = Analyze(l, Params{Airborne: &Span{FromS: 1.5, ToS: 2}})
	near(t, "airborne_from_s", m.AirborneFromS, 1.5, 0, "given span")
	// Bins of a varying rpm add up to the motor's revolutions and turning time.
	f := flight{rpm: [4]float64{3000, 4000, 5000, 6000}}
	csv := f.csv()
	m, _ = Analyze(parseString(t, csv), Params{RPMBinWidth: 500, IdleRPM: 3500})
	for i, mr := range m.Motors {
		var revs, secs float64
		for _, b := range mr.Bins {
			revs += b.Revolutions
			secs += b.Seconds
			if b.RPMHi-b.RPMLo != 500 {
				t.Errorf("bin width %v", b.RPMHi-b.RPMLo)
			}
		}
		// Turning time: from the last stopped sample to the first after the
		// rotors stop, the rpm being linear between samples.
		if math.Abs(revs-mr.Revolutions) > 1e-9 || math.Abs(secs-(fDown-fUp+2*fDt)) > 1e-9 {
			t.Errorf("%s: bins hold %v rev %v s, motor %v rev", mr.Position, revs, secs, mr.Revolutions)
		}
		// m1 at 3000 rpm stays under the 3500 rpm idle threshold: no run time.
		if (i == 0) != (mr.RunS == 0) || (i == 0) != (mr.MeanRPM == nil) {
			t.Errorf("%s run %v mean %v with idle 3500 rpm", mr.Position, mr.RunS, mr.MeanRPM)
		}
	}
}

// OnAirborne hears the airborne span once, before the analysis returns,
// with the values the metrics then carry (the synthetic hover's edges, by
// construction); a given span is heard as found inside the log.
func TestOnAirborneHearsTheSpan(t *testing.T) {
	f := flight{rpm: [4]float64{5000, 5100, 4900, 5000}, baro: true, gps: true, climbM: 40}
	log := parseString(t, f.csv())
	for _, given := range []*Span{nil, {FromS: fUp + 1, ToS: fDown - 1}} {
		var heard [][2]float64
		m, err := Analyze(log, Params{MassKg: 1.5, RotorDiameterM: 0.254, Rotors: 4, Airborne: given,
			OnAirborne: func(from, to float64) { heard = append(heard, [2]float64{from, to}) }})
		if err != nil {
			t.Fatal(err)
		}
		if len(heard) != 1 || m.AirborneFromS == nil || m.AirborneToS == nil ||
			heard[0] != [2]float64{*m.AirborneFromS, *m.AirborneToS} {
			t.Fatalf("given %v: heard %v, metrics %v..%v", given, heard, m.AirborneFromS, m.AirborneToS)
		}
		if given == nil && (heard[0][0] != fUp || heard[0][1] != fDown) {
			t.Errorf("heard %v, the hover lifts at %v and lands at %v", heard[0], fUp, fDown)
		}
	}
}
