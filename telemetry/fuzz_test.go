package telemetry

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
)

// FuzzParse checks that Parse never panics, that a refusal is a located
// *fleet.Error, and that an accepted log is consistent and analyses to finite,
// JSON-encodable figures. Seeds: testdata/fuzz/FuzzParse and the ones below.
func FuzzParse(f *testing.F) {
	f.Add([]byte("t_s,pack_v,pack_a\n0,12,1\n1,12,2\n"))
	f.Add([]byte("# start: 2026-01-01T00:00:00Z\r\nt_s,pack_v,pack_a,throttle,acc_x,acc_y,acc_z\r\n0,12,1,0,0,0,9.8\r\n0.1,12,5,0.5,1,0,30\r\n"))
	f.Add([]byte("t_s,pack_v,pack_a,rpm_m1,lat,lon,baro_pa,temp_c,cell_1_v\n0,4,0,0,47,8,101325,15,4\n1,3.9,3,5000,47.001,8,101300,15,3.9\n2,4,0,0,47,8,101325,15,4\n"))
	f.Add([]byte("t_s,pack_v,pack_a,rpm_m1,lat,lon,baro_pa,temp_c,cell_1_v,cell_2_v,acc_x,acc_y,acc_z\n0,4,0,0,,,101325,15,4,,0,0,9.8\n" +
		"1,3.9,3,,47.001,8,,15,3.9,,,0,12\n2,4,0,5000,47,8,101325,,,,1,0,9.8\n3,4,0,0,,,101325,15,4,,0,,9.8\n"))
	lim := Limits{MaxRows: 5000, MaxBytes: 1 << 18}
	f.Fuzz(func(t *testing.T, data []byte) {
		l, err := Parse(bytes.NewReader(data), lim)
		checkParsed(t, data, l, err, lim)
		lb, errb := ParseBytes(data, lim)
		sameParse(t, l, err, lb, errb)
	})
}

// sameParse checks that reading a log in place (ParseBytes) gives what
// reading it through a reader gives: the same log, or the same refusal.
func sameParse(t *testing.T, l *Log, err error, lb *Log, errb error) {
	t.Helper()
	if (err == nil) != (errb == nil) || (err != nil && err.Error() != errb.Error()) {
		t.Fatalf("through a reader: %v; in place: %v", err, errb)
	}
	if err == nil && !reflect.DeepEqual(nanFree(l), nanFree(lb)) {
		t.Fatalf("the log read in place differs from the log read through a reader")
	}
}

// nanFree is l with NaN (blank) replaced by a marker, so that DeepEqual can
// compare series holding blanks.
func nanFree(l *Log) *Log {
	c := *l
	fix := func(s []float64) []float64 {
		if s == nil {
			return nil
		}
		out := slices.Clone(s)
		for i, v := range out {
			if v != v {
				out[i] = math.MaxFloat64
			}
		}
		return out
	}
	c.T, c.PackV, c.PackA, c.Throttle, c.Baro, c.Temp = fix(c.T), fix(c.PackV), fix(c.PackA), fix(c.Throttle), fix(c.Baro), fix(c.Temp)
	c.AccX, c.AccY, c.AccZ, c.Lat, c.Lon = fix(c.AccX), fix(c.AccY), fix(c.AccZ), fix(c.Lat), fix(c.Lon)
	c.RPM = slices.Clone(c.RPM)
	for i := range c.RPM {
		c.RPM[i].RPM = fix(c.RPM[i].RPM)
	}
	c.Cells = slices.Clone(c.Cells)
	for i := range c.Cells {
		c.Cells[i] = fix(c.Cells[i])
	}
	return &c
}

