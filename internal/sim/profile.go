package sim

import (
	"errors"
	"math"
	"math/rand/v2"
	"sort"
)

// Vertical profile constants (common practice for survey multirotors).
const (
	climbRate   = 2.5 // m/s
	climbAcc    = 1.2 // m/s^2, i.e. about +12 % thrust
	descentRate = 2.0 // m/s
	descentAcc  = 1.0 // m/s^2
	flareHeight = 2.0 // m, final approach at touchdown speed
)

// vseg is a constant-acceleration piece of the airborne vertical profile.
type vseg struct{ t0, t1, a, v0, h0 float64 }

// pathPt is a survey-path vertex in local east/north metres with the path
// length s up to it.
type pathPt struct{ e, n, s float64 }

// plan is the deterministic timeline of one flight.
type plan struct {
	tIdle, tSpin, tTO, tTD, tRampEnd, tIdleEnd, tSpinEnd, tEnd float64
	tc0, tc1                                                   float64 // cruise window
	segs                                                       []vseg
	path                                                       []pathPt
	speed                                                      float64
	vTouch                                                     float64
	maxH                                                       float64
	breaks                                                     []float64
	seg, leg                                                   int // monotone cursors
}

// touchdownSpeed links the planted landing load to a sink rate, so a hard
// landing is also a fast one (assumption, not a measured relation).
func touchdownSpeed(landingG float64) float64 {
	return math.Min(0.4+math.Max(0, landingG-2)*0.8, 0.9*descentRate)
}

func newPlan(s *FlightSpec, rng *rand.Rand) (*plan, error) {
	p := &plan{vTouch: touchdownSpeed(s.LandingG)}
	p.tIdle = restBeforeS
	p.tSpin = p.tIdle + idleS
	p.tTO = p.tSpin + spinUpS
	H := s.CruiseHeightM
	climbS := 2*climbRate/climbAcc + (H-climbRate*climbRate/climbAcc)/climbRate
	vt := p.vTouch
	dropAcc := descentRate * descentRate / (2 * descentAcc)
	dropDec := (descentRate*descentRate - vt*vt) / (2 * descentAcc)
	descentS := descentRate/descentAcc + (H-dropAcc-dropDec-flareHeight)/descentRate +
		(descentRate-vt)/descentAcc + flareHeight/vt
	ground := restBeforeS + idleS + spinUpS + rampDownS + idleAfterS + spinDownS + restAfterS
	cruiseS := s.DurationS - ground - climbS - descentS
	if cruiseS < 10 {
		return nil, errors.New("sim: duration_s too short for the climb, 10 s of cruise and the descent")
	}
	// Vertical segments, built with exact kinematics so the touchdown is at h = 0.
	t := p.tTO
	var v, h float64
	add := func(a, dur float64) {
		if dur <= 0 {
			return
		}
		p.segs = append(p.segs, vseg{t0: t, t1: t + dur, a: a, v0: v, h0: h})
		if a < 0 && v > 0 && -v/a < dur {
			p.maxH = math.Max(p.maxH, h-v*v/(2*a)) // apex inside the segment
		}
		h += v*dur + a*dur*dur/2
		v += a * dur
		t += dur
		p.maxH = math.Max(p.maxH, h)
	}
	add(climbAcc, climbRate/climbAcc)
	add(0, (H-h-climbRate*climbRate/(2*climbAcc))/climbRate)
	add(-climbAcc, climbRate/climbAcc)
	v = 0 // remove rounding: the climb ends at rest by construction
	p.tc0 = t
	p.tc1 = t + cruiseS
	// Cruise: level flight with throttle doublets (+a, -a, +a over tau, 2 tau,
	// tau) that return to the same height and speed, giving current steps.
	next := p.tc0 + 3 + 10*rng.Float64()
	for {
		tau := 0.8 + 0.8*rng.Float64()
		if next+4*tau > p.tc1-1 {
			break
		}
		a := (1 + 1.5*rng.Float64())
		if rng.IntN(2) == 0 {
			a = -a
		}
		add(0, next-t)
		add(a, tau)
		add(-a, 2*tau)
		add(a, tau)
		v, h = 0, H
		next = t + 8 + 12*rng.Float64()
	}
	add(0, p.tc1-t)
	h = H
	add(-descentAcc, descentRate/descentAcc)
	add(0, (h-dropDec-flareHeight)/descentRate)
	add(descentAcc, (descentRate-vt)/descentAcc)
	add(0, h/vt)
	p.tTD = t
	p.tRampEnd = p.tTD + rampDownS
	p.tIdleEnd = p.tRampEnd + idleAfterS
	p.tSpinEnd = p.tIdleEnd + spinDownS
	p.tEnd = s.DurationS
	p.buildPath(s, rng)
	p.breaks = []float64{0, p.tIdle, p.tSpin, p.tTO, p.tTD, p.tTD + impactS, p.tRampEnd, p.tIdleEnd, p.tSpinEnd, p.tEnd}
	for _, sg := range p.segs {
		p.breaks = append(p.breaks, sg.t0)
	}
	for _, pt := range p.path {
		p.breaks = append(p.breaks, p.tc0+pt.s/p.speed)
	}
	sort.Float64s(p.breaks)
	return p, nil
}

