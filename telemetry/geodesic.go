package telemetry

import (
	"errors"
	"fmt"
	"math"
)

// Ellipsoid is a reference ellipsoid: equatorial radius A (m) and flattening F.
type Ellipsoid struct {
	A, F float64
}

// Reference ellipsoids: WGS 84 (GNSS coordinates) and GRS 80 (the Vincenty
// worked example of the GDA technical manual). They differ by under 1e-10 in F.
var (
	WGS84 = Ellipsoid{A: 6378137, F: 1 / 298.257223563}
	GRS80 = Ellipsoid{A: 6378137, F: 1 / 298.257222101}
)

// ErrNoConvergence reports Vincenty's iteration failing, which happens only for
// nearly antipodal points (never for a flight).
var ErrNoConvergence = errors.New("telemetry: geodesic inverse did not converge (nearly antipodal points)")

// Inverse is the geodesic distance (m) and forward azimuth (deg clockwise from
// north, 0..360) from (lat1, lon1) to (lat2, lon2), degrees on WGS 84.
func Inverse(lat1, lon1, lat2, lon2 float64) (metres, azimuth1Deg float64, err error) {
	return WGS84.Inverse(lat1, lon1, lat2, lon2)
}

// Inverse solves the inverse geodesic problem on e by Vincenty's method
// (T. Vincenty, Survey Review 23(176), 1975), converged to 1e-12 rad.
func (e Ellipsoid) Inverse(lat1, lon1, lat2, lon2 float64) (metres, azimuth1Deg float64, err error) {
	for _, v := range [...]float64{lat1, lat2} {
		if !(v >= -90 && v <= 90) {
			return 0, 0, fmt.Errorf("telemetry: latitude %g outside -90..90", v)
		}
	}
	if math.IsNaN(lon1) || math.IsNaN(lon2) || math.IsInf(lon1, 0) || math.IsInf(lon2, 0) {
		return 0, 0, errors.New("telemetry: longitude is not finite")
	}
	a, f := e.A, e.F
	b := a * (1 - f)
	l := math.Remainder(lon2-lon1, 360) * math.Pi / 180
	u1 := math.Atan((1 - f) * math.Tan(lat1*math.Pi/180))
	u2 := math.Atan((1 - f) * math.Tan(lat2*math.Pi/180))
	sinU1, cosU1 := math.Sincos(u1)
	sinU2, cosU2 := math.Sincos(u2)

	lambda := l
	var sinSigma, cosSigma, sigma, cos2Alpha, cos2SigmaM, sinLambda, cosLambda float64
	converged := false
	for range 200 {
		sinLambda, cosLambda = math.Sincos(lambda)
		sinSigma = math.Hypot(cosU2*sinLambda, cosU1*sinU2-sinU1*cosU2*cosLambda)
		if sinSigma == 0 {
			return 0, 0, nil // coincident points
		}
		cosSigma = sinU1*sinU2 + cosU1*cosU2*cosLambda
		sigma = math.Atan2(sinSigma, cosSigma)
		sinAlpha := cosU1 * cosU2 * sinLambda / sinSigma
		cos2Alpha = 1 - sinAlpha*sinAlpha
		cos2SigmaM = 0 // an equatorial line
		if cos2Alpha != 0 {
			cos2SigmaM = cosSigma - 2*sinU1*sinU2/cos2Alpha
		}
		c := f / 16 * cos2Alpha * (4 + f*(4-3*cos2Alpha))
		prev := lambda
		lambda = l + (1-c)*f*sinAlpha*(sigma+c*sinSigma*(cos2SigmaM+c*cosSigma*(-1+2*cos2SigmaM*cos2SigmaM)))
		if math.Abs(lambda-prev) < 1e-12 {
			converged = true
			break
		}
	}
	if !converged {
		return 0, 0, ErrNoConvergence
	}
	uu := cos2Alpha * (a*a - b*b) / (b * b)
	bigA := 1 + uu/16384*(4096+uu*(-768+uu*(320-175*uu)))
	bigB := uu / 1024 * (256 + uu*(-128+uu*(74-47*uu)))
	c2 := cos2SigmaM * cos2SigmaM
	dSigma := bigB * sinSigma * (cos2SigmaM + bigB/4*(cosSigma*(-1+2*c2)-
		bigB/6*cos2SigmaM*(-3+4*sinSigma*sinSigma)*(-3+4*c2)))
	metres = b * bigA * (sigma - dSigma)
	az := math.Atan2(cosU2*sinLambda, cosU1*sinU2-sinU1*cosU2*cosLambda) * 180 / math.Pi
	if az < 0 {
		az += 360
	}
	return metres, az, nil
}

