package telemetry

import (
	"math"
	"slices"
	"strings"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// Meta is the metadata found in `# key: value` comments before the header.
type Meta struct {
	Start    *time.Time        // wall-clock time of t_s = 0
	Airframe string            // airframe code
	Packs    []string          // pack serials
	Other    map[string]string // any other keys, as written
}

// RotorSeries is one rpm_<position> column.
type RotorSeries struct {
	Position string    // the part of the column name after "rpm_"
	RPM      []float64 // rev/min
}

// Log is a parsed flight log. Every non-nil series has Rows samples; optional
// series whose column is absent (or blank in every row) are nil. An optional
// series holds NaN where its cell was blank: no reading at that sample (a
// value in the log itself is never NaN). T, PackV and PackA never hold NaN.
type Log struct {
	Meta    Meta
	Columns []string // recognised columns with at least one reading, in header order
	Unknown []string // ignored columns, in header order, each once
	Rows    int
	// Blank counts the blank cells of each optional column that has any,
	// by service column name; a column blank in every row counts Rows and
	// is treated as absent.
	Blank map[string]int

	T, PackV, PackA  []float64
	RPM              []RotorSeries // in header order
	Throttle         []float64
	Cells            [][]float64 // Cells[i] is column cell_<i+1>_v
	Baro, Temp       []float64
	AccX, AccY, AccZ []float64
	Lat, Lon         []float64
}

// Series returns the samples of one of the service's columns (t_s, pack_v,
// rpm_m1, cell_2_v...), nil when the log lacks it.
func (l *Log) Series(name string) []float64 {
	switch name {
	case "t_s":
		return l.T
	case "pack_v":
		return l.PackV
	case "pack_a":
		return l.PackA
	case "throttle":
		return l.Throttle
	case "baro_pa":
		return l.Baro
	case "temp_c":
		return l.Temp
	case "acc_x":
		return l.AccX
	case "acc_y":
		return l.AccY
	case "acc_z":
		return l.AccZ
	case "lat":
		return l.Lat
	case "lon":
		return l.Lon
	}
	if n, ok := fleet.CellColumn(name); ok && n <= len(l.Cells) {
		return l.Cells[n-1]
	}
	for _, r := range l.RPM {
		if "rpm_"+r.Position == name {
			return r.RPM
		}
	}
	return nil
}

// bind points every column with a target at that target's series, with the
// target's accepted range, and returns the index of the time column (-1 if
// none). Series are allocated before pointers are taken so they stay valid.
func (l *Log) bind(cols []column) int {
	maxCell := 0
	for _, c := range cols {
		if strings.HasPrefix(c.target, "rpm_") {
			l.RPM = append(l.RPM, RotorSeries{Position: c.target[4:], RPM: []float64{}})
		} else if n, ok := fleet.CellColumn(c.target); ok {
			maxCell = max(maxCell, n)
		}
	}
	if maxCell > 0 {
		l.Cells = make([][]float64, maxCell)
	}
	rotor, tcol := 0, -1
	for i := range cols {
		c := &cols[i]
		c.lo, c.hi = math.Inf(-1), math.Inf(1)
		switch t := c.target; {
		case t == "":
			continue
		case t == "t_s":
			c.dst, tcol = &l.T, i
		case t == "pack_v":
			c.dst = &l.PackV
		case t == "pack_a":
			c.dst = &l.PackA
		case t == "throttle":
			c.dst, c.lo, c.hi = &l.Throttle, 0, 1
		case t == "baro_pa":
			c.dst, c.lo, c.loOpen = &l.Baro, 0, true
		case t == "temp_c":
			c.dst, c.lo, c.loOpen = &l.Temp, -273.15, true
		case t == "acc_x":
			c.dst = &l.AccX
		case t == "acc_y":
			c.dst = &l.AccY
		case t == "acc_z":
			c.dst = &l.AccZ
		case t == "lat":
			c.dst, c.lo, c.hi = &l.Lat, -90, 90
		case t == "lon":
			c.dst, c.lo, c.hi = &l.Lon, -180, 180
		case strings.HasPrefix(t, "rpm_"):
			c.dst, c.lo = &l.RPM[rotor].RPM, 0
			rotor++
		default:
			n, _ := fleet.CellColumn(t)
			c.dst, c.lo = &l.Cells[n-1], 0
		}
		c.opt = !slices.Contains(fleet.RequiredLogColumns, c.target)
		*c.dst = []float64{}
	}
	return tcol
}
