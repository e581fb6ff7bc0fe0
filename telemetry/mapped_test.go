package telemetry_test

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"maps"
	"math"
	"os"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/telemetry"
)

// mapOf decodes and validates a column map given as JSON.
func mapOf(t testing.TB, js string) *fleet.ColumnMap {
	t.Helper()
	var m fleet.ColumnMap
	if err := json.Unmarshal([]byte(js), &m); err != nil {
		t.Fatalf("map %s: %v", js, err)
	}
	if err := m.Validate(); err != nil {
		t.Fatalf("map %s: %v", js, err)
	}
	return &m
}

func parseMapped(t *testing.T, m *fleet.ColumnMap, s string) *telemetry.Log {
	t.Helper()
	l, err := telemetry.ParseMapped(strings.NewReader(s), m, telemetry.Limits{})
	if err != nil {
		t.Fatalf("ParseMapped: %v", err)
	}
	return l
}

const groundMap = `{"name": "ground", "time": {"column": "Time(us)", "unit": "us", "origin": "epoch"},
	"columns": {"pack_v": {"from": "BattVolt_mV", "scale": 0.001}, "pack_a": {"from": "BattCurr_cA", "scale": 0.01},
		"rpm_m1": {"from": "Motor1 RPM"}, "baro_pa": {"from": "Press_hPa", "scale": 100},
		"temp_c": {"from": "OAT_F", "scale": 0.5555555555555556, "offset": -17.77777777777778},
		"lat": {"from": "GPS.Lat", "scale": 1e-7}, "lon": {"from": "GPS.Lon", "scale": 1e-7}},
	"detect": ["Time(us)", "BattVolt_mV"]}`