// ecef is a point on the ellipsoid surface in Earth-centred Cartesian metres.
type ecef struct{ x, y, z float64 }

// surfacer gives the points of a run of fixes on the ellipsoid surface: a latitude or longitude equal
// to the previous fix's reuses its sine and cosine (GNSS fixes repeat
// when the receiver updates slower than the log): the same point to the
// bit as computing each afresh.
type surfacer struct {
	e                 Ellipsoid
	lat, lon          float64 // the previous fix; NaN before the first
	sp, cp, n, sl, cl float64
}

func newSurfacer(e Ellipsoid) surfacer {
	return surfacer{e: e, lat: math.NaN(), lon: math.NaN()}
}

func (s *surfacer) at(lat, lon float64) ecef {
	e2 := s.e.F * (2 - s.e.F)
	if lat != s.lat {
		s.lat = lat
		s.sp, s.cp = math.Sincos(lat * math.Pi / 180)
		s.n = s.e.A / math.Sqrt(1-e2*s.sp*s.sp)
	}
	if lon != s.lon {
		s.lon = lon
		s.sl, s.cl = math.Sincos(lon * math.Pi / 180)
	}
	n := s.n
	return ecef{n * s.cp * s.cl, n * s.cp * s.sl, n * (1 - e2) * s.sp}
}

func chord(p, q ecef) float64 {
	return math.Sqrt((p.x-q.x)*(p.x-q.x) + (p.y-q.y)*(p.y-q.y) + (p.z-q.z)*(p.z-q.z))
}

// chordLimit is the longest segment measured by its straight chord: the chord
// falls short of the surface arc by about s^3/(24 R^2), under 1 micrometre at 1 km.
const chordLimit = 1000.0

// track measures a lat/lon track on WGS 84: the distance along it (sum of
// geodesic segments) and the largest geodesic distance from its first point.
func track(lat, lon []float64) (dist, maxRange float64, err error) {
	if len(lat) == 0 {
		return 0, 0, nil
	}
	sf := newSurfacer(WGS84)
	first := sf.at(lat[0], lon[0])
	prev := first
	far, farChord := 0, 0.0
	for i := 1; i < len(lat); i++ {
		pt := sf.at(lat[i], lon[i])
		c := chord(prev, pt)
		prev = pt
		if c >= chordLimit {
			s, _, err := Inverse(lat[i-1], lon[i-1], lat[i], lon[i])
			if err != nil {
				return 0, 0, err
			}
			c = s
		}
		dist += c
		if r := chord(first, pt); r > farChord {
			far, farChord = i, r
		}
	}
	// Geodesic length exceeds the chord by about c^3 / (24 rho^2), and rho (the
	// normal-section radius) varies by about 1 % with direction, so chord and
	// geodesic can order two points differently only when their ranges differ
	// by under 2e-23 c^3 m (1e-8 m at 10 km): the farthest chord is the farthest point.
	if far > 0 {
		s, _, err := Inverse(lat[0], lon[0], lat[far], lon[far])
		if err != nil {
			return 0, 0, err
		}
		maxRange = s
	}
	return dist, maxRange, nil
}
