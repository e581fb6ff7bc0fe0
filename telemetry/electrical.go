package telemetry

import (
	"fmt"
	"math"
	"slices"
)

// electrical computes charge, energy, power, current and voltage extremes and
// rest voltages.
func (a *analysis) electrical() {
	l, m, p := a.l, a.m, a.p
	pw := make([]float64, l.Rows)
	a.pw = pw
	m.MinPackV = math.Inf(1)
	m.PeakPowerW, m.PeakA = math.Inf(-1), math.Inf(-1)
	// One pass: power, extremes and the trapezoid sums of current and
	// power, each sum in Trapezoid's order (pack_v and pack_a never hold
	// NaN, so every interval counts and meanOver's sum is Trapezoid's).
	var sa, sp float64
	for i := range pw {
		pw[i] = l.PackV[i] * l.PackA[i]
		m.PeakPowerW = max(m.PeakPowerW, pw[i])
		m.PeakA = max(m.PeakA, l.PackA[i])
		m.MinPackV = min(m.MinPackV, l.PackV[i])
		if i > 0 {
			dt := l.T[i] - l.T[i-1]
			sa += dt * (l.PackA[i] + l.PackA[i-1])
			sp += dt * (pw[i] + pw[i-1])
		}
	}
	// mAh = (1000/3600) * integral I dt; Wh = integral V I dt / 3600.
	m.ChargeMah = sa / 2 * 1000 / 3600
	m.EnergyWh = sp / 2 / 3600
	if l.Rows > 1 {
		m.LogMeanPowerW = sp / 2 / (l.T[l.Rows-1] - l.T[0])
	} else {
		m.LogMeanPowerW = meanOver(l.T, pw, 0, 0)
	}

	// Minima over the readings only, so exactly the least value logged.
	lowest := math.Inf(1)
	for _, c := range l.Cells {
		lo, ok := least(c)
		if !ok {
			m.MinCellsV = append(m.MinCellsV, nil)
			continue
		}
		m.MinCellsV = append(m.MinCellsV, ptr(lo))
		lowest = min(lowest, lo)
	}
	switch {
	case l.Cells != nil:
		m.MinCellV, m.MinCellSource = ptr(lowest), "cells"
	case p.CellsS > 0:
		m.MinCellV, m.MinCellSource = ptr(m.MinPackV/float64(p.CellsS)), "pack_v/cells_s"
	default:
		a.note("no cell columns and cells_s unknown: minimum cell voltage is not computed")
	}

	// Rest: the leading and trailing stretches at or below RestCurrentA.
	first, last := -1, -1
	for i, c := range l.PackA {
		if math.Abs(c) > p.RestCurrentA {
			if first < 0 {
				first = i
			}
			last = i
		}
	}
	switch {
	case first < 0: // never loaded: one rest stretch
		v := median(l.PackV)
		m.RestVStart, m.RestVEnd = ptr(v), ptr(v)
	default:
		if first > 0 {
			m.RestVStart = ptr(median(l.PackV[:first]))
		}
		if last < l.Rows-1 {
			// The later half, since the pack is still recovering from load.
			tail := l.PackV[last+1:]
			m.RestVEnd = ptr(median(tail[len(tail)/2:]))
		}
	}
	if m.RestVStart == nil || m.RestVEnd == nil {
		a.note(fmt.Sprintf("log does not start and end at or below %g A: a rest voltage is missing", p.RestCurrentA))
	}
}

// meanPower is the mean electrical power while airborne, else over the run
// span, else over the whole log.
func (a *analysis) meanPower() {
	l, m := a.l, a.m
	lo, hi, src := 0, l.Rows-1, "log"
	switch {
	case a.lo >= 0:
		lo, hi, src = a.lo, a.hi, "airborne"
	case a.runLo >= 0:
		lo, hi, src = a.runLo, a.runHi, "run"
	}
	pw := a.pw[lo : hi+1]
	m.MeanPowerW, m.MeanPowerSource = meanOver(l.T[lo:hi+1], pw, 0, len(pw)-1), src
}

// cellVoltage is the lowest cell voltage at each sample, from cell columns
// (the lowest of those with a reading, short gaps bridged; NaN where none
// has), else pack_v / cells_s; nil when neither is known.
func (a *analysis) cellVoltage() []float64 {
	l := a.l
	out := make([]float64, l.Rows)
	switch {
	case l.Cells != nil:
		// One pass over the samples, the cells' least at each (a blank
		// is never less; none with a reading leaves NaN).
		cells := slices.DeleteFunc(slices.Clone(a.cells), func(c []float64) bool { return c == nil })
		for i := range out {
			least := math.Inf(1)
			for _, c := range cells {
				if v := c[i]; v < least {
					least = v
				}
			}
			if math.IsInf(least, 1) {
				least = math.NaN()
			}
			out[i] = least
		}
	case a.p.CellsS > 0:
		for i, v := range l.PackV {
			out[i] = v / float64(a.p.CellsS)
		}
	default:
		return nil
	}
	return out
}

// resistance estimates DC resistance from current steps: for each sample i and
// the first sample j at least IRWindowS later (and at most twice that), a step
// |I_j - I_i| of at least a tenth of the log's current range gives
// R = -(V_j - V_i) / (I_j - I_i). The median of the estimates is robust to the
// ones spoilt by noise or by polarisation.
func (a *analysis) resistance() {
	l, m, p := a.l, a.m, a.p
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, c := range l.PackA {
		lo, hi = min(lo, c), max(hi, c)
	}
	step := max(irMinStepA, irMinStepFraction*(hi-lo))
	w := p.IRWindowS
	wMin := w * (1 - 1e-9) // so decimal time stamps 0.2 s apart count as 0.2 s
	var pack []float64
	cells := make([][]float64, len(l.Cells))
	j := 0
	for i := range l.Rows {
		j = max(j, i+1)
		for j < l.Rows && l.T[j]-l.T[i] < wMin {
			j++
		}
		if j >= l.Rows {
			break
		}
		if l.T[j]-l.T[i] > 2*w {
			continue
		}
		di := l.PackA[j] - l.PackA[i]
		if math.Abs(di) < step {
			continue
		}
		pack = append(pack, -(l.PackV[j]-l.PackV[i])/di)
		// Cell steps from readings only: an interpolated value would blur the step.
		for k, c := range l.Cells {
			if c != nil && c[i] == c[i] && c[j] == c[j] {
				cells[k] = append(cells[k], -(c[j]-c[i])/di)
			}
		}
	}
	m.IRSteps = len(pack)
	if len(pack) < minIRSteps {
		a.note(fmt.Sprintf("fewer than %d current steps of %.3g A within %g s: resistance is not computed", minIRSteps, step, w))
		return
	}
	r := median(pack)
	if !(r > 0) {
		a.note("current steps give no positive resistance: resistance is not computed")
		return
	}
	m.IRMohm = ptr(r * 1000)
	s := a.p.CellsS
	if s == 0 {
		s = len(l.Cells)
	}
	if s > 0 {
		m.IRCellMohm = ptr(r * 1000 / float64(s))
	}
	for _, c := range cells {
		if len(c) < minIRSteps {
			m.IRCellsMohm = append(m.IRCellsMohm, nil)
		} else if rc := median(c); rc > 0 {
			m.IRCellsMohm = append(m.IRCellsMohm, ptr(rc*1000))
		} else {
			m.IRCellsMohm = append(m.IRCellsMohm, nil)
		}
	}
}
