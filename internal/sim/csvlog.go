package sim

import (
	"io"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"time"
)

// logWriter samples the model on the logger's irregular clock and formats
// CSV rows into a reused buffer.
type logWriter struct {
	s     *FlightSpec
	m     *model
	w     io.Writer
	buf   []byte
	rows  int
	noise *rand.Rand
	in    *instant
	qs    []float64
	tprec int

	// sample clock
	clk         *rand.Rand
	period, res float64
	k           int
	next, held  float64 // next sample time; a candidate held back by the peak sample
	peakDone    bool
}

func newLogWriter(s *FlightSpec, m *model, w io.Writer) *logWriter {
	lw := &logWriter{s: s, m: m, w: w, buf: make([]byte, 0, 64<<10), noise: noiseRNG(s.Seed),
		in: newInstant(s.Rotors, len(s.Packs)), qs: make([]float64, len(s.Packs)),
		clk: sampleRNG(s.Seed), period: 1 / s.SampleHz, res: timeRes(s.SampleHz), held: -1}
	lw.tprec = 3
	if lw.res < 1e-3 {
		lw.tprec = 4
	}
	lw.next = 0 // the first sample is at t_s = 0
	return lw
}

func (lw *logWriter) pending() float64 { return lw.next }

// advance draws the next sample time: nominal period with uniform jitter,
// random gaps, and one sample exactly at the touchdown load peak (a logger
// keeps its event sample; without it a 10 Hz log would miss an 80 ms pulse).
func (lw *logWriter) advance() {
	prev := lw.next
	if lw.held >= 0 {
		lw.next, lw.held = lw.held, -1
		return
	}
	sp := lw.s.Sampling
	for {
		lw.k++
		if sp.DropoutProb > 0 && lw.clk.Float64() < sp.DropoutProb {
			lw.k += lw.clk.IntN(max(1, int(sp.MaxDropoutS/lw.period))) + 1
		}
		t := (float64(lw.k) + sp.JitterFrac*(2*lw.clk.Float64()-1)) * lw.period
		t = math.Round(t/lw.res) * lw.res
		if !lw.peakDone && t >= lw.m.tImpact-lw.res/2 {
			lw.peakDone = true
			if lw.m.tImpact > prev+lw.res/2 {
				if t > lw.m.tImpact+lw.res/2 {
					lw.held = t
				}
				lw.next = lw.m.tImpact
				return
			}
		}
		if t > prev+lw.res/2 {
			lw.next = t
			return
		}
	}
}

// header buffers the metadata comments and the column names.
func (lw *logWriter) header() {
	s := lw.s
	b := lw.buf
	if !s.Start.IsZero() {
		b = append(b, "# start: "...)
		b = s.Start.UTC().AppendFormat(b, time.RFC3339Nano)
		b = append(b, '\n')
	}
	if s.Airframe != "" {
		b = append(b, "# airframe: "+s.Airframe+"\n"...)
	}
	serials := make([]string, len(s.Packs))
	for i, p := range s.Packs {
		serials[i] = p.Serial
	}
	b = append(b, "# packs: "+strings.Join(serials, ",")+"\n"...)
	b = append(b, "t_s,pack_v,pack_a"...)
	if s.Columns != ColumnsRequired {
		if s.Columns == ColumnsFull {
			for i := range s.Rotors {
				b = append(b, ",rpm_m"...)
				b = strconv.AppendInt(b, int64(i+1), 10)
			}
		} else {
			b = append(b, ",throttle"...)
		}
		for i := range s.Packs[0].CellsS {
			b = append(b, ",cell_"...)
			b = strconv.AppendInt(b, int64(i+1), 10)
			b = append(b, "_v"...)
		}
		b = append(b, ",baro_pa,temp_c,acc_x,acc_y,acc_z,lat,lon"...)
	}
	lw.buf = append(b, '\n')
}

func (lw *logWriter) gauss(sd float64) float64 {
	if sd == 0 {
		return 0
	}
	return sd * lw.noise.NormFloat64()
}

func (lw *logWriter) num(v float64, prec int) {
	lw.buf = append(lw.buf, ',')
	lw.buf = appendFixed(lw.buf, v, prec)
}

// sample writes the row at the pending time, from the node state at tNode
// (charge and revolutions carried forward linearly), then advances the clock.
func (lw *logWriter) sample(qNode, revsNode []float64, node *instant, tNode float64) error {
	ts := lw.next
	dt := ts - tNode
	for j := range lw.qs {
		lw.qs[j] = qNode[j] + node.ip[j]*dt
	}
	in := lw.in
	if err := lw.m.eval(ts, lw.qs, in); err != nil {
		return err
	}
	s, nz, m := lw.s, &lw.s.Noise, lw.m
	lw.buf = appendFixed(lw.buf, ts, lw.tprec)
	lw.num(in.v+lw.gauss(nz.PackV), 3)
	lw.num(in.i+lw.gauss(nz.PackA), 3)
	if s.Columns != ColumnsRequired {
		var rpmSum float64
		for _, r := range in.rpm {
			if r > 0 {
				r = math.Max(0, r+lw.gauss(nz.RPM))
			}
			rpmSum += r
			if s.Columns == ColumnsFull {
				lw.num(r, 0)
			}
		}
		if s.Columns == ColumnsThrottle {
			thr := rpmSum / float64(len(in.rpm)) / (m.rpmHover / s.HoverThrottle)
			lw.num(math.Max(0, math.Min(1, thr)), 4)
		}
		pk := &m.packs[0]
		for c, o := range pk.cellsOCV {
			lw.num(o-in.ip[0]*pk.rCell[c]+lw.gauss(nz.CellV), 4)
		}
		lw.num(isaPressure(s.SiteElevationM+in.h)+lw.gauss(nz.BaroPa), 1)
		lw.num(s.TempC-isaLapse*in.h+lw.gauss(nz.TempC), 2)
		// Vibration: rotor-frequency unbalance, amplitude ~ rpm^2 (F = m e w^2).
		var revMean float64
		for i, r := range revsNode {
			revMean += r + node.rpm[i]/60*dt
		}
		revMean /= float64(len(revsNode))
		amp := s.VibrationLevel * (in.rpmMean / m.rpmHover) * (in.rpmMean / m.rpmHover)
		if s.VibrationStepAtS > 0 && ts >= s.VibrationStepAtS {
			amp *= s.VibrationStepFactor
		}
		ph := 2 * math.Pi * (revMean - math.Floor(revMean))
		sn, cs := math.Sincos(ph)
		lw.num(amp*sn+lw.gauss(nz.AccMS2), 3)
		lw.num(amp*cs+lw.gauss(nz.AccMS2), 3)
		lw.num(in.accZ+0.5*amp*2*sn*cs+lw.gauss(nz.AccMS2), 3)
		e, n := m.p.position(ts)
		lat, lon := localToLatLon(s.Lat, s.Lon, e+lw.gauss(nz.LatLonM), n+lw.gauss(nz.LatLonM))
		lw.num(lat, 7)
		lw.num(lon, 7)
	}
	lw.buf = append(lw.buf, '\n')
	lw.rows++
	lw.advance()
	if len(lw.buf) > 60<<10 {
		return lw.flush()
	}
	return nil
}

func (lw *logWriter) flush() error {
	if len(lw.buf) == 0 {
		return nil
	}
	_, err := lw.w.Write(lw.buf)
	lw.buf = lw.buf[:0]
	return err
}
