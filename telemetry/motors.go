package telemetry

import (
	"fmt"
	"math"
)

// MotorRun is one motor position's duty in the flight.
type MotorRun struct {
	Position    string   `json:"position"`
	Revolutions float64  `json:"revolutions"` // integral rpm/60 dt over the whole log
	RunS        float64  `json:"run_s"`       // time above idle
	MeanRPM     *float64 `json:"mean_rpm"`    // over the time above idle; null if never above
	// ThrustMeanN is k x mean rpm^2 over the time above idle (needs ThrustK).
	ThrustMeanN *float64 `json:"thrust_mean_n"`
	Bins        []RPMBin `json:"bins"` // load spectrum, turning time only, ascending rpm
}

// RPMBin is one bin [RPMLo, RPMHi) of a motor's load spectrum.
type RPMBin struct {
	RPMLo       float64  `json:"rpm_lo"`
	RPMHi       float64  `json:"rpm_hi"`
	Seconds     float64  `json:"seconds"`
	Revolutions float64  `json:"revolutions"`
	MeanThrustN *float64 `json:"mean_thrust_n"` // k x mean rpm^2 in the bin (needs ThrustK)
}

// rotors computes hover rpm, the thrust constant and each motor's run.
// Each motor's samples are read once (motorPass): its revolutions, its time
// above idle, its load spectrum and its means aloft come from that one pass,
// each sum taken in the order a separate pass takes it, so the figures are
// those of separate passes to the bit.
func (a *analysis) rotors() {
	l, m, p := a.l, a.m, a.p
	if len(l.RPM) == 0 {
		return
	}
	passes := make([]motorPass, len(l.RPM))
	for k := range l.RPM {
		passes[k] = newMotorPass(l.T, a.rpm[k], a.idleRPM, p.RPMBinWidth, a.lo, a.hi)
	}
	if a.lo >= 0 {
		// The mean over rotors of each rotor's mean over its readings aloft.
		var sum float64
		n := 0
		meanSq := make([]float64, len(a.rpm)) // each rotor's mean rpm^2 aloft, for the thrust constant
		for k := range a.rpm {
			v, v2 := passes[k].aloft.means(l.T, a.rpm[k], a.lo, a.hi)
			if meanSq[k] = v2; v == v {
				sum += v
				n++
			}
		}
		if n > 0 {
			m.HoverRPM = ptr(sum / float64(n))
		}
		a.thrustConstant(meanSq)
	}
	for k, r := range l.RPM {
		ps := &passes[k]
		mr := MotorRun{Position: r.Position, Revolutions: ps.revs / 2 / 60, RunS: ps.on}
		if ps.on > 0 {
			mr.MeanRPM = ptr(ps.onRPM / ps.on)
			if m.ThrustK != nil {
				mr.ThrustMeanN = ptr(*m.ThrustK * ps.onRPM2 / ps.on)
			}
		}
		if !ps.binned {
			a.note(fmt.Sprintf("rpm_%s needs more than %d bins of %g rpm: no load spectrum", r.Position, maxBins, p.RPMBinWidth))
		}
		mr.Bins = ps.bins(m.ThrustK)
		m.Motors = append(m.Motors, mr)
	}
}

// thrustConstant: aloft, mean total thrust equals the weight (a flight that
// starts and ends at rest has no net vertical impulse), and T = k rpm^2, so
// k = m g / (N mean(rpm^2)) with the mean over rotors and airborne time
// (each rotor's over its readings; rotors without one aloft left out).
func (a *analysis) thrustConstant(meanSq []float64) {
	l, m, p := a.l, a.m, a.p
	switch {
	case !(p.MassKg > 0):
		a.note("take-off mass unknown: thrust constant and thrust figures are not computed")
		return
	case p.Rotors > 0 && p.Rotors != len(l.RPM):
		a.note(fmt.Sprintf("%d rotors but %d rpm columns: thrust constant is not computed", p.Rotors, len(l.RPM)))
		return
	}
	var sum float64
	n := 0
	for _, v := range meanSq {
		if v == v {
			sum += v
			n++
		}
	}
	if !(sum > 0) {
		return
	}
	m.ThrustK = ptr(p.MassKg * G0 / (sum * float64(len(l.RPM)) / float64(n)))
}

// motorPass is what one pass over a motor's rpm series gathers.
type motorPass struct {
	// revs is twice the trapezoidal integral of rpm over the intervals with
	// a reading at both ends (integral's sum before its halving).
	revs float64
	// on, onRPM, onRPM2 sum w, w rpm and w rpm^2 over the samples above
	// idle, w a sample's trapezoid weight: half of each interval it ends
	// whose both ends have a reading (the left one first), so that sum w_i
	// y_i (blanks skipped) == integral(t, y).
	on, onRPM, onRPM2 float64
	// The load spectrum's sums per bin (see spectrum); binned is false when
	// the rpm needs more than maxBins bins (none are kept).
	width           float64
	binned          bool
	secs, revB, sqB []float64
	// aloft holds meansOver's sums over the airborne samples.
	aloft meanSums
}

