package telemetry

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// highPass is a first-order RC high-pass, discretised by the bilinear
// transform per actual time step (so it passes vibration up to the Nyquist
// frequency at unit gain), run forward then backward: zero phase, second
// order overall. It removes gravity and slow manoeuvres.
func highPass(t, x []float64, cutoffHz float64) []float64 {
	return highPassWith(highPassSteps(t, cutoffHz), x)
}

// hpSteps are a high-pass's per-step coefficients over a run of sample
// times: for the step ending at sample i (1 <= i < n), ka[i] = k/(k+1) and
// kb[i] = (k-1)/(k+1) with k = 2 RC / dt. They depend on the times only, so
// axes sampled at the same times share them, and the backward pass reuses
// the forward pass's (its step from i+1 to i is the same dt).
type hpSteps struct{ ka, kb []float64 }

func highPassSteps(t []float64, cutoffHz float64) hpSteps {
	rc := 1 / (2 * math.Pi * cutoffHz)
	s := hpSteps{make([]float64, len(t)), make([]float64, len(t))}
	for i := 1; i < len(t); i++ {
		k := 2 * rc / (t[i] - t[i-1])
		inv := 1 / (k + 1)
		s.ka[i], s.kb[i] = k*inv, (k-1)*inv
	}
	return s
}

// highPassWith runs the filter over x with the steps of its times. Each
// step is y[i] = ka dx + kb y[i-1], the divisions (in the steps) off the
// chain from one output to the next.
func highPassWith(s hpSteps, x []float64) []float64 {
	y := make([]float64, len(x))
	for i := 1; i < len(x); i++ {
		y[i] = s.ka[i]*(x[i]-x[i-1]) + s.kb[i]*y[i-1]
	}
	// The backward pass overwrites the forward output in place: z[i] needs
	// y[i] and y[i+1] but not z[i+1]'s input once z[i+1] is computed.
	next := y[len(y)-1] // y[i+1] before it was overwritten
	y[len(y)-1] = 0
	for i := len(x) - 2; i >= 0; i-- {
		yi := y[i]
		y[i] = s.ka[i+1]*(yi-next) + s.kb[i+1]*y[i+1]
		next = yi
	}
	return y
}

// piece is a stretch of consecutive readings of one axis.
type piece struct{ t, y []float64 }

// pieces splits samples lo..hi of x into runs of consecutive readings of at
// least two samples: a blank cell ends a run, so nothing is filtered across
// a gap.
func pieces(t, x []float64, lo, hi int) []piece {
	var out []piece
	for i := lo; i <= hi; {
		if x[i] != x[i] {
			i++
			continue
		}
		j := i
		for j < hi && x[j+1] == x[j+1] {
			j++
		}
		if j > i {
			out = append(out, piece{t[i : j+1], x[i : j+1]})
		}
		i = j + 1
	}
	return out
}

// squares is the trapezoidal integral of y^2 over t, and the time t spans.
func squares(t, y []float64) (s, span float64) {
	for i := 1; i < len(t); i++ {
		s += (t[i] - t[i-1]) * (y[i]*y[i] + y[i-1]*y[i-1]) / 2
	}
	return s, t[len(t)-1] - t[0]
}

// span returns the airborne sample range, or the whole log when unknown.
func (a *analysis) span() (int, int) {
	if a.lo >= 0 {
		return a.lo, a.hi
	}
	return 0, a.l.Rows - 1
}

func (a *analysis) vibration() {
	l, p := a.l, a.p
	if l.AccX == nil && l.AccY == nil && l.AccZ == nil {
		return
	}
	lo, hi := a.span()
	t := l.T[lo : hi+1]
	v := &Vibration{}
	if len(t) > 1 {
		v.SampleHz = float64(len(t)-1) / (t[len(t)-1] - t[0])
	}
	nyquist := v.SampleHz / 2
	v.CutoffHz = p.VibrationCutoffHz
	if !a.cutoffExplicit {
		v.CutoffHz = min(DefaultVibrationCutoffHz, nyquist/10)
	}
	if !(v.CutoffHz > 0) {
		a.note("fewer than two samples in the span: vibration is not computed")
		return
	}
	// Each run of consecutive readings is high-passed on its own (from rest
	// at its start, as a span without blanks is), and the RMS is
	// time-weighted over all runs.
	var axes []piece
	// Axes without blanks share their runs' times, and so their steps.
	steps := map[[2]int]hpSteps{}
	stepsFor := func(pt []float64) hpSteps {
		key := [2]int{cap(l.T) - cap(pt), len(pt)} // where the run starts in l.T, and its length
		s, ok := steps[key]
		if !ok {
			s = highPassSteps(pt, v.CutoffHz)
			steps[key] = s
		}
		return s
	}
	axis := func(x []float64) *float64 {
		if x == nil {
			return nil
		}
		var s, span float64
		for _, pc := range pieces(l.T, x, lo, hi) {
			hp := piece{pc.t, highPassWith(stepsFor(pc.t), pc.y)}
			axes = append(axes, hp)
			ss, sp := squares(hp.t, hp.y)
			s, span = s+ss, span+sp
		}
		if !(span > 0) {
			return nil
		}
		return ptr(math.Sqrt(s / span))
	}
	v.X, v.Y, v.Z = axis(l.AccX), axis(l.AccY), axis(l.AccZ)
	if v.X == nil && v.Y == nil && v.Z == nil {
		a.note("no two consecutive acceleration readings in the span: vibration is not computed")
		return
	}
	band := fmt.Sprintf("%.3g to %.3g Hz", v.CutoffHz, nyquist)
	if a.m.HoverRPM != nil {
		v.RotorHz = ptr(*a.m.HoverRPM / 60)
		ok := *v.RotorHz < nyquist
		v.RotorResolvable = &ok
		if !ok {
			v.Caveat = fmt.Sprintf("rotor vibration not resolvable at %.3g Hz: the rotors turn at about %.3g Hz, above half the "+
				"sample rate; the figures are broadband (%s) and may hold rotor vibration aliased into that band", v.SampleHz, *v.RotorHz, band)
		}
	} else {
		v.Caveat = fmt.Sprintf("rotor frequency unknown (no rpm columns): the figures are broadband (%s)", band)
	}
	if v.RotorResolvable == nil || *v.RotorResolvable {
		if f, ok := spectralPeak(axes, (t[len(t)-1]-t[0])/float64(len(t)-1), v.CutoffHz); ok {
			v.PeakHz = ptr(f)
		}
	}
	if v.Caveat != "" {
		a.note(v.Caveat)
	}
	a.m.Vibration = v
}

