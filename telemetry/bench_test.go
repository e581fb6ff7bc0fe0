package telemetry

import (
	"bytes"
	"fmt"
	"math"
	"math/rand/v2"
	"strconv"
	"sync"
	"testing"
	"unsafe"

	"github.com/rotorwright/rotorwright/fleet"
)

// benchLog is a 30-minute, 50 Hz, 4-motor log with every column (90,000
// rows), generated deterministically from a fixed seed.
var benchLog = sync.OnceValue(func() []byte {
	rng := rand.New(rand.NewPCG(7, 11))
	var b bytes.Buffer
	b.WriteString("# start: 2026-05-14T09:30:00Z\n# airframe: BENCH-1\n")
	b.WriteString("t_s,pack_v,pack_a,rpm_m1,rpm_m2,rpm_m3,rpm_m4,throttle,cell_1_v,cell_2_v,cell_3_v,cell_4_v,cell_5_v,cell_6_v,baro_pa,temp_c,acc_x,acc_y,acc_z,lat,lon\n")
	const rows = 90_000
	soc := 1.0
	for i := range rows {
		t := float64(i) / 50
		aloft := t > 20 && t < 1780
		thr, cur := 0.0, 0.6
		if aloft {
			thr = 0.45 + 0.1*math.Sin(t/7) + 0.02*rng.NormFloat64()
			cur = 8 + 40*thr*thr + rng.NormFloat64()*0.3
		}
		soc -= cur * 0.02 / (3600 * 10)
		cell := 3.5 + 0.7*soc - cur*0.0025
		fmt.Fprintf(&b, "%.2f,%.3f,%.2f", t, 6*cell, cur)
		for range 4 {
			r := 0.0
			if aloft {
				r = 9000*math.Sqrt(thr) + rng.NormFloat64()*40
			}
			fmt.Fprintf(&b, ",%.0f", r)
		}
		b.WriteString("," + strconv.FormatFloat(math.Max(0, math.Min(1, thr)), 'f', 3, 64))
		for range 6 {
			fmt.Fprintf(&b, ",%.3f", cell+rng.NormFloat64()*0.002)
		}
		h := 0.0
		if aloft {
			h = 60 * math.Min(1, (t-20)/60) * math.Min(1, (1780-t)/60)
		}
		fmt.Fprintf(&b, ",%.1f,%.1f", ISAPressure(h)+rng.NormFloat64()*3, 14.2-0.0065*h)
		fmt.Fprintf(&b, ",%.3f,%.3f,%.3f", rng.NormFloat64()*0.8, rng.NormFloat64()*0.8, G0+rng.NormFloat64()*1.2)
		fmt.Fprintf(&b, ",%.7f,%.7f\n", 47+h*1e-5*math.Sin(t/90), 8+h*1e-5*math.Cos(t/90))
	}
	return b.Bytes()
})

var benchParams = Params{MassKg: 2.4, RotorDiameterM: 0.33, Rotors: 4, CellsS: 6, Chemistry: fleet.LiPo, RatedMah: 10000, CRating: 15}

var sink float64

// BenchmarkParseFloatOnly is the floor: split lines and fields and
// strconv.ParseFloat every field, without allocating, keeping nothing.
func BenchmarkParseFloatOnly(b *testing.B) {
	data := benchLog()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		rest := data
		header := false
		var s float64
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
}

// BenchmarkDecimalFloor is the honest floor for Parse: every line of the
// log read and every field of every data row converted with Parse's own
// decimal routine, allocation-free (see decimalFloor), keeping nothing.
// Compare it with -benchmem: it must report 0 allocs/op.
func BenchmarkDecimalFloor(b *testing.B) {
	data := benchLog()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		v, ok := decimalFloor(data)
		if !ok {
			b.Fatal("the benchmark log holds a field that is not a plain decimal")
		}
		sink = v
	}
}

// BenchmarkParse is Parse alone, for comparison.
func BenchmarkParse(b *testing.B) {
	data := benchLog()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Parse(bytes.NewReader(data), Limits{}); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkParseAndAnalyze is the full per-flight path; the target is at
// least half the MB/s of BenchmarkDecimalFloor (BenchmarkVsDecimalFloor
// measures the ratio in one run).
func BenchmarkParseAndAnalyze(b *testing.B) {
	data := benchLog()
	b.SetBytes(int64(len(data)))
	b.ReportAllocs()
	for b.Loop() {
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
}