// Units: SI prefixes (ms = 1e-3 s, us = 1e-6 s, ns = 1e-9 s; BIPM SI
// Brochure, 9th ed., table 7), Unix time as POSIX defines it (seconds since
// 1970-01-01T00:00:00Z; Go's time.Unix is the reference), and the
// Fahrenheit scale's definition (32 F = 0 C, 212 F = 100 C).
func TestMappedUnitsAndOrigins(t *testing.T) {
	m := mapOf(t, groundMap)
	l := parseMapped(t, m, "Time(us),BattVolt_mV,BattCurr_cA,Motor1 RPM,Press_hPa,OAT_F,GPS.Lat,GPS.Lon\n"+
		"1715679000000000,16800,1250,0,1013.25,32,471234567,-84000000\n"+
		"1715679000500000,16750,-20,4200,1013.2,212,471234568,-84000001\n")
	want := time.Unix(1715679000, 0).UTC()
	if l.Meta.Start == nil || !l.Meta.Start.Equal(want) {
		t.Fatalf("start %v, want %v", l.Meta.Start, want)
	}
	checks := []struct {
		name      string
		got, want []float64
	}{
		{"t_s", l.T, []float64{0, 0.5}}, {"pack_v", l.PackV, []float64{16.8, 16.75}},
		{"pack_a", l.PackA, []float64{12.5, -0.2}}, {"baro_pa", l.Baro, []float64{101325, 101320}},
		{"temp_c", l.Temp, []float64{0, 100}}, {"lat", l.Lat, []float64{47.1234567, 47.1234568}},
		{"lon", l.Lon, []float64{-8.4, -8.4000001}}, {"rpm_m1", l.RPM[0].RPM, []float64{0, 4200}},
	}
	for _, c := range checks {
		if s := l.Series(c.name); len(s) == 0 || &s[0] != &c.got[0] {
			t.Errorf("Series(%s) is not the log's %s series", c.name, c.name)
		}
		for i := range c.want {
			if math.Abs(c.got[i]-c.want[i]) > 1e-12*math.Max(1, math.Abs(c.want[i])) {
				t.Errorf("%s[%d] = %.15g, want %.15g", c.name, i, c.got[i], c.want[i])
			}
		}
	}
	// A power-of-ten scale moves the decimal point exactly: the same double
	// as reading the value in the target unit.
	if l.PackV[0] != 16.8 || l.Lat[0] != 47.1234567 {
		t.Errorf("power-of-ten scale not exact: %v %v", l.PackV[0], l.Lat[0])
	}
	if fmt.Sprint(l.Columns) != "[t_s pack_v pack_a rpm_m1 baro_pa temp_c lat lon]" || len(l.Unknown) != 0 {
		t.Errorf("columns %v unknown %v", l.Columns, l.Unknown)
	}

	for _, c := range []struct {
		unit, origin string
		rows         []string
		want         []float64
		start        *time.Time
	}{
		{"s", "start", []string{"5.25", "6", "1e1"}, []float64{5.25, 6, 10}, nil},
		{"ms", "start", []string{"0", "1500", "1500.5"}, []float64{0, 1.5, 1.5005}, nil},
		{"ns", "start", []string{"0", "1500000000", "2000000001"}, []float64{0, 1.5, 2.000000001}, nil},
		// 19-digit epoch nanoseconds, one apart: beyond a double's 53 bits, read exactly.
		{"ns", "epoch", []string{"1715679000000000000", "1715679000000000001", "1715679000000000002"},
			[]float64{0, 1e-9, 2e-9}, &want},
		{"s", "epoch", []string{"1715679000.25", "1715679001", "1715679001.5"}, []float64{0, 0.75, 1.25},
			ptr(time.Unix(1715679000, 250e6).UTC())},
		{"", "rfc3339", []string{"2024-05-14T11:30:00+02:00", "2024-05-14 09:30:00.5Z", "2024-05-14T09:30:01.000000001Z"},
			[]float64{0, 0.5, 1.000000001}, &want},
	} {
		tm := fmt.Sprintf(`{"column": "T", "origin": %q}`, c.origin)
		if c.unit != "" {
			tm = fmt.Sprintf(`{"column": "T", "unit": %q, "origin": %q}`, c.unit, c.origin)
		}
		m := mapOf(t, `{"name": "u", "time": `+tm+`, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}}}`)
		l := parseMapped(t, m, "T,V,A\n"+c.rows[0]+",1,1\n"+c.rows[1]+",1,1\n"+c.rows[2]+",1,1\n")
		for i := range c.want {
			if math.Abs(l.T[i]-c.want[i]) > 1e-15*math.Max(1, c.want[i]) {
				t.Errorf("%s %s: t[%d] = %.12g, want %.12g", c.unit, c.origin, i, l.T[i], c.want[i])
			}
		}
		if (c.start == nil) != (l.Meta.Start == nil) || (c.start != nil && !c.start.Equal(*l.Meta.Start)) {
			t.Errorf("%s %s: start %v, want %v", c.unit, c.origin, l.Meta.Start, c.start)
		}
	}
}

func ptr[T any](v T) *T { return &v }

// RFC 4180 (sections 2.5-2.7): quoted fields may hold the delimiter, line
// breaks and doubled quotes; plus a byte-order mark, blank lines, CRLF, a
// preamble before the header row, and ';' and tab delimiters.
func TestMappedCSVQuoting(t *testing.T) {
	semi := mapOf(t, `{"name": "q", "delimiter": ";", "header_row": 3, "time": {"column": "t ms", "unit": "ms"},
		"columns": {"pack_v": {"from": "Volt; pack"}, "pack_a": {"from": "Amp \"A\""}}}`)
	in := "\xEF\xBB\xBFexported by \"unit 7\"; site B\r\n\r\n" +
		"\"t ms\";\"Volt; pack\";\"Amp \"\"A\"\"\";note\r\n" +
		"\"0\";\"16.8\";\" 1.5 \";\"plain\"\r\n" +
		"\r\n   \r\n" +
		"10;16.7;2;\"two\r\nlines; and \"\"quotes\"\"\"\r\n" +
		"20; \"16.6\" ;3;\r\n"
	l := parseMapped(t, semi, in)
	if l.Rows != 3 || fmt.Sprint(l.T) != "[0 0.01 0.02]" || fmt.Sprint(l.PackV) != "[16.8 16.7 16.6]" ||
		fmt.Sprint(l.PackA) != "[1.5 2 3]" || fmt.Sprint(l.Unknown) != "[note]" {
		t.Fatalf("rows %d t %v v %v a %v unknown %v", l.Rows, l.T, l.PackV, l.PackA, l.Unknown)
	}
	// A refusal after the record that spans two lines names the physical line.
	_, err := telemetry.ParseMapped(strings.NewReader(in+"30;x;4;\r\n"), semi, telemetry.Limits{})
	wantRefusal(t, err, 10, "Volt; pack", "pack_v", `value "x" is not a number`)
	// ...and one inside it, the line the field starts on.
	_, err = telemetry.ParseMapped(strings.NewReader(strings.Replace(in, "\"two\r\nlines", "\"two\r\nli\"nes", 1)), semi, telemetry.Limits{})
	wantRefusal(t, err, 8, "", "", "text after a closing quote")

	tab := mapOf(t, `{"name": "t", "delimiter": "\t", "time": {"column": "t"},
		"columns": {"pack_v": {"from": "v"}, "pack_a": {"from": "a", "negate": true}}}`)
	l = parseMapped(t, tab, "t\tv\ta\tremark\n0\t12\t-3.5\ta,b;c\n1\t12\t-4\t\n")
	if fmt.Sprint(l.PackA) != "[3.5 4]" {
		t.Fatalf("negated current %v", l.PackA)
	}
}

