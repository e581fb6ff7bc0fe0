package sim

import (
	"math"
	"testing"
)

// vincentyInverse is Vincenty's (1975) inverse formula on an ellipsoid, here
// only as an independent yardstick for the simulator's local-ENU distances.
func vincentyInverse(lat1, lon1, lat2, lon2, a, f float64) float64 {
	rad := math.Pi / 180
	b := a * (1 - f)
	u1 := math.Atan((1 - f) * math.Tan(lat1*rad))
	u2 := math.Atan((1 - f) * math.Tan(lat2*rad))
	l := (lon2 - lon1) * rad
	su1, cu1 := math.Sincos(u1)
	su2, cu2 := math.Sincos(u2)
	lam := l
	var sig, ssig, csig, c2sm, cos2a float64
	for range 200 {
		sl, cl := math.Sincos(lam)
		ssig = math.Hypot(cu2*sl, cu1*su2-su1*cu2*cl)
		if ssig == 0 {
			return 0
		}
		csig = su1*su2 + cu1*cu2*cl
		sig = math.Atan2(ssig, csig)
		sa := cu1 * cu2 * sl / ssig
		cos2a = 1 - sa*sa
		c2sm = 0
		if cos2a != 0 {
			c2sm = csig - 2*su1*su2/cos2a
		}
		c := f / 16 * cos2a * (4 + f*(4-3*cos2a))
		prev := lam
		lam = l + (1-c)*f*sa*(sig+c*ssig*(c2sm+c*csig*(-1+2*c2sm*c2sm)))
		if math.Abs(lam-prev) < 1e-13 {
			break
		}
	}
	u2s := cos2a * (a*a - b*b) / (b * b)
	A := 1 + u2s/16384*(4096+u2s*(-768+u2s*(320-175*u2s)))
	B := u2s / 1024 * (256 + u2s*(-128+u2s*(74-47*u2s)))
	ds := B * ssig * (c2sm + B/4*(csig*(-1+2*c2sm*c2sm)-B/6*c2sm*(-3+4*ssig*ssig)*(-3+4*c2sm*c2sm)))
	return b * A * (sig - ds)
}

func dms(d, m, s float64) float64 { return math.Copysign(math.Abs(d)+m/60+s/3600, d) }

// Geoscience Australia's worked example (GDA technical manual, GRS 80):
// Flinders Peak to Buninyong is 54 972.271 m.
func TestVincentyYardstick(t *testing.T) {
	d := vincentyInverse(dms(-37, 57, 3.72030), dms(144, 25, 29.52440),
		dms(-37, 39, 10.15610), dms(143, 55, 35.38390), 6378137, 1/298.257222101)
	if math.Abs(d-54972.271) > 0.001 {
		t.Fatalf("Vincenty distance %.4f m, want 54972.271", d)
	}
}

// The generated track's length on the WGS 84 ellipsoid matches the
// simulator's local-ENU truth (the track is sampled, so corners are cut by
// centimetres; the tangent-plane error is ~1e-4 over a survey).
func TestTrackDistanceGeodesic(t *testing.T) {
	for _, lat := range []float64{0.5, 47.1, 64} {
		s := quietSpec(17)
		s.Lat, s.SampleHz = lat, 50
		tr, log := generate(t, s)
		pl := parseLog(t, log)
		la, lo := pl.col(t, "lat"), pl.col(t, "lon")
		var d float64
		for k := 1; k < len(la); k++ {
			if la[k] != la[k-1] || lo[k] != lo[k-1] {
				d += vincentyInverse(la[k-1], lo[k-1], la[k], lo[k], 6378137, 1/298.257223563)
			}
		}
		t.Logf("lat %g: rel err %.2g", lat, relErr(d, tr.DistanceM))
		if relErr(d, tr.DistanceM) > 5e-4 {
			t.Errorf("lat %g: geodesic track %.2f m, truth %.2f m", lat, d, tr.DistanceM)
		}
	}
}
