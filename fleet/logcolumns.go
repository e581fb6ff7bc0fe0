package fleet

import (
	"strconv"
	"strings"
)

// The service's own flight-log columns (DESIGN section 4). A column map
// targets these names; the native layout uses them as its header.
const (
	ColTime  = "t_s"
	ColPackV = "pack_v"
	ColPackA = "pack_a"
)

// RequiredLogColumns must be in every log, native or mapped.
var RequiredLogColumns = []string{ColTime, ColPackV, ColPackA}

var logColumnNames = map[string]bool{
	"t_s": true, "pack_v": true, "pack_a": true, "throttle": true, "baro_pa": true, "temp_c": true,
	"acc_x": true, "acc_y": true, "acc_z": true, "lat": true, "lon": true,
}

// LogColumn reports whether name is one of the service's log columns:
// a fixed name, rpm_<position> or cell_<n>_v.
func LogColumn(name string) bool {
	if logColumnNames[name] || (strings.HasPrefix(name, "rpm_") && len(name) > 4) {
		return true
	}
	_, ok := CellColumn(name)
	return ok
}

// CellColumn reads cell_<n>_v with n in 1..64 written without leading zeros.
func CellColumn(name string) (int, bool) {
	s, ok := strings.CutPrefix(name, "cell_")
	if !ok {
		return 0, false
	}
	s, ok = strings.CutSuffix(s, "_v")
	if !ok {
		return 0, false
	}
	c, err := strconv.Atoi(s)
	if err != nil || c < 1 || c > 64 || strconv.Itoa(c) != s {
		return 0, false
	}
	return c, true
}

// CellColumnName is the column of cell n (1-based).
func CellColumnName(n int) string { return "cell_" + strconv.Itoa(n) + "_v" }

// MissingLogColumn checks a set of service columns as a log header or a
// column map gives them: the required ones present, lat with lon, cells
// numbered 1..n. It names the first column at fault and why, or returns "".
func MissingLogColumn(has map[string]bool) (col, why string) {
	for _, req := range RequiredLogColumns {
		if !has[req] {
			return req, "required column " + req + " is missing"
		}
	}
	if has["lat"] != has["lon"] {
		miss := "lat"
		if has["lat"] {
			miss = "lon"
		}
		return miss, "lat and lon must be given together; " + miss + " is missing"
	}
	maxCell := 0
	for n, ok := range has {
		if c, cell := CellColumn(n); ok && cell {
			maxCell = max(maxCell, c)
		}
	}
	for c := 1; c <= maxCell; c++ {
		if !has[CellColumnName(c)] {
			return CellColumnName(c), "cell columns must be numbered 1..n (here n = " + strconv.Itoa(maxCell) + "); " +
				CellColumnName(c) + " is missing"
		}
	}
	return "", ""
}
