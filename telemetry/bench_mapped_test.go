//go:build unix

package telemetry

import (
	"bytes"
	"encoding/json"
	"math"
	"slices"
	"syscall"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/sim"
)

// benchLayouts are the 90,000-row benchmark log rewritten into the
// simulator's three foreign layouts, with their maps.
func benchLayouts(b *testing.B) (names []string, logs [][]byte, maps []*fleet.ColumnMap) {
	for _, l := range sim.LogLayouts() {
		var buf bytes.Buffer
		if err := l.Rewrite(benchLog(), &buf); err != nil {
			b.Fatal(err)
		}
		var m fleet.ColumnMap
		if err := json.Unmarshal(l.Map, &m); err != nil {
			b.Fatal(err)
		}
		if err := m.Validate(); err != nil {
			b.Fatal(err)
		}
		names, logs, maps = append(names, l.Name), append(logs, buf.Bytes()), append(maps, &m)
	}
	return names, logs, maps
}

func parseAnalyze(b *testing.B, data []byte, m *fleet.ColumnMap) {
	l, err := ParseMapped(bytes.NewReader(data), m, Limits{})
	if err != nil {
		b.Fatal(err)
	}
	if l.Rows != 90_000 {
		b.Fatalf("%d rows", l.Rows)
	}
	met, err := Analyze(l, benchParams)
	if err != nil {
		b.Fatal(err)
	}
	sink = met.EnergyWh
}

// BenchmarkMappedParseAndAnalyze is BenchmarkParseAndAnalyze for the same
// log in each foreign layout, read through its column map.
func BenchmarkMappedParseAndAnalyze(b *testing.B) {
	names, logs, maps := benchLayouts(b)
	for i, name := range names {
		b.Run(name, func(b *testing.B) {
			b.SetBytes(int64(len(logs[i])))
			b.ReportAllocs()
			for b.Loop() {
				parseAnalyze(b, logs[i], maps[i])
			}
		})
	}
}

// BenchmarkMappedVsNative alternates the native log and the same log in a
// foreign layout, parses and analyses each, and reports the mapped one's
// cost over the native one's from the process's CPU time (user + system, so
// other processes on a shared machine count less): mapped/native-cpu over
// all iterations, and mapped/native-median, the median of the ratios of
// each adjacent pair (robust to a pair disturbed by a collection or another
// process); mapped/native-wall is the fastest wall-clock run of each. The
// target is at most 1.2.
func BenchmarkMappedVsNative(b *testing.B) {
	names, logs, maps := benchLayouts(b)
	native := benchLog()
	for i, name := range names {
		b.Run(name, func(b *testing.B) {
			var cpu [2]time.Duration
			var ratios []float64
			wall := [2]time.Duration{math.MaxInt64, math.MaxInt64}
			k := 0
			for b.Loop() {
				// The order alternates so that neither pays more of the
				// other's garbage collection.
				k++
				var pair [2]time.Duration
				for j := range 2 {
					which := (j + k) % 2 // 0 native, 1 mapped
					c0, t0 := cpuTime(b), time.Now()
					if which == 0 {
						parseAnalyze(b, native, nil)
					} else {
						parseAnalyze(b, logs[i], maps[i])
					}
					wall[which] = min(wall[which], time.Since(t0))
					pair[which] = cpuTime(b) - c0
					cpu[which] += pair[which]
				}
				ratios = append(ratios, float64(pair[1])/float64(pair[0]))
			}
			slices.Sort(ratios)
			b.ReportMetric(float64(cpu[1])/float64(cpu[0]), "mapped/native-cpu")
			b.ReportMetric(ratios[len(ratios)/2], "mapped/native-median")
			b.ReportMetric(float64(wall[1])/float64(wall[0]), "mapped/native-wall")
			b.ReportMetric(float64(len(logs[i]))/float64(len(native)), "bytes/native")
		})
	}
}

// cpuTime is the CPU time the process has used.
func cpuTime(b *testing.B) time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		b.Fatal(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
