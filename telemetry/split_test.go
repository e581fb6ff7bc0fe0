package telemetry

import (
	"bytes"
	"encoding/csv"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"
)

// splitNative cuts a native row into its fields the way Parse does, with
// cutField.
func splitNative(line []byte) [][]byte {
	var out [][]byte
	for {
		f, _, _, more := cutField(line)
		out = append(out, f)
		if !more {
			return out
		}
		line = line[len(f)+1:]
	}
}

// Parse's field splitter agrees with encoding/csv (the reference RFC 4180
// reader) on RFC 4180 records without quotes, the only ones the native
// format has (its fields are never quoted; quoted logs go through a column
// map): the RFC's own unquoted examples and random records whose fields mix
// digits, signs, points, letters, spaces and empty fields.
func TestFieldSplitterAgreesWithCSV(t *testing.T) {
	records := []string{
		"aaa,bbb,ccc", // RFC 4180 section 2, items 1 and 4
		"zzz,yyy,xxx",
		"field_name,field_name,field_name", // item 3, a header
		"1.5,,-2", ",,", "x,", ",x", " 1 , 2 ,3", "a b,c\td", "1e3,+0.5,-.5,5.",
	}
	alphabet := []byte("0123456789.-+eEaZ \t_:;")
	rng := rand.New(rand.NewPCG(4, 180))
	for range 3000 {
		fields := make([]string, 1+rng.IntN(12))
		for i := range fields {
			b := make([]byte, rng.IntN(9))
			for j := range b {
				b[j] = alphabet[rng.IntN(len(alphabet))]
			}
			fields[i] = string(b)
		}
		if len(fields) == 1 && strings.TrimSpace(fields[0]) == "" {
			continue // csv skips an empty line; Parse skips a blank one
		}
		records = append(records, strings.Join(fields, ","))
	}
	for _, rec := range records {
		r := csv.NewReader(strings.NewReader(rec + "\r\n"))
		r.FieldsPerRecord = -1
		want, err := r.Read()
		if err != nil {
			t.Fatalf("encoding/csv refuses %q: %v", rec, err)
		}
		got := splitNative([]byte(rec))
		if len(got) != len(want) {
			t.Fatalf("%q: %d fields, encoding/csv reads %d", rec, len(got), len(want))
		}
		for i := range got {
			if string(got[i]) != want[i] {
				t.Fatalf("%q field %d: %q, encoding/csv reads %q", rec, i, got[i], want[i])
			}
		}
	}
}

// cutField converts what parseDecimal converts (up to 15 digits), to the
// same value, and cuts exactly at the first comma.
func TestCutFieldMatchesParseDecimal(t *testing.T) {
	fields := []string{"0", "-0", "+1", "1.", ".5", "-.5", ".", "-", "+", "", " 1", "1 ", "1e3", "NaN",
		"9007199254740991", "9007199254740992", "123456789012345", "1234567890123456", "0.000000000000001", "99999999999999999999999", "0.0000000000000000000001", "0.00000000000000000000001",
		"12.34.5", "1-2", "3.14159265358979", "47.1234567", "-180.0000000", "1,5"}
	rng := rand.New(rand.NewPCG(9, 9))
	for range 2000 {
		fields = append(fields, strconv.FormatFloat(rng.NormFloat64()*math.Pow(10, float64(rng.IntN(12)-4)), 'f', rng.IntN(9), 64))
	}
	for _, f := range fields {
		checkCutField(t, []byte(f))
	}
}

func checkCutField(t *testing.T, b []byte) {
	t.Helper()
	for _, tail := range []string{"", ",", ",7,8"} {
		line := slices.Concat(b, []byte(tail))
		f, v, ok, more := cutField(line)
		wantF, _, wantMore := bytes.Cut(line, []byte{','})
		if !bytes.Equal(f, wantF) || more != wantMore {
			t.Fatalf("cutField(%q) cut %q (more %v), want %q (more %v)", line, f, more, wantF, wantMore)
		}
		// What cutField converts, parseDecimal converts to the same bits;
		// what it leaves (ok false) parseDecimal refuses, or has over 15
		// digits (Parse then reads it with parseDecimal itself).
		wv, wok := parseDecimal(wantF)
		if ok && (!wok || math.Float64bits(v) != math.Float64bits(wv)) ||
			!ok && wok && bytes.Count(wantF, []byte{'.'})+15 >= len(bytes.TrimLeft(wantF, "+-")) {
			t.Fatalf("cutField(%q) = %v %v, parseDecimal gives %v %v", line, v, ok, wv, wok)
		}
	}
}

func FuzzCutField(f *testing.F) {
	for _, s := range []string{"1.5", "-0.25,3", ",", "1e3", "9007199254740993", " 2", "+.5,x,", "0.000000000000000000000012"} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, b []byte) { checkCutField(t, b) })
}
