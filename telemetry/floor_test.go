//go:build unix

package telemetry

import (
	"bytes"
	"slices"
	"testing"
	"time"
)

// decimalFloor is the least work any reader of the log must do: find every
// line, skip the comments and the header, cut every field of every data row
// and convert it with parseDecimal, Parse's own fast path. It allocates
// nothing and keeps nothing but a sum (so the work is not optimised away).
// ok is false when a field is not a plain decimal (the benchmark log has
// none).
func decimalFloor(data []byte) (sum float64, ok bool) {
	rest, header := data, false
	for len(rest) > 0 {
		line := rest
		if i := bytes.IndexByte(rest, '\n'); i >= 0 {
			line, rest = rest[:i], rest[i+1:]
		} else {
			rest = nil
		}
		if n := len(line); n > 0 && line[n-1] == '\r' {
			line = line[:n-1]
		}
		if len(line) == 0 || line[0] == '#' {
			continue
		}
		if !header {
			header = true
			continue
		}
		for {
			f := line
			i := bytes.IndexByte(line, ',')
			if i >= 0 {
				f, line = line[:i], line[i+1:]
			}
			v, ok := parseDecimal(f)
			if !ok {
				return 0, false
			}
			sum += v
			if i < 0 {
				break
			}
		}
	}
	return sum, true
}

// The floor must be allocation-free, or it flatters what is measured
// against it.
func TestDecimalFloorAllocationFree(t *testing.T) {
	data := benchLog()
	if _, ok := decimalFloor(data); !ok {
		t.Fatal("the benchmark log holds a field that is not a plain decimal")
	}
	if n := testing.AllocsPerRun(3, func() { sink, _ = decimalFloor(data) }); n != 0 {
		t.Fatalf("decimalFloor allocates %v times per run, want 0", n)
	}
}

// The floor reads every field of every data row: its sum is the sum of
// the log's values as strconv reads them (no line or field skipped).
func TestDecimalFloorReadsEveryField(t *testing.T) {
	log := "# c: 1\nt_s,a,b\r\n1.5,2,-3\r\n\n# mid\n4,5.25,6\n7,8,9"
	got, ok := decimalFloor([]byte(log))
	if want := 1.5 + 2 - 3 + 4 + 5.25 + 6 + 7 + 8 + 9; !ok || got != want {
		t.Fatalf("floor sum %v %v, want %v", got, ok, want)
	}
}

// BenchmarkVsDecimalFloor alternates the allocation-free decimal floor and
// the path under test on the 90,000-row benchmark log (held in memory, as
// the floor's is and as an upload is: ParseBytes, which ingest uses), and reports the
// path's speed as a fraction of the floor's (floor time over path time, so
// 0.5 is half the floor's MB/s): x-floor-cpu from the process's CPU time
// over all iterations (user + system: other processes on a shared machine
// count less), x-floor-median the median of each adjacent pair's ratio,
// x-floor-wall from the fastest wall-clock run of each. The target for
// parse+analyse is at least 0.5.
func BenchmarkVsDecimalFloor(b *testing.B) {
	data := benchLog()
	for _, v := range []struct {
		name string
		run  func()
	}{
		{"parse", func() {
			if _, err := ParseBytes(data, Limits{}); err != nil {
				b.Fatal(err)
			}
		}},
		{"parse+analyse", func() {
			l, err := ParseBytes(data, Limits{})
			if err != nil {
				b.Fatal(err)
			}
			m, err := Analyze(l, benchParams)
			if err != nil {
				b.Fatal(err)
			}
			sink = m.EnergyWh
		}},
	} {
		b.Run(v.name, func(b *testing.B) {
			var cpu [2]time.Duration
			wall := [2]time.Duration{1<<63 - 1, 1<<63 - 1}
			var ratios []float64
			k := 0
			for b.Loop() {
				k++
				var pair [2]time.Duration
				for j := range 2 {
					which := (j + k) % 2 // 0 floor, 1 path; alternating, so neither pays more of the other's collection
					c0, t0 := cpuTime(b), time.Now()
					if which == 0 {
						s, ok := decimalFloor(data)
						if !ok {
							b.Fatal("the benchmark log holds a field that is not a plain decimal")
						}
						sink = s
					} else {
						v.run()
					}
					wall[which] = min(wall[which], time.Since(t0))
					pair[which] = cpuTime(b) - c0
					cpu[which] += pair[which]
				}
				ratios = append(ratios, float64(pair[0])/float64(pair[1]))
			}
			slices.Sort(ratios)
			b.ReportMetric(float64(cpu[0])/float64(cpu[1]), "x-floor-cpu")
			b.ReportMetric(ratios[len(ratios)/2], "x-floor-median")
			b.ReportMetric(float64(wall[0])/float64(wall[1]), "x-floor-wall")
			b.ReportMetric(float64(len(data))/wall[0].Seconds()/1e6, "floor-MB/s")
		})
	}
}
