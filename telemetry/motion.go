package telemetry

import (
	"math"

	"gonum.org/v1/gonum/dsp/fourier"
)

// highPass is a first-order RC high-pass, discretised by the bilinear
// transform per actual time step (so it passes vibration up to the Nyquist
// frequency at unit gain), run forward then backward: zero phase, second
// order overall. It removes gravity and slow manoeuvres.
func highPass(t, x []float64, cutoffHz float64) []float64 {
	rc := 1 / (2 * math.Pi * cutoffHz)
	y := make([]float64, len(x))
	for i := 1; i < len(x); i++ {
		k := 2 * rc / (t[i] - t[i-1])
		y[i] = (k*(x[i]-x[i-1]) + (k-1)*y[i-1]) / (k + 1)
	}
	z := make([]float64, len(x))
	for i := len(x) - 2; i >= 0; i-- {
		k := 2 * rc / (t[i+1] - t[i])
		z[i] = (k*(y[i]-y[i+1]) + (k-1)*z[i+1]) / (k + 1)
	}
	return z
}

// rms is the time-weighted root mean square of y over t.
func rms(t, y []float64) float64 {
	w := trapezoidWeights(t)
	var s, tot float64
	for i, v := range y {
		s += w[i] * v * v
		tot += w[i]
	}
	if tot == 0 {
		return math.Abs(y[0])
	}
	return math.Sqrt(s / tot)
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
	axis := func(x []float64) (*float64, []float64) {
		if x == nil {
			return nil, nil
		}
		hp := highPass(t, x[lo:hi+1], p.VibrationCutoffHz)
		return ptr(rms(t, hp)), hp
	}
	v.X, _ = axis(l.AccX)
	v.Y, _ = axis(l.AccY)
	var z []float64
	v.Z, z = axis(l.AccZ)
	if z != nil {
		if f, ok := spectralPeak(t, z, p.VibrationCutoffHz); ok {
			v.PeakHz = ptr(f)
		}
	}
	if a.m.HoverRPM != nil {
		v.RotorHz = ptr(*a.m.HoverRPM / 60)
	}
	a.m.Vibration = v
}

// welchSegment is the longest FFT segment of the vibration spectrum.
const welchSegment = 4096

// spectralPeak resamples y onto a uniform grid at the mean sample rate (linear
// interpolation), averages Hann-windowed power spectra of half-overlapping
// power-of-two segments (Welch's method: a steadier peak than one long FFT,
// and cheap) and returns the frequency of the strongest line above minHz.
// Lines above the Nyquist frequency of the log are aliased into it, as usual.
func spectralPeak(t, y []float64, minHz float64) (float64, bool) {
	n := len(y)
	if n < 16 {
		return 0, false
	}
	dt := (t[n-1] - t[0]) / float64(n-1)
	u := make([]float64, n)
	j := 0
	for i := range n {
		ti := t[0] + float64(i)*dt
		for j < n-2 && t[j+1] < ti {
			j++
		}
		f := (ti - t[j]) / (t[j+1] - t[j])
		u[i] = y[j] + f*(y[j+1]-y[j])
	}
	seg := 16
	for seg*2 <= n && seg < welchSegment {
		seg *= 2
	}
	win := make([]float64, seg)
	for i := range win {
		win[i] = 0.5 - 0.5*math.Cos(2*math.Pi*float64(i)/float64(seg))
	}
	fft := fourier.NewFFT(seg)
	buf := make([]float64, seg)
	power := make([]float64, seg/2+1)
	var c []complex128
	for start := 0; start+seg <= n; start += seg / 2 {
		for i := range buf {
			buf[i] = u[start+i] * win[i]
		}
		c = fft.Coefficients(c, buf)
		for k, v := range c {
			power[k] += real(v)*real(v) + imag(v)*imag(v)
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
// airborne span to shortly after it; it needs all three axes.
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
		if g > peak {
			peak, at = g, t
		}
	}
	a.m.LandingG, a.m.LandingAt = ptr(peak), ptr(at)
}