// Every refusal names the physical line and the source column with the
// target it maps to.
func TestMappedRefusals(t *testing.T) {
	m := mapOf(t, groundMap)
	head := "Time(us),BattVolt_mV,BattCurr_cA,Motor1 RPM,Press_hPa,OAT_F,GPS.Lat,GPS.Lon\n"
	good := func(i int) string {
		return fmt.Sprintf("%d,16800,1250,4000,1013.25,59,471234567,84000000\n", 1715679000000000+i*20000)
	}
	rows := func(n int) string {
		var b strings.Builder
		for i := range n {
			b.WriteString(good(i))
		}
		return b.String()
	}
	// The example: 810 good rows, then a decimal comma on line 812.
	_, err := telemetry.ParseMapped(strings.NewReader(head+rows(810)+
		"1715679016200000,16800,\"1,2\",4000,1013.25,59,471234567,84000000\n"), m, telemetry.Limits{})
	fe := wantRefusal(t, err, 812, "BattCurr_cA", "pack_a", `value "1,2" is not a number`)
	if got := fe.Field + ": " + fe.Message; got != `line 812, column BattCurr_cA (maps to pack_a): value "1,2" is not a number` {
		t.Errorf("refusal reads %q", got)
	}
	for _, c := range []struct {
		name, in          string
		line              int
		col, target, what string
	}{
		{"empty", head + good(0) + "1715679000020000,,1250,4000,1013.25,59,471234567,84000000\n", 3, "BattVolt_mV", "pack_v", "empty value"},
		{"empty current", head + good(0) + "1715679000020000,16800, ,4000,1013.25,59,471234567,84000000\n", 3, "BattCurr_cA", "pack_a", "empty value in a required column"},
		{"empty time", head + good(0) + ",16800,1250,4000,1013.25,59,471234567,84000000\n", 3, "Time(us)", "t_s", "empty time"},
		{"half a fix", head + good(0) + "1715679000020000,16800,1250,4000,1013.25,59,,84000000\n", 3, "GPS.Lat", "lat", "lat and lon must be blank together"},
		{"nan in an optional column", head + good(0) + "1715679000020000,16800,1250,NaN,1013.25,59,,\n", 3, "Motor1 RPM", "rpm_m1", "NaN or infinite"},
		{"nan", head + good(0) + "1715679000020000,16800,NaN,4000,1013.25,59,471234567,84000000\n", 3, "BattCurr_cA", "pack_a", "NaN or infinite"},
		{"range after scale", head + "1715679000000000,16800,1250,4000,1013.25,59,950000000,84000000\n", 2, "GPS.Lat", "lat", "gives lat 95, outside"},
		{"negative rpm", head + "1715679000000000,16800,1250,-1,1013.25,59,471234567,84000000\n", 2, "Motor1 RPM", "rpm_m1", "gives rpm_m1 -1"},
		{"below absolute zero", head + "1715679000000000,16800,1250,0,1013.25,-500,471234567,84000000\n", 2, "OAT_F", "temp_c", "outside"},
		{"time back", head + good(1) + good(0), 3, "Time(us)", "t_s", "is not after the previous row's"},
		{"time text", head + "soon,16800,1250,4000,1013.25,59,471234567,84000000\n", 2, "Time(us)", "t_s", `value "soon" is not a number`},
		{"short row", head + "1715679000000000,16800,1250\n", 2, "Motor1 RPM", "rpm_m1", "row has 3 fields, the header has 8"},
		{"long row", head + "1715679000000000,16800,1250,4000,1013.25,59,471234567,84000000,9\n", 2, "GPS.Lon", "lon", "row has 9 fields"},
		{"missing source", strings.Replace(head, "BattCurr_cA", "Current", 1) + good(0), 1, "BattCurr_cA", "pack_a", `the header has no column "BattCurr_cA"`},
		{"lat without lon", strings.Replace(head, "GPS.Lon", "GPS.Alt", 1) + good(0), 1, "GPS.Lon", "lon", "lat and lon must be given together"},
		{"twice", strings.Replace(head, "Press_hPa", "BattVolt_mV", 1) + good(0), 1, "BattVolt_mV", "", "appears twice"},
		{"bare quote", head + "1715679000000000,16800,12\"50,4000,1013.25,59,471234567,84000000\n", 2, "", "", "a quote inside an unquoted field"},
		{"unclosed", head + good(0) + "1715679000020000,\"16800,1250\n", 3, "", "", "not closed by the end of the log"},
		{"no header", "", 1, "", "", "no header row"},
		{"no rows", head + "\n\n", 3, "", "", "no data rows"},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := telemetry.ParseMapped(strings.NewReader(c.in), m, telemetry.Limits{})
			wantRefusal(t, err, c.line, c.col, c.target, c.what)
		})
	}
	// Limits count data rows and bytes as read (a stream that would not end is cut off).
	_, err = telemetry.ParseMapped(strings.NewReader(head+rows(11)), m, telemetry.Limits{MaxRows: 10})
	wantRefusal(t, err, 12, "", "", "more than the limit of 10 data rows")
	in := head + rows(100)
	_, err = telemetry.ParseMapped(strings.NewReader(in), m, telemetry.Limits{MaxBytes: int64(len(in) - 1)})
	wantRefusal(t, err, 101, "", "", "larger than the limit")
	if _, err := telemetry.ParseMapped(strings.NewReader(in), m, telemetry.Limits{MaxBytes: int64(len(in))}); err != nil {
		t.Errorf("a log of exactly the byte limit: %v", err)
	}
}