// welchSegment is the longest FFT segment of the vibration spectrum.
const welchSegment = 4096

// spectralPeak resamples each run onto a uniform grid of step dt (the
// span's mean sample interval; linear interpolation), averages
// Hann-windowed power spectra of half-overlapping power-of-two segments
// within the runs (Welch's method: a steadier peak than one long FFT, and
// cheap; no segment spans a gap), sums them over the runs and returns the
// frequency of the strongest line above minHz. Lines above the Nyquist
// frequency of the log are aliased into it, as usual.
func spectralPeak(runs []piece, dt, minHz float64) (float64, bool) {
	// Grid points of each run; 1e-9 of a step keeps a whole span's last
	// sample on the grid despite rounding.
	points := func(r piece) int { return int((r.t[len(r.t)-1]-r.t[0])/dt+1e-9) + 1 }
	longest := 0
	for _, r := range runs {
		longest = max(longest, points(r))
	}
	if longest < 16 {
		return 0, false
	}
	seg := 16
	for seg*2 <= longest && seg < welchSegment {
		seg *= 2
	}
	win := make([]float64, seg)
	for i := range win {
		win[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(seg))
	}
	fft := fourier.NewFFT(seg)
	buf := make([]float64, seg)
	power := make([]float64, seg/2+1)
	u := make([]float64, longest)
	var c []complex128
	for _, r := range runs {
		t, y, n := r.t, r.y, points(r)
		if n < seg {
			continue
		}
		j := 0
		for i := range n {
			ti := t[0] + float64(i)*dt
			for j < len(t)-2 && t[j+1] < ti {
				j++
			}
			f := (ti - t[j]) / (t[j+1] - t[j])
			u[i] = y[j] + f*(y[j+1]-y[j])
		}
		for start := 0; start+seg <= n; start += seg / 2 {
			for i := range buf {
				buf[i] = u[start+i] * win[i]
			}
			c = fft.Coefficients(c, buf)
			for k, v := range c {
				power[k] += real(v)*real(v) + imag(v)*imag(v)
			}
		}
	}
	best, bestK := 0.0, -1
	for k := 1; k < len(power); k++ {
		if float64(k)/(float64(seg)*dt) > minHz && power[k] > best {
			best, bestK = power[k], k
		}
	}
	if bestK < 0 {
		return 0, false
	}
	return float64(bestK) / (float64(seg) * dt), true
}

// landing is the peak |acc| in g from LandingWindowS before the end of the
// airborne span to shortly after it, over the samples with a reading on all
// three axes; it needs the three columns.
func (a *analysis) landing() {
	l, p := a.l, a.p
	if l.AccX == nil || l.AccY == nil || l.AccZ == nil {
		if l.AccX != nil || l.AccY != nil || l.AccZ != nil {
			a.note("landing load needs acc_x, acc_y and acc_z: not computed")
		}
		return
	}
	if a.lo < 0 {
		a.note("no airborne span: landing load is not computed")
		return
	}
	end := l.T[a.hi]
	peak, at := -1.0, 0.0
	for i, t := range l.T {
		if t < end-p.LandingWindowS || t > end+landingAfterS {
			continue
		}
		g := math.Sqrt(l.AccX[i]*l.AccX[i]+l.AccY[i]*l.AccY[i]+l.AccZ[i]*l.AccZ[i]) / G0
		if g > peak { // false for a blank (NaN)
			peak, at = g, t
		}
	}
	if peak < 0 {
		a.note("no acceleration reading on all three axes around touchdown: landing load is not computed")
		return
	}
	a.m.LandingG, a.m.LandingAt = ptr(peak), ptr(at)
}
