package sim

import (
	"bytes"
	"math"
	"strconv"
	"strings"
	"testing"
)

// parsedLog is a log read back by a deliberately plain parser, independent
// of the writer.
type parsedLog struct {
	meta map[string]string
	cols map[string]int
	rows [][]float64
}

func parseLog(t *testing.T, b []byte) parsedLog {
	t.Helper()
	pl := parsedLog{meta: map[string]string{}, cols: map[string]int{}}
	header := true
	for ln, line := range strings.Split(strings.TrimRight(string(b), "\n"), "\n") {
		if strings.HasPrefix(line, "#") {
			k, v, ok := strings.Cut(strings.TrimSpace(line[1:]), ":")
			if ok && header {
				pl.meta[strings.TrimSpace(k)] = strings.TrimSpace(v)
			}
			continue
		}
		f := strings.Split(line, ",")
		if header {
			for i, c := range f {
				pl.cols[c] = i
			}
			header = false
			continue
		}
		if len(f) != len(pl.cols) {
			t.Fatalf("line %d: %d fields, header has %d", ln+1, len(f), len(pl.cols))
		}
		row := make([]float64, len(f))
		for i, s := range f {
			v, err := strconv.ParseFloat(s, 64)
			if err != nil || math.IsNaN(v) || math.IsInf(v, 0) {
				t.Fatalf("line %d col %d: bad number %q", ln+1, i, s)
			}
			row[i] = v
		}
		pl.rows = append(pl.rows, row)
	}
	return pl
}

func (pl parsedLog) col(t *testing.T, name string) []float64 {
	t.Helper()
	i, ok := pl.cols[name]
	if !ok {
		t.Fatalf("no column %q", name)
	}
	out := make([]float64, len(pl.rows))
	for r, row := range pl.rows {
		out[r] = row[i]
	}
	return out
}

// trapz integrates y over the irregular times x by the trapezoidal rule.
func trapz(x, y []float64) float64 {
	var s float64
	for i := 1; i < len(x); i++ {
		s += (y[i] + y[i-1]) / 2 * (x[i] - x[i-1])
	}
	return s
}

// quietSpec is the default quad with no sensor noise and no vibration.
func quietSpec(seed uint64) FlightSpec {
	s := DefaultSpec(seed)
	s.Noise = Noise{}
	s.VibrationLevel = 0
	return s
}

func generate(t testing.TB, s FlightSpec) (Truth, []byte) {
	t.Helper()
	var buf bytes.Buffer
	tr, err := Generate(s, &buf)
	if err != nil {
		t.Fatal(err)
	}
	return tr, buf.Bytes()
}

func relErr(got, want float64) float64 { return math.Abs(got-want) / math.Abs(want) }

func sortFloats(x []float64) {
	for i := 1; i < len(x); i++ {
		for j := i; j > 0 && x[j] < x[j-1]; j-- {
			x[j], x[j-1] = x[j-1], x[j]
		}
	}
}

// pressureAltitude inverts the standard atmosphere:
// H = 44330.77 (1 - (p/p0)^0.1902632) (REFERENCES.md section 2).
func pressureAltitude(p float64) float64 {
	return 44330.77 * (1 - math.Pow(p/101325, 0.1902632))
}