// Blank cells in mapped optional columns are no reading; the counts are by
// target column.
func TestMappedBlankCells(t *testing.T) {
	m := mapOf(t, groundMap)
	l := parseMapped(t, m, "Time(us),BattVolt_mV,BattCurr_cA,Motor1 RPM,Press_hPa,OAT_F,GPS.Lat,GPS.Lon\n"+
		"1715679000000000,16800,1250,,1013.25,59,,\n"+
		"1715679000020000,16800,1250,4000,,59,\"\",\"\"\n"+
		"1715679000040000,16800,1250,4100,1013.2,59,471234567,84000000\n")
	if want := map[string]int{"rpm_m1": 1, "baro_pa": 1, "lat": 2, "lon": 2}; !maps.Equal(l.Blank, want) {
		t.Errorf("blank %v, want %v", l.Blank, want)
	}
	if !math.IsNaN(l.RPM[0].RPM[0]) || l.RPM[0].RPM[1] != 4000 || !math.IsNaN(l.Lat[1]) || l.Lat[2] != 47.1234567 {
		t.Errorf("rpm %v lat %v", l.RPM[0].RPM, l.Lat)
	}
}

// wantRefusal checks err is a located refusal: line, source column, its
// target in the field, and the message.
func wantRefusal(t *testing.T, err error, line int, col, target, what string) *fleet.Error {
	t.Helper()
	var fe *fleet.Error
	if !errors.As(err, &fe) {
		t.Fatalf("want a refusal at line %d (%s), got %v", line, what, err)
	}
	field := fmt.Sprintf("line %d", line)
	if col != "" {
		field += ", column " + col
	}
	if target != "" {
		field += " (maps to " + target + ")"
	}
	if fe.Code != fleet.EUNPROCESSABLE || fe.Line != line || fe.Column != col || fe.Field != field ||
		!strings.Contains(fe.Message, what) {
		t.Errorf("refusal %q / %q (line %d, column %q), want field %q and %q", fe.Field, fe.Message, fe.Line, fe.Column, field, what)
	}
	return fe
}

