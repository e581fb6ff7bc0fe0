package wear

import (
	"math"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
)

func near(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if math.IsNaN(got) || math.Abs(got-want) > tol {
		t.Errorf("%s = %.10g, want %.10g ± %g", what, got, want, tol)
	}
}

func relNear(t *testing.T, what string, got, want, rel float64) {
	t.Helper()
	if math.IsNaN(got) || math.Abs(got-want) > rel*math.Abs(want) {
		t.Errorf("%s = %.15g, want %.15g (relative tolerance %g)", what, got, want, rel)
	}
}

func TestL10Hours(t *testing.T) {
	// ISO 281 hours form L10h = 10^6/(60 n) (C/P)^3 (computed):
	// C/P = 20, n = 8000 r/min -> 10^6/480000 * 8000 = 16666.67 h.
	h, err := L10Hours(Ball, 2000, 100, 8000)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "L10h", h, 1e6/480000*8000, 1e-9)
	// Shigley, Mechanical Engineering Design, Example 11-1 (from memory): a
	// ball bearing for 5 kh at 1725 r/min under 1 kN needs C10 = 8.03 kN; so
	// C = 8.03 kN at 1 kN and 1725 r/min gives about 5000 h (C rounded).
	h, err = L10Hours(Ball, 8030, 1000, 1725)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "Shigley 11-1 L10h", h, 5000, 5000*0.002)
	if _, err := L10Hours(Ball, 2000, 0, 8000); fleet.ErrorCode(err) != fleet.EINVALID {
		t.Errorf("zero load: got %v, want invalid", err)
	}
	if _, err := L10(BearingType("needle"), 2000, 100); fleet.ErrorCode(err) != fleet.EINVALID {
		t.Errorf("unknown type: got %v, want invalid", err)
	}
}

// ISO 281 life exponents, ball 3 and roller 10/3, against two worked
// problems of one source: Shigley's Mechanical Engineering Design, 8th
// edition (Budynas and Nisbett), solutions manual, chapter 11.
func TestLifeExponentShigley(t *testing.T) {
	// Problem 11-2, angular-contact ball bearing: design life 50 kh at
	// 480 rev/min, x_D = 50000 (480) (60) / 10^6 = 1440 rating lives; design
	// load F_D = 1.4 (610) = 854 lbf; C10 = 9665 lbf. Shigley reaches C10
	// through his Weibull reliability relation at R = 0.90 (x0 = 0.02,
	// theta - x0 = 4.439, b = 1.483), so the rating life it gives is
	// x_D / (x0 + (theta - x0) (ln 1/R)^(1/b)) = 1440 / 0.99348 = 1449.4.
	// Tolerance 0.05 %: C10 given to the pound (3 x 0.005 %).
	lives := 1440 / (0.02 + 4.439*math.Pow(math.Log(1/0.9), 1/1.483))
	l, err := L10(Ball, 9665, 854)
	if err != nil {
		t.Fatal(err)
	}
	relNear(t, "ball L10 (Shigley 8e 11-2)", l, lives, 5e-4)

	// Problem 11-3, straight (cylindrical) roller bearing on the same shaft:
	// x_D = 1440, F_D = 1.4 (1650) = 2310 lbf = 10.279 kN, R = 0.90 taken as
	// the rating reliability: C10 = 10.279 (1440)^(3/10) = 91.1 kN. So
	// (91.1 / 10.279)^(10/3) must give back 1440 rating lives. Tolerance
	// 0.2 %: C10 given to three figures (10/3 x 0.055 %).
	l, err = L10(Roller, 91.1, 10.279)
	if err != nil {
		t.Fatal(err)
	}
	relNear(t, "roller L10 (Shigley 8e 11-3)", l, 1440, 2e-3)
	// The ball exponent on the same bearing would be far off: (8.863)^3 = 696.
	if lb, _ := L10(Ball, 91.1, 10.279); math.Abs(lb/1440-1) < 0.5 {
		t.Errorf("ball exponent gives %v: the test does not tell the exponents apart", lb)
	}

	// The type carries through the duty-cycle and Palmgren-Miner routes,
	// which still agree (the computed example of REFERENCES.md section 1,
	// with p = 10/3).
	pm, nm, err := DutyCycleMean(Roller, refDuty)
	if err != nil {
		t.Fatal(err)
	}
	viaMean, _ := L10Hours(Roller, 2000, pm, nm)
	viaMiner, err := MinerLifeHours(Roller, 2000, refDuty)
	if err != nil {
		t.Fatal(err)
	}
	relNear(t, "roller routes agree", viaMiner, viaMean, 1e-12)
	ballMiner, _ := MinerLifeHours(Ball, 2000, refDuty)
	if math.Abs(viaMiner/ballMiner-1) < 0.1 {
		t.Errorf("roller %v h vs ball %v h: exponent not applied", viaMiner, ballMiner)
	}
}

