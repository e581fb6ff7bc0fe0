//go:build unix

package telemetry

import (
	"bytes"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"
	"unsafe"
)

// floorPass is BenchmarkParseFloatOnly's loop as a function: split lines
// and fields and strconv.ParseFloat every field, keeping nothing.
func floorPass(b *testing.B, data []byte) {
	rest, header, s := data, false, 0.0
	for len(rest) > 0 {
		line := rest
		if i := bytes.IndexByte(rest, '\n'); i >= 0 {
			line, rest = rest[:i], rest[i+1:]
		} else {
			rest = nil
		}
		if len(line) == 0 || line[0] == '#' {
			continue
		}
		if !header {
			header = true
			continue
		}
		for len(line) > 0 {
			f := line
			if i := bytes.IndexByte(line, ','); i >= 0 {
				f, line = line[:i], line[i+1:]
			} else {
				line = nil
			}
			v, err := strconv.ParseFloat(unsafe.String(unsafe.SliceData(f), len(f)), 64)
			if err != nil {
				b.Fatal(err)
			}
			s += v
		}
	}
	sink = s
}

// blankBenchLog is the benchmark log with optional cells blank as exporters
// leave them: lat/lon for the first 30 s (no fix), the cell columns every
// other row, 5 % of the rpm cells at random, the barometer for 60 s.
var blankBenchLog = sync.OnceValue(func() []byte {
	rng := rand.New(rand.NewPCG(3, 5))
	var out bytes.Buffer
	var header []string
	row := 0
	for line := range bytes.SplitSeq(bytes.TrimSuffix(benchLog(), []byte{'\n'}), []byte{'\n'}) {
		if line[0] == '#' {
			out.Write(append(line, '\n'))
			continue
		}
		fs := strings.Split(string(line), ",")
		if header == nil {
			header = fs
			out.Write(append(line, '\n'))
			continue
		}
		ts, _ := strconv.ParseFloat(fs[0], 64)
		for i, c := range header {
			switch {
			case (c == "lat" || c == "lon") && ts < 30,
				strings.HasPrefix(c, "cell_") && row%2 == 1,
				strings.HasPrefix(c, "rpm_") && rng.Float64() < 0.05,
				c == "baro_pa" && ts >= 600 && ts < 660:
				fs[i] = ""
			}
		}
		out.WriteString(strings.Join(fs, ",") + "\n")
		row++
	}
	return out.Bytes()
})

// BenchmarkParseAnalyzeVsFloor alternates the ParseFloat-only floor (on the
// benchmark log) and Parse+Analyze of the 90,000-row benchmark log, as it
// is ("native") and with blank cells ("blanks"), and reports the process's
// CPU time (user + system, so other processes on a shared machine count
// less) of the full path over the floor's: analyse/floor-cpu over all
// iterations and analyse/floor-median, the median of the ratios of each
// adjacent pair.
func BenchmarkParseAnalyzeVsFloor(b *testing.B) {
	for _, v := range []struct {
		name string
		data func() []byte
	}{{"native", benchLog}, {"blanks", blankBenchLog}} {
		b.Run(v.name, func(b *testing.B) {
			floor, data := benchLog(), v.data()
			var cpu [2]time.Duration
			var ratios []float64
			k := 0
			for b.Loop() {
				k++
				var pair [2]time.Duration
				for j := range 2 {
					which := (j + k) % 2 // 0 floor, 1 parse+analyse; alternating, so neither pays more of the other's collection
					c0 := cpuTime(b)
					if which == 0 {
						floorPass(b, floor)
					} else {
						l, err := Parse(bytes.NewReader(data), Limits{})
						if err != nil {
							b.Fatal(err)
						}
						m, err := Analyze(l, benchParams)
						if err != nil {
							b.Fatal(err)
						}
						sink = m.EnergyWh
					}
					pair[which] = cpuTime(b) - c0
					cpu[which] += pair[which]
				}
				ratios = append(ratios, float64(pair[1])/float64(pair[0]))
			}
			slices.Sort(ratios)
			b.ReportMetric(float64(cpu[1])/float64(cpu[0]), "analyse/floor-cpu")
			b.ReportMetric(ratios[len(ratios)/2], "analyse/floor-median")
		})
	}
}
