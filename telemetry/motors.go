package telemetry

import "fmt"

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
func (a *analysis) rotors() {
	l, m, p := a.l, a.m, a.p
	if len(l.RPM) == 0 {
		return
	}
	if a.lo >= 0 {
		// The mean over rotors of each rotor's mean over its readings aloft.
		var sum float64
		n := 0
		meanSq := make([]float64, len(a.rpm)) // each rotor's mean rpm^2 aloft, for the thrust constant
		for k, r := range a.rpm {
			v, v2 := meansOver(l.T, r, a.lo, a.hi)
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
		rpm := a.rpm[k]
		revs, _, _ := integral(l.T, rpm)
		mr := MotorRun{Position: r.Position, Revolutions: revs / 60, Bins: []RPMBin{}}
		var on, onRPM, onRPM2 float64
		for i, v := range rpm { // a blank has weight 0 and is not above idle
			if v > a.idleRPM {
				w := trapezoidWeight(l.T, rpm, i)
				on += w
				onRPM += w * v
				onRPM2 += w * v * v
			}
		}
		mr.RunS = on
		if on > 0 {
			mr.MeanRPM = ptr(onRPM / on)
			if m.ThrustK != nil {
				mr.ThrustMeanN = ptr(*m.ThrustK * onRPM2 / on)
			}
		}
		bins, ok := spectrum(l.T, rpm, p.RPMBinWidth, m.ThrustK)
		if !ok {
			a.note(fmt.Sprintf("rpm_%s needs more than %d bins of %g rpm: no load spectrum", r.Position, maxBins, p.RPMBinWidth))
		}
		mr.Bins = bins
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

// trapezoidWeight is sample i's weight in the trapezoidal rule over the
// intervals whose both ends have a reading in y (half of each such
// interval it ends), so that sum w_i y_i (blanks skipped) == integral(t, y).
// Summed from the left interval, as a running sum over the intervals would.
func trapezoidWeight(t, y []float64, i int) float64 {
	w := 0.0
	if i > 0 && y[i] == y[i] && y[i-1] == y[i-1] {
		w += (t[i] - t[i-1]) / 2
	}
	if i+1 < len(t) && y[i] == y[i] && y[i+1] == y[i+1] {
		w += (t[i+1] - t[i]) / 2
	}
	return w
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
	top := 0.0
	for _, v := range rpm {
		if v > top {
			top = v
		}
	}
	if top/width >= maxBins {
		return []RPMBin{}, false
	}
	n := int(top/width) + 1
	secs, revs, sq := make([]float64, n), make([]float64, n), make([]float64, n)
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
	if len(rpm) > 0 {
		prevBin = int(rpm[0] / width)
	}
	for i := 1; i < len(rpm); i++ {
		a, b := rpm[i-1], rpm[i]
		abin, bbin := prevBin, int(b/width)
		prevBin = bbin
		if a != a || b != b {
			continue // no reading at an end: the interval is left out
		}
		if a > b {
			a, b, abin = b, a, bbin
		}
		add(t[i]-t[i-1], a, b, abin)
	}
	out := []RPMBin{}
	for b := range n {
		if secs[b] == 0 {
			continue
		}
		bin := RPMBin{RPMLo: float64(b) * width, RPMHi: float64(b+1) * width, Seconds: secs[b], Revolutions: revs[b]}
		if k != nil {
			bin.MeanThrustN = ptr(*k * sq[b] / secs[b])
		}
		out = append(out, bin)
	}
	return out, true
}
