package telemetry

import (
	"math"
	"testing"
)

func dms(d, m, s float64) float64 { return math.Copysign(math.Abs(d)+m/60+s/3600, d) }

func TestVincentyWorkedExample(t *testing.T) {
	// Geoscience Australia, GDA technical manual, Vincenty inverse worked
	// example on GRS 80 (REFERENCES.md section 6): Flinders Peak to Buninyong,
	// 54 972.271 m, forward azimuth 306 deg 52' 05.37".
	lat1, lon1 := -dms(37, 57, 3.72030), dms(144, 25, 29.52440)
	lat2, lon2 := -dms(37, 39, 10.15610), dms(143, 55, 35.38390)
	s, az, err := GRS80.Inverse(lat1, lon1, lat2, lon2)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(s-54972.271) > 0.0005 {
		t.Errorf("distance = %.4f m, want 54972.271 (GDA manual)", s)
	}
	if want := dms(306, 52, 5.37); math.Abs(az-want)*3600 > 0.005 {
		t.Errorf("azimuth = %.7f deg, want %.7f (306 52 05.37, GDA manual)", az, want)
	}
}

func TestInverseAgainstGeographicLib(t *testing.T) {
	// Reference values: GeographicLib 2.1.2 `GeodSolve -i -p 6` on WGS 84
	// (Karney's algorithm, accurate to nanometres), run in development.
	cases := []struct{ lat1, lon1, lat2, lon2, s, az float64 }{
		{0, 0, 0, 90, 10018754.171395, 90},
		{0, 0, 90, 0, 10001965.729313, 0},
		{47.0, 8.0, 47.001, 8.0005, 117.494936, 18.88383337162},
		{47.001, 8.0005, 47.02, 8.03, 3081.168771, 46.71149417970},
		{-33.9, 151.2, 51.5, -0.12, 16991292.115164, 360 - 40.77278103876},
	}
	for _, c := range cases {
		s, az, err := Inverse(c.lat1, c.lon1, c.lat2, c.lon2)
		if err != nil {
			t.Errorf("%v: %v", c, err)
			continue
		}
		// Vincenty agrees with Karney to well under a millimetre off antipodes, and
		// in azimuth to 1e-6 deg (short lines lose digits to cancellation).
		if math.Abs(s-c.s) > 1e-3 || math.Abs(az-c.az) > 1e-6 {
			t.Errorf("Inverse(%g,%g,%g,%g) = %.6f m %.9f deg, want %.6f m %.9f deg (GeodSolve)",
				c.lat1, c.lon1, c.lat2, c.lon2, s, az, c.s, c.az)
		}
	}
	if s, _, err := Inverse(10, 20, 10, 20); err != nil || s != 0 {
		t.Errorf("coincident points: %v %v", s, err)
	}
	if _, _, err := Inverse(0, 0, 0.5, 179.7); err == nil {
		t.Errorf("nearly antipodal points converged; Vincenty is known not to")
	}
}

func TestTrackAgainstGeographicLib(t *testing.T) {
	// Segments and ranges from GeographicLib 2.1.2 `GeodSolve -i -p 6` (WGS 84):
	// P0->P1 117.494936, P1->P2 3081.168771, P2->P0 3185.548646 m; P0->P2 is
	// the largest range, 3185.548646 m. P1->P2 exercises the exact solver, the
	// others the short-segment chord.
	lat := []float64{47.0, 47.001, 47.02, 47.0}
	lon := []float64{8.0, 8.0005, 8.03, 8.0}
	d, r, err := track(lat, lon)
	if err != nil {
		t.Fatal(err)
	}
	if want := 117.494936 + 3081.168771 + 3185.548646; math.Abs(d-want) > 1e-3 {
		t.Errorf("distance = %.6f, want %.6f (GeodSolve)", d, want)
	}
	if math.Abs(r-3185.548646) > 1e-3 {
		t.Errorf("max range = %.6f, want 3185.548646 (GeodSolve)", r)
	}
	// A 700 m meridian leg in 700 short steps, each measured by its chord:
	// GeodSolve -i -p 9 gives 700.376688567 m for (47, 8) -> (47.0063, 8).
	n := 700
	lat, lon = make([]float64, n+1), make([]float64, n+1)
	for i := range lat {
		lat[i], lon[i] = 47+0.0063*float64(i)/float64(n), 8
	}
	d, _, _ = track(lat, lon)
	if math.Abs(d-700.376688567) > 1e-6 {
		t.Errorf("chord sum %.9f, want 700.376688567 (GeodSolve)", d)
	}
}
