package telemetry

import (
	"bytes"
	"encoding/json"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// fuzzMaps are the simulator's three foreign layouts and a map with every
// conversion (scales, offset, negate, epoch microseconds).
func fuzzMaps(f *testing.F) []*fleet.ColumnMap {
	var raw [][]byte
	for _, l := range sim.LogLayouts() {
		raw = append(raw, l.Map)
	}
	raw = append(raw, []byte(`{"name": "all", "time": {"column": "T", "unit": "us", "origin": "epoch"},
		"columns": {"pack_v": {"from": "V", "scale": 0.001}, "pack_a": {"from": "A", "scale": 0.01, "negate": true},
		"rpm_m1": {"from": "R"}, "throttle": {"from": "thr", "scale": 0.01}, "cell_1_v": {"from": "C1", "scale": 0.001},
		"baro_pa": {"from": "P", "scale": 100}, "temp_c": {"from": "F", "scale": 0.5555555555555556, "offset": -17.77777777777778},
		"acc_z": {"from": "Z", "scale": 0.00980665}, "lat": {"from": "la", "scale": 1e-7}, "lon": {"from": "lo", "scale": 1e-7}}}`))
	var out []*fleet.ColumnMap
	for _, b := range raw {
		var m fleet.ColumnMap
		if err := json.Unmarshal(b, &m); err != nil {
			f.Fatal(err)
		}
		if err := m.Validate(); err != nil {
			f.Fatal(err)
		}
		out = append(out, &m)
	}
	return out
}

// FuzzParseMapped is FuzzParse for logs read through a column map: no
// panic, refusals located within the input and naming the column, accepted
// logs consistent and analysable. which picks the map.
func FuzzParseMapped(f *testing.F) {
	maps := fuzzMaps(f)
	spec := sim.DefaultSpec(3)
	spec.DurationS = 120
	var native bytes.Buffer
	if _, err := sim.Generate(spec, &native); err != nil {
		f.Fatal(err)
	}
	for i, l := range sim.LogLayouts() {
		var b bytes.Buffer
		if err := l.Rewrite(native.Bytes(), &b); err != nil {
			f.Fatal(err)
		}
		lines := bytes.SplitAfterN(b.Bytes(), []byte{'\n'}, 12)
		f.Add(bytes.Join(lines[:11], nil), uint8(i))
	}
	f.Add([]byte("\xEF\xBB\xBFT,V,A,R,thr,C1,P,F,Z,la,lo\n1715679000000000,16800,-1250,0,0,4200,1013.25,59,1000,471234567,84000000\n"+
		"1715679000020000,\"16,7\",-1250,4000,55,4100,1013.2,59.5,1020,471234568,84000001\n"), uint8(3))
	f.Add([]byte("T;V;A\n1;2;3\n"), uint8(1))
	f.Add([]byte("T,V,A,R,thr,C1,P,F,Z,la,lo\n1715679000000000,16800,-1250,,0,,1013.25,,1000,,\n"+
		"1715679000020000,16700,-1250,4000,,4100,,59.5,,471234568,84000001\n"), uint8(3))
	lim := Limits{MaxRows: 5000, MaxBytes: 1 << 18}
	f.Fuzz(func(t *testing.T, data []byte, which uint8) {
		l, err := ParseMapped(bytes.NewReader(data), maps[int(which)%len(maps)], lim)
		checkParsed(t, data, l, err, lim)
		lb, errb := ParseMappedBytes(data, maps[int(which)%len(maps)], lim)
		sameParse(t, l, err, lb, errb)
	})
}
