package telemetry

import (
	"errors"
	"math"
	"math/rand/v2"
	"os"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"testing"
	"testing/iotest"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

func parseString(t *testing.T, s string) *Log {
	t.Helper()
	l, err := Parse(strings.NewReader(s), Limits{})
	if err != nil {
		t.Fatalf("Parse: %v", err)
	}
	return l
}

func parseFile(t *testing.T, name string) *Log {
	t.Helper()
	f, err := os.Open("../testdata/logs/" + name)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	l, err := Parse(f, Limits{})
	if err != nil {
		t.Fatalf("Parse %s: %v", name, err)
	}
	return l
}

func TestParseExample(t *testing.T) {
	l := parseFile(t, "example.csv")
	start := time.Date(2026, 5, 14, 9, 30, 0, 0, time.UTC)
	if l.Meta.Start == nil || !l.Meta.Start.Equal(start) {
		t.Errorf("start = %v, want %v", l.Meta.Start, start)
	}
	if l.Meta.Airframe != "RW-07" || !slices.Equal(l.Meta.Packs, []string{"P-0112", "P-0113"}) {
		t.Errorf("airframe %q packs %q", l.Meta.Airframe, l.Meta.Packs)
	}
	if l.Meta.Other["site"] != "north quarry" {
		t.Errorf("other metadata = %v", l.Meta.Other)
	}
	if l.Rows != 5 || len(l.T) != 5 {
		t.Fatalf("rows = %d, len(T) = %d, want 5", l.Rows, len(l.T))
	}
	if !slices.Equal(l.Unknown, []string{"gps_sats", "note"}) {
		t.Errorf("unknown = %q", l.Unknown)
	}
	if len(l.RPM) != 4 || l.RPM[2].Position != "m3" || l.RPM[2].RPM[4] != 4880 {
		t.Errorf("rpm series = %+v", l.RPM)
	}
	if len(l.Cells) != 6 || l.Cells[5][1] != 4.183 {
		t.Errorf("cells = %v", l.Cells)
	}
	if l.Lat[4] != 47.000025 || l.Lon[4] != 8.00003 || l.Baro[3] != 98005 || l.AccZ[2] != 10.4 {
		t.Errorf("series values wrong: lat %v lon %v baro %v accz %v", l.Lat, l.Lon, l.Baro, l.AccZ)
	}
	if l.Throttle != nil {
		t.Errorf("throttle absent but not nil")
	}
	wantCols := []string{"t_s", "pack_v", "pack_a", "rpm_m1", "rpm_m2", "rpm_m3", "rpm_m4",
		"cell_1_v", "cell_2_v", "cell_3_v", "cell_4_v", "cell_5_v", "cell_6_v",
		"baro_pa", "temp_c", "acc_x", "acc_y", "acc_z", "lat", "lon"}
	if !slices.Equal(l.Columns, wantCols) {
		t.Errorf("columns = %q", l.Columns)
	}
}

func TestParseCRLFMatchesLF(t *testing.T) {
	b, err := os.ReadFile("../testdata/logs/example.csv")
	if err != nil {
		t.Fatal(err)
	}
	lf := parseString(t, string(b))
	crlf := parseString(t, strings.ReplaceAll(string(b), "\n", "\r\n"))
	if !reflect.DeepEqual(lf, crlf) {
		t.Errorf("CRLF log differs from LF log")
	}
	// A BOM and a last line without a line ending are accepted too.
	bom := parseString(t, "\xEF\xBB\xBF"+strings.TrimSuffix(string(b), "\n"))
	if !reflect.DeepEqual(lf, bom) {
		t.Errorf("log with BOM and no final newline differs")
	}
}

func TestParseColumnOrder(t *testing.T) {
	a := parseString(t, "t_s,pack_v,pack_a,rpm_m1\n0,12,1,100\n1,11.9,2,200\n")
	b := parseString(t, "rpm_m1,pack_a,t_s,pack_v\n100,1,0,12\n200,2,1,11.9\n")
	if !reflect.DeepEqual(a.T, b.T) || !reflect.DeepEqual(a.PackV, b.PackV) ||
		!reflect.DeepEqual(a.PackA, b.PackA) || !reflect.DeepEqual(a.RPM, b.RPM) {
		t.Errorf("column order changed the series: %+v vs %+v", a, b)
	}
	if b.Columns[0] != "rpm_m1" || b.Columns[2] != "t_s" {
		t.Errorf("columns not in header order: %q", b.Columns)
	}
}

func TestParseCommentsAnywhere(t *testing.T) {
	l := parseString(t, "# a plain comment\n#airframe:RW-01\n\n# packs: A1,A2,,\nt_s,pack_v,pack_a\n"+
		"# between rows\n0,12,1\n\n# start: 2020-01-01T00:00:00Z\n1,12,1\n   \n2,12,1\n# trailing\n")
	if l.Rows != 3 {
		t.Errorf("rows = %d, want 3", l.Rows)
	}
	if l.Meta.Airframe != "RW-01" || !slices.Equal(l.Meta.Packs, []string{"A1", "A2"}) {
		t.Errorf("metadata = %+v", l.Meta)
	}
	// A key: value comment after the header is only a comment.
	if l.Meta.Start != nil {
		t.Errorf("start taken from a comment after the header")
	}
}

func TestParseUnknownColumns(t *testing.T) {
	l := parseString(t, "t_s,mode,pack_v,esc_temp,pack_a,mode,rpm_,cell_0_v,cell_01_v\n"+
		"0,LOITER,12,41.5,1,x,1,2,3\n1,RTL mode,12,42,1,y,,,\n")
	want := []string{"mode", "esc_temp", "rpm_", "cell_0_v", "cell_01_v"}
	if !slices.Equal(l.Unknown, want) {
		t.Errorf("unknown = %q, want %q", l.Unknown, want)
	}
	if len(l.Columns) != 3 || l.RPM != nil || l.Cells != nil {
		t.Errorf("unknown columns were recognised: %q", l.Columns)
	}
}

func TestParseLongLine(t *testing.T) {
	// A line longer than the read buffer goes through the slow path.
	text := strings.Repeat("x", 200_000)
	l := parseString(t, "t_s,pack_v,pack_a,blob\n0,12,1,"+text+"\n1,12,2,y\n")
	if l.Rows != 2 || l.PackA[1] != 2 {
		t.Errorf("long line: rows %d packA %v", l.Rows, l.PackA)
	}
}

func TestParseRefusals(t *testing.T) {
	const hdr = "t_s,pack_v,pack_a,throttle\n"
	cases := []struct {
		name string
		in   string
		lim  Limits
		line int
		col  string
	}{
		{"missing required column", "# c\nt_s,pack_v,throttle\n0,1,0\n", Limits{}, 2, "pack_a"},
		{"missing t_s", "pack_v,pack_a\n1,1\n", Limits{}, 1, "t_s"},
		{"non-numeric value", hdr + "0,12,1,0\n1,12,abc,0\n", Limits{}, 3, "pack_a"},
		{"NaN", hdr + "0,NaN,1,0\n", Limits{}, 2, "pack_v"},
		{"Inf", hdr + "0,12,1,0\n1,12,+Inf,0\n", Limits{}, 3, "pack_a"},
		{"overflow", hdr + "0,1e400,1,0\n", Limits{}, 2, "pack_v"},
		{"too few fields", hdr + "0,12,1,0\n1,12\n", Limits{}, 3, "pack_a"},
		{"too many fields", hdr + "0,12,1,0,5\n", Limits{}, 2, "throttle"},
		{"time equal", hdr + "0,12,1,0\n# c\n0,12,1,0\n", Limits{}, 4, "t_s"},
		{"time decreasing", hdr + "1,12,1,0\n0.5,12,1,0\n", Limits{}, 3, "t_s"},
		{"more rows than limit", hdr + "0,12,1,0\n1,12,1,0\n2,12,1,0\n", Limits{MaxRows: 2}, 4, ""},
		{"more bytes than limit", hdr + "0,12,1,0\n1,12,1,0\n", Limits{MaxBytes: 30}, 2, ""},
		{"empty required value", hdr + "0, ,1,0\n", Limits{}, 2, "pack_v"},
		{"empty time", hdr + "0,12,1,0\n,12,1,0\n", Limits{}, 3, "t_s"},
		{"empty current", hdr + "0,12,1,0\n1,12,,0\n", Limits{}, 3, "pack_a"},
		{"lat without lon in a row", "t_s,pack_v,pack_a,lat,lon\n0,12,1,,\n1,12,1,47.1,\n", Limits{}, 3, "lon"},
		{"lon without lat in a row", "t_s,pack_v,pack_a,lon,lat\n0,12,1,8.4,47.1\n1,12,1,8.4, \n", Limits{}, 3, "lat"},
		{"NaN in an optional column", hdr + "0,12,1,NaN\n", Limits{}, 2, "throttle"},
		{"Inf in an optional column", "t_s,pack_v,pack_a,baro_pa\n0,12,1,\n1,12,1,Inf\n", Limits{}, 3, "baro_pa"},
		{"throttle above 1", hdr + "0,12,1,1.2\n", Limits{}, 2, "throttle"},
		{"negative rpm", "t_s,pack_v,pack_a,rpm_m1\n0,12,1,-5\n", Limits{}, 2, "rpm_m1"},
		{"latitude out of range", "t_s,pack_v,pack_a,lat,lon\n0,12,1,91,8\n", Limits{}, 2, "lat"},
		{"zero pressure", "t_s,pack_v,pack_a,baro_pa\n0,12,1,0\n", Limits{}, 2, "baro_pa"},
		{"duplicate column", "t_s,pack_v,pack_a,pack_v\n0,1,1,1\n", Limits{}, 1, "pack_v"},
		{"lat without lon", "t_s,pack_v,pack_a,lat\n0,1,1,1\n", Limits{}, 1, "lon"},
		{"cell numbering gap", "t_s,pack_v,pack_a,cell_1_v,cell_3_v\n0,1,1,1,1\n", Limits{}, 1, "cell_2_v"},
		{"empty column name", "t_s,,pack_v,pack_a\n0,1,1,1\n", Limits{}, 1, ""},
		{"bad start metadata", "# start: yesterday\n" + hdr + "0,1,1,0\n", Limits{}, 1, ""},
		{"duplicate metadata", "# airframe: A\n# airframe: B\n" + hdr, Limits{}, 2, ""},
		{"no header", "# only a comment\n\n", Limits{}, 2, ""},
		{"empty input", "", Limits{}, 1, ""},
		{"no data rows", "# c\n" + hdr + "# end\n", Limits{}, 3, ""},
		{"invalid UTF-8 header", "t_s,pack_v,pack_a,\xff\n0,1,1,1\n", Limits{}, 1, ""},
		{"NUL in a header name", "t_s,pack_v,pack_a,n\x00\n0,1,1,1\n", Limits{}, 1, ""},
		{"NUL in metadata", "# airframe: RW\x0007\n" + hdr + "0,12,1,0\n", Limits{}, 1, ""},
		{"invalid UTF-8 in metadata", "# packs: P\xff1\n" + hdr + "0,12,1,0\n", Limits{}, 1, ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Parse(strings.NewReader(c.in), c.lim)
			var fe *fleet.Error
			if !errors.As(err, &fe) {
				t.Fatalf("err = %v, want *fleet.Error", err)
			}
			if fe.Code != fleet.EUNPROCESSABLE || fe.Line != c.line || fe.Column != c.col || fe.Message == "" {
				t.Errorf("got code %s line %d column %q (%s), want line %d column %q",
					fe.Code, fe.Line, fe.Column, fe.Message, c.line, c.col)
			}
		})
	}
}

