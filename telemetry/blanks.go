package telemetry

import (
	"fmt"
	"slices"
	"strings"

	"github.com/rotorwright/rotorwright/fleet"
)

// halfFixText refuses a position with one coordinate.
const halfFixText = "lat and lon must be blank together (a fix has both or neither)"

// halfFix returns the index of the blank column when the row just read has
// lat without lon or lon without lat, else -1.
func (p *parser) halfFix() int {
	if p.lat < 0 {
		return -1
	}
	r := p.log.Rows // the row just read, not yet counted
	switch la, lo := p.cols[p.lat].vals[r], p.cols[p.lon].vals[r]; {
	case la != la && lo == lo:
		return p.lat
	case lo != lo && la == la:
		return p.lon
	}
	return -1
}

// finish counts the blank cells and treats a column blank in every row as
// absent: its series nil, left out of Columns (a cell column keeps its
// place in Cells, nil, so the others keep their numbers).
func (p *parser) finish() {
	l := p.log
	for _, c := range p.cols {
		if c.dst != nil {
			*c.dst = c.vals[:l.Rows]
		}
	}
	gone := map[string]bool{}
	for _, c := range p.cols {
		if c.blank == 0 {
			continue
		}
		if l.Blank == nil {
			l.Blank = map[string]int{}
		}
		l.Blank[c.target] = c.blank
		if c.blank == l.Rows {
			gone[c.target] = true
			*c.dst = nil
		}
	}
	if len(gone) == 0 {
		return
	}
	l.Columns = slices.DeleteFunc(l.Columns, func(c string) bool { return gone[c] })
	l.RPM = slices.DeleteFunc(l.RPM, func(r RotorSeries) bool { return r.RPM == nil })
	if !slices.ContainsFunc(l.Cells, func(c []float64) bool { return c != nil }) {
		l.Cells = nil
	}
}

// minReadingShare is the share of a log's samples a column must have
// readings in for its figures to pass without a warning (this package's
// choice: below half, a figure rests more on the gaps than on the log).
const minReadingShare = 0.5

// Warning says that figures rest on few readings: their column was blank in
// more than half of the log's samples. The figures are still the log's
// best account of the flight; the warning says how thin it is.
type Warning struct {
	Column   string   `json:"column"`
	Readings int      `json:"readings"`
	Samples  int      `json:"samples"`
	Figures  []string `json:"figures"`
	Detail   string   `json:"detail"`
}

// bridgeAll interpolates the short gaps of the columns whose figures
// combine samples or integrate (rotor speed, throttle, cells, pressure and
// temperature; not acceleration, whose vibration a fill would remove, nor
// position, measured fix to fix), and notes the time long gaps leave out.
func (a *analysis) bridgeAll() {
	l, maxGap := a.l, a.p.MaxGapS
	var lost []string
	fill := func(name string, y []float64) []float64 {
		if y == nil || l.Blank[name] == 0 {
			return y
		}
		out, s := bridge(l.T, y, maxGap)
		if s > 0 {
			lost = append(lost, fmt.Sprintf("%s %.3g s", name, s))
		}
		return out
	}
	for _, r := range l.RPM {
		a.rpm = append(a.rpm, fill("rpm_"+r.Position, r.RPM))
	}
	a.throttle = fill("throttle", l.Throttle)
	for i, c := range l.Cells {
		a.cells = append(a.cells, fill(fleet.CellColumnName(i+1), c))
	}
	a.baro, a.temp = fill("baro_pa", l.Baro), fill("temp_c", l.Temp)
	if lost != nil {
		a.note(fmt.Sprintf("time without readings, left out of the figures from the column (gaps over %g s, before the "+
			"first reading or after the last): %s", maxGap, strings.Join(lost, ", ")))
	}
}

// rotorMean is the mean rotor speed at each sample over the rotors with a
// reading there; NaN where none has.
func rotorMean(rpm [][]float64, rows int) []float64 {
	out := make([]float64, rows)
	for i := range out {
		var s float64
		n := 0
		for _, r := range rpm {
			if v := r[i]; v == v {
				s += v
				n++
			}
		}
		out[i] = s / float64(n)
	}
	return out
}

// fixes are the positions with a reading (lat and lon are blank together),
// so a track runs from fix to fix across the blanks.
func fixes(lat, lon []float64) ([]float64, []float64) {
	if !slices.ContainsFunc(lat, func(v float64) bool { return v != v }) {
		return lat, lon
	}
	var la, lo []float64
	for i, v := range lat {
		if v == v {
			la, lo = append(la, v), append(lo, lon[i])
		}
	}
	return la, lo
}

// coverage warns of every column with readings in fewer than
// minReadingShare of the samples, naming the figures that use it.
func (a *analysis) coverage() {
	l := a.l
	for _, c := range l.Columns {
		blank := l.Blank[c]
		readings := l.Rows - blank
		if blank == 0 || float64(readings) >= minReadingShare*float64(l.Rows) || c == "lon" {
			continue
		}
		figs := a.figuresOf(c)
		if len(figs) == 0 {
			continue
		}
		name := c
		if c == "lat" {
			name = "lat/lon"
		}
		a.m.Warnings = append(a.m.Warnings, Warning{Column: c, Readings: readings, Samples: l.Rows, Figures: figs,
			Detail: fmt.Sprintf("%s has readings in %d of %d samples (%.0f %%): %s rest on them", name, readings, l.Rows,
				100*float64(readings)/float64(l.Rows), strings.Join(figs, ", "))})
	}
}

// figuresOf names the figures computed from column c in this analysis.
func (a *analysis) figuresOf(c string) []string {
	l := a.l
	level := []string{"run_s", "airborne_from_s", "airborne_to_s"}
	switch {
	case strings.HasPrefix(c, "rpm_"):
		return append(level, "hover_rpm", "thrust_k", "motors", "vibration_rms.rotor_hz")
	case c == "throttle":
		if len(l.RPM) > 0 {
			return nil
		}
		return level
	case strings.HasPrefix(c, "cell_"):
		return []string{"min_cells_v", "min_cell_v", "ir_cells_mohm", "overdischarge"}
	case c == "baro_pa":
		if l.Temp != nil {
			return []string{"max_alt_m", "air_density"}
		}
		return []string{"max_alt_m"}
	case c == "temp_c":
		if l.Baro != nil {
			return []string{"air_density"}
		}
	case c == "acc_x", c == "acc_y", c == "acc_z":
		return []string{"vibration_rms", "landing_g"}
	case c == "lat":
		return []string{"distance_m", "max_range_m"}
	}
	return nil
}