// checkParsed checks a refusal is a located *fleet.Error within the input,
// and an accepted log is consistent and analyses to finite, JSON-encodable
// figures.
func checkParsed(t *testing.T, data []byte, l *Log, err error, lim Limits) {
	if err != nil {
		var fe *fleet.Error
		if !errors.As(err, &fe) {
			t.Fatalf("error %v is not a *fleet.Error", err)
		}
		if fe.Code != fleet.EUNPROCESSABLE || fe.Line <= 0 || fe.Message == "" {
			t.Fatalf("refusal %+v lacks code, line or message", fe)
		}
		if lines := bytes.Count(data, []byte{'\n'}) + 1; fe.Line > lines {
			t.Fatalf("refusal at line %d of a %d-line input", fe.Line, lines)
		}
		if !strings.HasPrefix(fe.Field, fmt.Sprintf("line %d", fe.Line)) || !strings.Contains(fe.Field, fe.Column) {
			t.Fatalf("refusal field %q does not name line %d and column %q", fe.Field, fe.Line, fe.Column)
		}
		return
	}
	if l.Rows <= 0 || l.Rows > lim.MaxRows || len(l.T) != l.Rows {
		t.Fatalf("rows %d, len(T) %d", l.Rows, len(l.T))
	}
	for i := 1; i < len(l.T); i++ {
		if !(l.T[i] > l.T[i-1]) {
			t.Fatalf("time not increasing at row %d: %v then %v", i, l.T[i-1], l.T[i])
		}
	}
	// Every series has Rows samples; only optional ones hold NaN (a blank
	// cell), as many as Log.Blank counts, never in every row, and lat and
	// lon are blank together.
	names := []string{"t_s", "pack_v", "pack_a", "throttle", "baro_pa", "temp_c", "acc_x", "acc_y", "acc_z", "lat", "lon"}
	series := [][]float64{l.T, l.PackV, l.PackA, l.Throttle, l.Baro, l.Temp, l.AccX, l.AccY, l.AccZ, l.Lat, l.Lon}
	for i, c := range l.Cells {
		names, series = append(names, fleet.CellColumnName(i+1)), append(series, c)
	}
	for _, r := range l.RPM {
		names, series = append(names, "rpm_"+r.Position), append(series, r.RPM)
	}
	blanks := 0
	for k, s := range series {
		if s == nil && k < 3 {
			t.Fatalf("required series %d missing", k)
		}
		if s != nil && len(s) != l.Rows {
			t.Fatalf("series %d has %d samples, log has %d rows", k, len(s), l.Rows)
		}
		nan := 0
		for i, v := range s {
			if math.IsInf(v, 0) || (math.IsNaN(v) && k < 3) {
				t.Fatalf("value %v accepted in %s", v, names[k])
			}
			if math.IsNaN(v) {
				nan++
			}
			if names[k] == "lat" && math.IsNaN(v) != math.IsNaN(l.Lon[i]) {
				t.Fatalf("row %d: lat %v, lon %v", i, v, l.Lon[i])
			}
		}
		if s != nil && (nan != l.Blank[names[k]] || nan == l.Rows) {
			t.Fatalf("%s: %d blanks, Blank says %d, rows %d", names[k], nan, l.Blank[names[k]], l.Rows)
		}
		blanks += nan
	}
	for c, n := range l.Blank {
		if n == l.Rows {
			blanks += n // a column blank throughout is absent
		} else if !slices.Contains(l.Columns, c) {
			t.Fatalf("column %s with blanks is not in Columns %v", c, l.Columns)
		}
	}
	if want := sumValues(l.Blank); blanks != want {
		t.Fatalf("%d blanks in the series, Blank counts %d", blanks, want)
	}
	m, err := Analyze(l, Params{MassKg: 1.5, RotorDiameterM: 0.25, CellsS: 4, Chemistry: fleet.LiPo, RatedMah: 5000, CRating: 20})
	if err != nil {
		t.Fatalf("Analyze of an accepted log: %v", err)
	}
	if _, err := json.Marshal(m); err != nil {
		t.Fatalf("metrics do not encode: %v", err)
	}
}

func sumValues(m map[string]int) int {
	n := 0
	for _, v := range m {
		n += v
	}
	return n
}