// A map's validation names the member at fault.
func TestColumnMapValidation(t *testing.T) {
	base := func(edit func(m map[string]any)) string {
		var m map[string]any
		if err := json.Unmarshal([]byte(groundMap), &m); err != nil {
			t.Fatal(err)
		}
		edit(m)
		b, _ := json.Marshal(m)
		return string(b)
	}
	cols := func(m map[string]any) map[string]any { return m["columns"].(map[string]any) }
	for _, c := range []struct {
		name, js, field string
	}{
		{"unknown target", base(func(m map[string]any) { cols(m)["volts"] = map[string]any{"from": "X"} }), "columns.volts"},
		{"t_s as target", base(func(m map[string]any) { cols(m)["t_s"] = map[string]any{"from": "X"} }), "columns.t_s"},
		{"required missing", base(func(m map[string]any) { delete(cols(m), "pack_a") }), "columns.pack_a"},
		{"lat alone", base(func(m map[string]any) { delete(cols(m), "lon") }), "columns.lon"},
		{"cells with a gap", base(func(m map[string]any) { cols(m)["cell_2_v"] = map[string]any{"from": "C2"} }), "columns.cell_1_v"},
		{"zero scale", base(func(m map[string]any) { cols(m)["rpm_m1"] = map[string]any{"from": "R", "scale": 0} }), "columns.rpm_m1.scale"},
		{"source twice", base(func(m map[string]any) { cols(m)["rpm_m2"] = map[string]any{"from": "Motor1 RPM"} }), "columns.rpm_m2.from"},
		{"time column as source", base(func(m map[string]any) { cols(m)["rpm_m2"] = map[string]any{"from": "Time(us)"} }), "columns.rpm_m2.from"},
		{"unknown member", base(func(m map[string]any) { cols(m)["rpm_m1"] = map[string]any{"from": "R", "factor": 2} }), "columns.rpm_m1.factor"},
		{"unit", base(func(m map[string]any) { m["time"].(map[string]any)["unit"] = "min" }), "time.unit"},
		{"origin", base(func(m map[string]any) { m["time"].(map[string]any)["origin"] = "gps" }), "time.origin"},
		{"unit with rfc3339", base(func(m map[string]any) { m["time"].(map[string]any)["origin"] = "rfc3339" }), "time.unit"},
		{"delimiter", base(func(m map[string]any) { m["delimiter"] = "|" }), "delimiter"},
		{"header row", base(func(m map[string]any) { m["header_row"] = 101 }), "header_row"},
		{"detect twice", base(func(m map[string]any) { m["detect"] = []string{"A", "A"} }), "detect[1]"},
		{"detect native", base(func(m map[string]any) { m["detect"] = []string{"t_s", "pack_v"} }), "detect"},
		{"name native", base(func(m map[string]any) { m["name"] = "Native" }), "name"},
		{"name uuid", base(func(m map[string]any) { m["name"] = "0190d7a8-6f5e-7c3b-9a41-2f1e0d9c8b7a" }), "name"},
		{"target twice", strings.Replace(groundMap, `"rpm_m1": {"from": "Motor1 RPM"}`, `"rpm_m1": {"from": "Motor1 RPM"}, "rpm_m1": {"from": "M1"}`, 1), "columns.rpm_m1"},
	} {
		t.Run(c.name, func(t *testing.T) {
			var m fleet.ColumnMap
			err := json.Unmarshal([]byte(c.js), &m)
			if err == nil {
				err = m.Validate()
			}
			var fe *fleet.Error
			if !errors.As(err, &fe) || fe.Field != c.field {
				t.Fatalf("err %v, want a refusal naming %s", err, c.field)
			}
		})
	}
}