// buildPath lays a lawn-mower survey from the take-off point: n legs of
// length L spaced LegSpacingM apart at a random heading, then straight home;
// L is solved so that the path takes exactly the cruise time at CruiseSpeedMS.
func (p *plan) buildPath(s *FlightSpec, rng *rand.Rand) {
	total := s.CruiseSpeedMS * (p.tc1 - p.tc0)
	sp := s.LegSpacingM
	head := 2 * math.Pi * rng.Float64()
	ue, un := math.Sin(head), math.Cos(head)
	we, wn := un, -ue // 90 degrees right of the legs
	n := max(1, int(math.Round(total/(250+sp))))
	verts := func(L float64, n int) []pathPt {
		pts := []pathPt{{}}
		e, no := 0.0, 0.0
		for i := range n {
			dir := 1.0
			if i%2 == 1 {
				dir = -1
			}
			e += dir * L * ue
			no += dir * L * un
			pts = append(pts, pathPt{e: e, n: no})
			if i < n-1 {
				e += sp * we
				no += sp * wn
				pts = append(pts, pathPt{e: e, n: no})
			}
		}
		pts = append(pts, pathPt{})
		for i := 1; i < len(pts); i++ {
			pts[i].s = pts[i-1].s + math.Hypot(pts[i].e-pts[i-1].e, pts[i].n-pts[i-1].n)
		}
		return pts
	}
	// Path length for leg length L: n legs, n-1 spacings, and the straight
	// return, which after an odd number of legs also crosses back one leg.
	length := func(L float64) float64 {
		side := float64(n-1) * sp
		ret := side
		if n%2 == 1 {
			ret = math.Hypot(L, side)
		}
		return float64(n)*L + side + ret
	}
	for n > 1 && length(0) >= total {
		n--
	}
	lo, hi := 0.0, total
	for range 60 {
		if mid := (lo + hi) / 2; length(mid) < total {
			lo = mid
		} else {
			hi = mid
		}
	}
	p.path = verts((lo+hi)/2, n)
	p.speed = p.path[len(p.path)-1].s / (p.tc1 - p.tc0)
}

// vertical returns height, vertical speed and acceleration at t.
func (p *plan) vertical(t float64) (h, v, a float64) {
	if t < p.tTO || t >= p.tTD || len(p.segs) == 0 {
		return 0, 0, 0
	}
	for p.seg > 0 && t < p.segs[p.seg].t0 {
		p.seg--
	}
	for p.seg < len(p.segs)-1 && t >= p.segs[p.seg].t1 {
		p.seg++
	}
	sg := &p.segs[p.seg]
	d := t - sg.t0
	return sg.h0 + sg.v0*d + sg.a*d*d/2, sg.v0 + sg.a*d, sg.a
}

// position returns local east/north metres at t.
func (p *plan) position(t float64) (e, n float64) {
	if t <= p.tc0 || t >= p.tc1 {
		return 0, 0
	}
	s := (t - p.tc0) * p.speed
	for p.leg > 0 && s < p.path[p.leg].s {
		p.leg--
	}
	for p.leg < len(p.path)-2 && s >= p.path[p.leg+1].s {
		p.leg++
	}
	a, b := p.path[p.leg], p.path[p.leg+1]
	f := (s - a.s) / (b.s - a.s)
	return a.e + f*(b.e-a.e), a.n + f*(b.n-a.n)
}

// distance is the length of the flown path (local ENU metres).
func (p *plan) distance() float64 { return p.path[len(p.path)-1].s }

// localToLatLon converts local east/north metres to WGS 84 degrees with the
// meridian and prime-vertical radii of curvature at the origin (a local
// tangent-plane approximation; relative error ~1e-4 over a few km).
func localToLatLon(lat0, lon0, e, n float64) (lat, lon float64) {
	const a, f = 6378137.0, 1 / 298.257223563 // WGS 84
	e2 := f * (2 - f)
	phi := lat0 * math.Pi / 180
	sp := math.Sin(phi)
	w := math.Sqrt(1 - e2*sp*sp)
	rn := a / w                      // prime vertical
	rm := a * (1 - e2) / (w * w * w) // meridian
	return lat0 + n/rm*180/math.Pi, lon0 + e/(rn*math.Cos(phi))*180/math.Pi
}