func TestParseLimitsExactlyMet(t *testing.T) {
	in := "t_s,pack_v,pack_a\n0,12,1\n1,12,1\n"
	if _, err := Parse(strings.NewReader(in), Limits{MaxRows: 2, MaxBytes: int64(len(in))}); err != nil {
		t.Errorf("a log exactly at the limits was refused: %v", err)
	}
}

func TestParseDecimalMatchesStrconv(t *testing.T) {
	// Reference: the standard library's strconv.ParseFloat (correctly rounded);
	// the fast path must agree bit for bit or step aside.
	rng := rand.New(rand.NewPCG(1, 2))
	cases := []string{"0", "-0", "+1", "1.", ".5", "-.5", "007.250", "9007199254740991", "9007199254740992",
		"0.1", "0.30000000000000004", "123456789.123456", "1.0000000000000000000001", "4.187", "98012.5"}
	for range 20000 {
		v := (rng.Float64() - 0.5) * math.Pow(10, float64(rng.IntN(14)-4))
		cases = append(cases, strconv.FormatFloat(v, 'f', rng.IntN(12), 64))
	}
	for _, s := range cases {
		got, ok := parseDecimal([]byte(s))
		want, err := strconv.ParseFloat(s, 64)
		if err != nil {
			t.Fatalf("strconv refused %q", s)
		}
		if ok && math.Float64bits(got) != math.Float64bits(want) {
			t.Errorf("parseDecimal(%q) = %v, strconv %v", s, got, want)
		}
	}
	for _, s := range []string{"", "-", ".", "1e3", "1.2.3", "0x10", "1_0", "NaN", "Inf", " 1"} {
		if _, ok := parseDecimal([]byte(s)); ok {
			t.Errorf("parseDecimal(%q) took a form it must leave to strconv", s)
		}
	}
}