// newMotorPass reads rpm once. lo..hi is the airborne span (lo < 0: none).
func newMotorPass(t, rpm []float64, idle, width float64, lo, hi int) motorPass {
	ps := motorPass{width: width}
	top := 0.0
	for _, v := range rpm {
		if v > top {
			top = v
		}
	}
	ps.binned = top/width < maxBins
	n := 0
	if ps.binned {
		n = int(top/width) + 1
		ps.secs, ps.revB, ps.sqB = make([]float64, n), make([]float64, n), make([]float64, n)
	}
	secs, revs, sq := ps.secs, ps.revB, ps.sqB
	// add books dt seconds during which the rpm runs linearly from a to b
	// (a <= b) into the bins: per bin the share of dt its part of [a, b]
	// takes, with the integrals of rpm and rpm^2 over it.
	// abin is int(a/width), passed in: each sample's quotient is taken once,
	// not once for each interval it ends.
	add := func(dt, a, b float64, abin int) {
		if b <= 0 {
			return // stopped: not turning time
		}
		if i := abin; b == a || (float64(i)*width <= a && b <= float64(i+1)*width && i < n) {
			if b != a {
				// Within one bin: the loop below's single step, without it.
				d := dt * (b - a) / (b - a)
				secs[i] += d
				revs[i] += d * (a + b) / 2 / 60
				sq[i] += d * (a*a + a*b + b*b) / 3
				return
			}
			i = min(i, n-1)
			secs[i] += dt
			revs[i] += dt * a / 60
			sq[i] += dt * a * a
			return
		}
		for i := max(0, abin); i < n && float64(i)*width < b; i++ {
			lo, hi := max(a, float64(i)*width), min(b, float64(i+1)*width)
			if hi <= lo {
				continue
			}
			d := dt * (hi - lo) / (b - a)
			secs[i] += d
			revs[i] += d * (lo + hi) / 2 / 60
			sq[i] += d * (lo*lo + lo*hi + hi*hi) / 3
		}
	}
	prevBin := 0
	if ps.binned && len(rpm) > 0 {
		prevBin = int(rpm[0] / width)
	}
	left := 0.0 // the half of the interval before sample i-1 that counts in its weight
	for i := 1; i < len(rpm); i++ {
		a, b := rpm[i-1], rpm[i]
		dt := t[i] - t[i-1]
		right := 0.0
		if a == a && b == b { // a reading at both ends, else the interval is left out
			ps.revs += dt * (a + b)
			right = dt / 2
			if lo >= 0 && i-1 >= lo && i <= hi {
				ps.aloft.add(dt, a, b)
			}
		} else if lo >= 0 && i-1 >= lo && i <= hi {
			ps.aloft.gap = true
		}
		if a > idle { // sample i-1 has both its halves now; a blank is not above idle
			w := left + right
			ps.on += w
			ps.onRPM += w * a
			ps.onRPM2 += w * a * a
		}
		left = right
		if ps.binned {
			abin, bbin := prevBin, int(b/width)
			prevBin = bbin
			if a != a || b != b {
				continue
			}
			if a > b {
				a, b, abin = b, a, bbin
			}
			add(dt, a, b, abin)
		}
	}
	if k := len(rpm) - 1; k >= 0 && rpm[k] > idle {
		w := left
		ps.on += w
		ps.onRPM += w * rpm[k]
		ps.onRPM2 += w * rpm[k] * rpm[k]
	}
	return ps
}

// bins are the load spectrum's bins with time in them, ascending; mean
// thrust needs the thrust constant k.
func (ps *motorPass) bins(k *float64) []RPMBin {
	out := []RPMBin{}
	width := ps.width
	for b := range ps.secs {
		if ps.secs[b] == 0 {
			continue
		}
		bin := RPMBin{RPMLo: float64(b) * width, RPMHi: float64(b+1) * width, Seconds: ps.secs[b], Revolutions: ps.revB[b]}
		if k != nil {
			bin.MeanThrustN = ptr(*k * ps.sqB[b] / ps.secs[b])
		}
		out = append(out, bin)
	}
	return out
}

// spectrum is a motor's load spectrum: time, revolutions and mean thrust
// per rpm bin while turning. Between two samples the rpm is taken to change
// linearly (the trapezoidal rule's own assumption), and each interval is
// split across the bins it spans in proportion to the time its rpm spends in
// each, so a long gap across a bin edge is shared as the rpm crossed it (a
// sample-weight rule would hand half the gap to each end's bin). Revolutions
// per bin are the integral of rpm/60 over that time, so the bins add up to
// the motor's revolutions exactly; thrust uses the integral of rpm^2.
func spectrum(t, rpm []float64, width float64, k *float64) ([]RPMBin, bool) {
	ps := newMotorPass(t, rpm, math.Inf(1), width, -1, -1)
	if !ps.binned {
		return []RPMBin{}, false
	}
	return ps.bins(k), true
}
