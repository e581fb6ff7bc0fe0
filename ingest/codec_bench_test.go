//go:build unix

package ingest

import (
	"bytes"
	"compress/gzip"
	"io"
	"math"
	"sync"
	"syscall"
	"testing"
	"time"

	kgzip "github.com/klauspost/compress/gzip"
	"github.com/klauspost/compress/s2"
	"github.com/klauspost/compress/zstd"

	"github.com/rotorwright/rotorwright/internal/sim"
)

// simLog90k is the simulator's 30-minute, 50 Hz log (90,000 rows).
var simLog90k = sync.OnceValue(func() []byte {
	s := sim.DefaultSpec(7)
	s.DurationS = 1800
	var buf bytes.Buffer
	if _, err := sim.Generate(s, &buf); err != nil {
		panic(err)
	}
	return buf.Bytes()
})

// BenchmarkStoredCodec compresses and decompresses the 90,000-row log with
// each candidate codec for stored logs, in turn in every iteration: the standard library's gzip at
// BestSpeed (the codec before), klauspost's gzip at BestSpeed, with Huffman
// coding only (the same format; it packs uploads now) and at level 6 (the
// repack job's), klauspost's S2 and zstd at SpeedFastest and SpeedDefault. ratio is
// compressed over plain size; MB/s is of the plain text.
//
//	go test -bench StoredCodec -run '^$' -benchtime 10x ./ingest
func BenchmarkStoredCodec(b *testing.B) {
	text := simLog90k()
	zfast, _ := zstd.NewWriter(nil, zstd.WithEncoderLevel(zstd.SpeedFastest), zstd.WithEncoderConcurrency(1))
	zdef, _ := zstd.NewWriter(nil, zstd.WithEncoderLevel(zstd.SpeedDefault), zstd.WithEncoderConcurrency(1))
	zdec, _ := zstd.NewReader(nil, zstd.WithDecoderConcurrency(1))
	codecs := []codec{
		{"stdlib-gzip-1", func(p []byte) []byte {
			var buf bytes.Buffer
			w, _ := gzip.NewWriterLevel(&buf, gzip.BestSpeed)
			w.Write(p)
			w.Close()
			return buf.Bytes()
		}, func(c []byte) []byte {
			r, _ := gzip.NewReader(bytes.NewReader(c))
			out, _ := io.ReadAll(r)
			return out
		}},
		kgz("klauspost-gzip-1", kgzip.BestSpeed),
		kgz("klauspost-gzip-huffman", kgzip.HuffmanOnly),
		kgz("klauspost-gzip-6", 6),
		{"s2", func(p []byte) []byte { return s2.Encode(nil, p) },
			func(c []byte) []byte { out, _ := s2.Decode(nil, c); return out }},
		{"zstd-fastest", func(p []byte) []byte { return zfast.EncodeAll(p, nil) },
			func(c []byte) []byte { out, _ := zdec.DecodeAll(c, nil); return out }},
		{"zstd-default", func(p []byte) []byte { return zdef.EncodeAll(p, nil) },
			func(c []byte) []byte { out, _ := zdec.DecodeAll(c, nil); return out }},
	}
	// Each iteration runs every codec once, in turn, so that a busy machine
	// slows them alike; the least CPU time (user + system: every codec runs
	// on one goroutine, and a busy machine inflates CPU time less than wall
	// time) of each is reported, in ms and as a fraction of the standard
	// library gzip's (x-stdlib-gzip).
	best := make([][2]time.Duration, len(codecs))
	size := make([]int, len(codecs))
	for i := range best {
		best[i] = [2]time.Duration{math.MaxInt64, math.MaxInt64}
	}
	for b.Loop() {
		for i, c := range codecs {
			t0 := cpuTime(b)
			z := c.enc(text)
			t1 := cpuTime(b)
			out := c.dec(z)
			t2 := cpuTime(b)
			if !bytes.Equal(out, text) {
				b.Fatalf("%s: round trip differs", c.name)
			}
			size[i] = len(z)
			best[i][0], best[i][1] = min(best[i][0], t1-t0), min(best[i][1], t2-t1)
		}
	}
	for i, c := range codecs {
		b.ReportMetric(float64(size[i])/float64(len(text)), c.name+"-ratio")
		b.ReportMetric(float64(best[i][0])/1e6, c.name+"-compress-cpu-ms")
		b.ReportMetric(float64(best[i][0])/float64(best[0][0]), c.name+"-compress-x-stdlib-gzip")
		b.ReportMetric(float64(best[i][1])/1e6, c.name+"-decompress-cpu-ms")
	}
	b.ReportMetric(float64(len(text))/(1<<20), "log-MB")
}

// codec is a candidate stored-log codec.
type codec struct {
	name string
	enc  func([]byte) []byte
	dec  func([]byte) []byte
}

// kgz is klauspost's gzip at level.
func kgz(name string, level int) codec {
	return codec{name, func(p []byte) []byte {
		var buf bytes.Buffer
		w, _ := kgzip.NewWriterLevel(&buf, level)
		w.Write(p)
		w.Close()
		return buf.Bytes()
	}, func(c []byte) []byte {
		r, _ := kgzip.NewReader(bytes.NewReader(c))
		out, _ := io.ReadAll(r)
		return out
	}}
}

// cpuTime is the CPU time the process has used.
func cpuTime(b *testing.B) time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		b.Fatal(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