func TestDocExampleParses(t *testing.T) {
	// The format example in doc.go (copied into the README) must stay valid.
	src, err := os.ReadFile("doc.go")
	if err != nil {
		t.Fatal(err)
	}
	_, after, _ := strings.Cut(string(src), "// Example:\n//\n")
	var b strings.Builder
	for line := range strings.SplitSeq(after, "\n") {
		s, ok := strings.CutPrefix(line, "//\t")
		if !ok {
			break
		}
		b.WriteString(s + "\n")
	}
	l := parseString(t, b.String())
	if l.Rows != 3 || l.Meta.Airframe != "RW-07" || len(l.RPM) != 4 {
		t.Errorf("doc example parsed to %d rows, airframe %q, %d rotors", l.Rows, l.Meta.Airframe, len(l.RPM))
	}
}

// endless yields a header and then rows forever.
type endless struct {
	n    int
	read int64
}

func (e *endless) Read(p []byte) (int, error) {
	s := ""
	if e.n == 0 {
		s = "t_s,pack_v,pack_a\n"
	} else {
		s = strconv.Itoa(e.n) + ",12,1\n"
	}
	e.n++
	k := copy(p, s) // rows are short; a partial copy is fine for this test
	e.read += int64(k)
	return k, nil
}

func TestParseStreamsAndStopsAtLimit(t *testing.T) {
	src := &endless{}
	_, err := Parse(src, Limits{MaxBytes: 4096})
	var fe *fleet.Error
	if !errors.As(err, &fe) || fe.Line < 100 {
		t.Fatalf("err = %v, want a byte-limit refusal deep into the log", err)
	}
	if src.read > 4097 {
		t.Errorf("read %d bytes from the source for a 4096-byte limit", src.read)
	}
	// A failing source is reported as such, not as a bad log.
	boom := errors.New("boom")
	_, err = Parse(iotest.ErrReader(boom), Limits{})
	if !errors.Is(err, boom) || errors.As(err, &fe) {
		t.Errorf("reader error = %v, want it wrapped and not a *fleet.Error", err)
	}
}