func TestReliabilityFactorISO281_2007(t *testing.T) {
	// ISO 281:2007 a1 table (REFERENCES.md section 1); the 1990 edition's
	// 0.62/0.53/0.44/0.33/0.21 must not appear.
	for _, c := range []struct{ r, a1 float64 }{
		{90, 1}, {95, 0.64}, {96, 0.55}, {97, 0.47}, {98, 0.37}, {99, 0.25},
	} {
		got, err := ReliabilityFactor(c.r)
		if err != nil {
			t.Fatal(err)
		}
		near(t, "a1", got, c.a1, 0)
	}
	for _, r := range []float64{93, 99.5, 50, 100} {
		if _, err := ReliabilityFactor(r); fleet.ErrorCode(err) != fleet.EINVALID {
			t.Errorf("reliability %g: got %v, want refusal", r, err)
		}
	}
	// Lnm = a1 a_ISO L10 (ISO 281:2007): 99 % and a_ISO 2 -> 0.25 * 2 * 8000.
	l, err := ModifiedLife(Ball, 2000, 100, 99, 2)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "Lnm", l, 0.25*2*8000, 1e-9)
}

func TestEquivalentLoadShigley(t *testing.T) {
	// Shigley 8th ed. solutions, problem 11-6: Fr = 8 kN, Fa = 4 kN,
	// C0 = 37.5 kN -> Fa/C0 = 0.107, Y = 1.46, Fe = 10.32 kN. Shigley rounds
	// Y to 1.46; unrounded interpolation gives Y = 1.4628 and 10.331 kN.
	e, y := DeepGrooveFactors(4.0 / 37.5)
	near(t, "Y", y, 1.46, 0.005)
	if 4.0/8.0 <= e {
		t.Fatalf("Fa/Fr = 0.5 should exceed e = %g", e)
	}
	p, err := EquivalentLoad(8, 4, 37.5)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "Fe (kN)", p, 10.32, 0.015)

	// Table rows hit exactly (Shigley Table 11-1).
	e, y = DeepGrooveFactors(0.17)
	near(t, "e(0.17)", e, 0.34, 1e-12)
	near(t, "Y(0.17)", y, 1.31, 1e-12)
	// Fa/Fr <= e: P = Fr (Shigley Table 11-1 rule).
	p, _ = EquivalentLoad(10, 1, 100) // Fa/C0 = 0.01 -> e = 0.19 > 0.1
	near(t, "P small axial", p, 10, 0)
	// Pure axial: P = Y Fa; Fa/C0 = 0.028 -> Y = 1.99.
	p, _ = EquivalentLoad(0, 28, 1000)
	near(t, "P pure axial", p, 1.99*28, 1e-12)
}

// The computed example of REFERENCES.md section 1: C = 2000 N, steps
// (100 N, 8000 r/min, 0.5), (150 N, 12000 r/min, 0.3), (60 N, 5000 r/min,
// 0.2): P_m = 123.9219 N, n_m = 8600 r/min, L10h = 8146.97 h both ways.
var refDuty = []DutyStep{{100, 8000, 0.5}, {150, 12000, 0.3}, {60, 5000, 0.2}}

func TestDutyCycleMeanAndMinerAgree(t *testing.T) {
	pm, nm, err := DutyCycleMean(Ball, refDuty)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "P_m", pm, 123.9219, 5e-5)
	near(t, "n_m", nm, 8600, 1e-9)
	viaMean, err := L10Hours(Ball, 2000, pm, nm)
	if err != nil {
		t.Fatal(err)
	}
	viaMiner, err := MinerLifeHours(Ball, 2000, refDuty)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "L10h via P_m", viaMean, 8146.97, 0.005)
	near(t, "L10h via Miner", viaMiner, 8146.97, 0.005)
	relNear(t, "routes agree", viaMiner, viaMean, 1e-12)

	// The same by the general damage sum D = sum n_i / N_i (Palmgren 1924,
	// Miner 1945) over one hour: revolutions per step over L10 revolutions.
	var used, life []float64
	for _, s := range refDuty {
		l, _ := L10(Ball, 2000, s.LoadN)
		used = append(used, s.RPM*60*s.TimeShare)
		life = append(life, l*1e6)
	}
	d, err := MinerDamage(used, life)
	if err != nil {
		t.Fatal(err)
	}
	near(t, "1 / damage per hour", 1/d, 8146.97, 0.005)
}

func TestDutyCycleRefusesBadSteps(t *testing.T) {
	for _, s := range [][]DutyStep{nil, {{0, 100, 1}}, {{10, 100, 0}}, {{10, -1, 1}}} {
		if _, _, err := DutyCycleMean(Ball, s); err == nil {
			t.Errorf("%v: want error", s)
		}
	}
}
