package telemetry

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"math"
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
	lim := Limits{MaxRows: 5000, MaxBytes: 1 << 18}
	f.Fuzz(func(t *testing.T, data []byte) {
		l, err := Parse(bytes.NewReader(data), lim)
		checkParsed(t, data, l, err, lim)
	})
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
	series := [][]float64{l.T, l.PackV, l.PackA, l.Throttle, l.Baro, l.Temp, l.AccX, l.AccY, l.AccZ, l.Lat, l.Lon}
	series = append(series, l.Cells...)
	for _, r := range l.RPM {
		series = append(series, r.RPM)
	}
	for k, s := range series {
		if s == nil && k < 3 {
			t.Fatalf("required series %d missing", k)
		}
		if s != nil && len(s) != l.Rows {
			t.Fatalf("series %d has %d samples, log has %d rows", k, len(s), l.Rows)
		}
		for _, v := range s {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("non-finite value %v accepted", v)
			}
		}
	}
	m, err := Analyze(l, Params{MassKg: 1.5, RotorDiameterM: 0.25, CellsS: 4, Chemistry: fleet.LiPo, RatedMah: 5000, CRating: 20})
	if err != nil {
		t.Fatalf("Analyze of an accepted log: %v", err)
	}
	if _, err := json.Marshal(m); err != nil {
		t.Fatalf("metrics do not encode: %v", err)
	}
}