// A stray quote cannot make the rest of a large log one record.
func TestMappedRecordBound(t *testing.T) {
	m := mapOf(t, `{"name": "b", "time": {"column": "t"}, "columns": {"pack_v": {"from": "v"}, "pack_a": {"from": "a"}}}`)
	var b bytes.Buffer
	b.WriteString("t,v,a\n0,\"1,1\n")
	for i := range 200_000 {
		fmt.Fprintf(&b, "%d,1,1\n", i+1)
	}
	_, err := telemetry.ParseMapped(&b, m, telemetry.Limits{})
	wantRefusal(t, err, 2, "", "", "a quote is not closed")
}

// RFC 3339 times per row: rows within a minute take a short path; every
// row must still read as Go's time.Parse reads it (the reference), across
// minute, hour and zone changes, and an invalid second is refused.
func TestMappedRFC3339Rows(t *testing.T) {
	m := mapOf(t, `{"name": "r", "time": {"column": "T", "origin": "rfc3339"}, "columns": {"pack_v": {"from": "V"}, "pack_a": {"from": "A"}}}`)
	rows := []string{"2026-05-04T09:59:58.5Z", "2026-05-04T09:59:59Z", "2026-05-04T09:59:59.25Z", "2026-05-04T10:00:00.000000001Z",
		"2026-05-04T10:00:07.1Z", "2026-05-04T12:00:07.2+02:00", "2026-05-04T12:00:08+02:00", "2026-05-04 10:00:08.5Z",
		"2026-05-04T10:00:09.123456789Z", "2026-05-04T10:01:00Z"}
	in := "T,V,A\n"
	for _, r := range rows {
		in += r + ",1,1\n"
	}
	l := parseMapped(t, m, in)
	t0, _ := time.Parse(time.RFC3339Nano, rows[0])
	for i, r := range rows {
		ref, err := time.Parse(time.RFC3339Nano, strings.Replace(r, " ", "T", 1))
		if err != nil {
			t.Fatal(err)
		}
		if want := float64(ref.Sub(t0)) / 1e9; l.T[i] != want {
			t.Errorf("row %d %s: t %.9f, want %.9f", i, r, l.T[i], want)
		}
	}
	_, err := telemetry.ParseMapped(strings.NewReader(in+"2026-05-04T10:01:60Z,1,1\n"), m, telemetry.Limits{})
	wantRefusal(t, err, len(rows)+2, "T", "t_s", "is not an RFC 3339 time")
}

// The README's column map example (map and export) must stay true: the map
// validates and the export reads through it to the values it stands for.
func TestReadmeColumnMapExample(t *testing.T) {
	src, err := os.ReadFile("../README.md")
	if err != nil {
		t.Fatal(err)
	}
	_, sec, _ := strings.Cut(string(src), "### Logs in other layouts")
	block := func(fence string) string {
		_, after, ok := strings.Cut(sec, fence+"\n")
		body, _, ok2 := strings.Cut(after, "```")
		if !ok || !ok2 {
			t.Fatalf("no %s block in the README's column map section", fence)
		}
		return body
	}
	m := mapOf(t, block("```json"))
	l := parseMapped(t, m, block("```"))
	if l.Rows != 3 || l.PackV[2] != 24.6 || l.PackA[2] != 18.2 || l.Baro[0] != 98012 || len(l.RPM) != 4 ||
		math.Abs(l.Temp[0]-14.5) > 1e-12 || l.T[2] != 0.04 || fmt.Sprint(l.Unknown) != "[Mode]" {
		t.Fatalf("README example read as rows %d v %v a %v baro %v temp %v t %v unknown %v",
			l.Rows, l.PackV, l.PackA, l.Baro, l.Temp, l.T, l.Unknown)
	}
}
