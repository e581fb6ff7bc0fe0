//go:build unix

package api_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/json"
	"fmt"
	"io"
	"log/slog"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"runtime"
	"runtime/metrics"
	"slices"
	"sync"
	"syscall"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// uploadBench is a server on a fresh database with the simulator's quad
// (motors and propellers fitted, its pack registered) and a 30-minute, 50 Hz
// log of it (90,000 rows).
type uploadBench struct {
	h      http.Handler
	tokens map[fleet.Role]string
	log    []byte
	start  time.Time
	elev   float64
}

func newUploadBench(b *testing.B) *uploadBench {
	b.Helper()
	db := store.New(pgtest.NewPool(b))
	limits := api.DefaultLimits // a benchmark loop outruns the per-key rate
	limits.RatePerKey, limits.RatePerAddr = -1, -1
	u := &uploadBench{h: api.New(db, slog.New(slog.NewTextHandler(io.Discard, nil)), limits, nil).Handler(),
		tokens: map[fleet.Role]string{}}
	for _, r := range []fleet.Role{pilot, tech} {
		_, tok, err := db.CreateKey(context.Background(), "bench "+string(r), r)
		if err != nil {
			b.Fatal(err)
		}
		u.tokens[r] = tok
	}
	spec := sim.DefaultSpec(7)
	spec.DurationS = 1800
	spec.Start = time.Now().Add(-72 * time.Hour).UTC().Truncate(time.Second)
	u.start, u.elev = spec.Start, spec.SiteElevationM
	var buf bytes.Buffer
	if _, err := sim.Generate(spec, &buf); err != nil {
		b.Fatal(err)
	}
	u.log = buf.Bytes()
	af := u.create(b, "/v1/airframes", map[string]any{"code": spec.Airframe, "layout": "quad-x", "cells_s": 4,
		"rotor_diameter_mm": 254, "empty_mass_g": 1000})
	p := spec.Packs[0]
	u.create(b, "/v1/parts", map[string]any{"kind": "pack", "serial": p.Serial, "mass_g": 500,
		"specs": map[string]any{"chemistry": "lipo", "cells_s": p.CellsS, "cells_p": p.CellsP, "rated_mah": p.RatedMah, "c_rating": 25}})
	for i, rot := range []fleet.Rotation{fleet.CCW, fleet.CW, fleet.CCW, fleet.CW} {
		m := u.create(b, "/v1/parts", map[string]any{"kind": "motor", "serial": fmt.Sprintf("B-M%d", i+1),
			"part_number": "MT-4010", "specs": map[string]any{"rotation": rot, "kv": 370}})
		pr := u.create(b, "/v1/parts", map[string]any{"kind": "propeller", "serial": fmt.Sprintf("B-P%d", i+1),
			"part_number": "PR-1555", "specs": map[string]any{"rotation": rot, "diameter_in": 10, "blades": 2}})
		for _, id := range []string{m, pr} {
			u.create(b, "/v1/airframes/"+af+"/fits", map[string]any{"part_id": id,
				"position": fmt.Sprintf("m%d", i+1), "at": time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)})
		}
	}
	return u
}

func (u *uploadBench) create(b *testing.B, path string, body any) string {
	b.Helper()
	j, _ := json.Marshal(body)
	req := httptest.NewRequest("POST", path, bytes.NewReader(j))
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+u.tokens[tech])
	rec := httptest.NewRecorder()
	u.h.ServeHTTP(rec, req)
	if rec.Code != http.StatusCreated {
		b.Fatalf("POST %s: %d %s", path, rec.Code, rec.Body)
	}
	var out idBody
	if err := json.Unmarshal(rec.Body.Bytes(), &out); err != nil {
		b.Fatal(err)
	}
	return out.ID
}

// body is upload i: the log with its start moved i hours on (back when
// back is set), so each is a new flight that overlaps no other, as
// multipart/form-data.
func (u *uploadBench) body(b *testing.B, i int, back bool) ([]byte, string, []byte) {
	b.Helper()
	old := "# start: " + u.start.Format(time.RFC3339)
	at := bytes.Index(u.log, []byte(old))
	if at < 0 {
		b.Fatalf("the simulator's log has no %q line", old)
	}
	shift := time.Duration(i) * time.Hour
	if back {
		shift = -shift
	}
	log := slices.Concat(u.log[:at], []byte("# start: "+u.start.Add(shift).Format(time.RFC3339)),
		u.log[at+len(old):])
	var buf bytes.Buffer
	w := multipart.NewWriter(&buf)
	fw, _ := w.CreateFormField("flight")
	fj, _ := json.Marshal(map[string]any{"pilot": "bench pilot", "site_elevation_m": u.elev})
	fw.Write(fj)
	lw, _ := w.CreateFormFile("log", "flight.csv")
	lw.Write(log)
	if err := w.Close(); err != nil {
		b.Fatal(err)
	}
	return buf.Bytes(), w.FormDataContentType(), log
}

// heapPeak samples the heap (objects, live and not yet swept) every
// millisecond until stop is called, which returns the largest seen.
func heapPeak() (stop func() uint64) {
	sample := []metrics.Sample{{Name: "/memory/classes/heap/objects:bytes"}}
	var peak uint64
	var mu sync.Mutex
	done := make(chan struct{})
	go func() {
		tick := time.NewTicker(time.Millisecond)
		defer tick.Stop()
		for {
			metrics.Read(sample)
			mu.Lock()
			peak = max(peak, sample[0].Value.Uint64())
			mu.Unlock()
			select {
			case <-done:
				return
			case <-tick.C:
			}
		}
	}()
	return func() uint64 {
		close(done)
		mu.Lock()
		defer mu.Unlock()
		return peak
	}
}

// BenchmarkUpload90k posts a 90,000-row log (30 min at 50 Hz, about 10 MB)
// through the real router as multipart/form-data, each iteration a new
// flight of the same airframe: in newest each an hour after the last (the
// usual upload: the flight just flown), in backfill each an hour before the
// last, so that every upload re-judges the take-off verdicts of all the
// later flights (a back-filled flight changes what they went through). It
// reports the handler's (server) time:
// upload-ms-median and upload-ms-min, the target being under 120 ms. The
// floor, in the same run, is one SHA-256 pass over the same log
// (hash-floor-ms), the least any upload does with its bytes.
// upload-cpu-ms-median is the process's CPU time (user + system, every
// thread: compression beside the parse and the collector included, the
// database's own process not) per upload, which a busy machine inflates
// less than the wall time. Memory per
// upload: peak-heap-MB is the largest heap seen during an upload (sampled
// every millisecond, after a collection before it) less the heap before
// it; alloc-MB the bytes allocated per upload.
//
//	go test -bench Upload90k -run '^$' -benchtime 12x ./api
func BenchmarkUpload90k(b *testing.B) {
	b.Run("newest", func(b *testing.B) { benchUpload(b, false) })
	b.Run("backfill", func(b *testing.B) { benchUpload(b, true) })
}

func benchUpload(b *testing.B, back bool) {
	u := newUploadBench(b)
	var times, floors, cpus []time.Duration
	var peak, alloc uint64
	i := 0
	for b.Loop() {
		i++
		b.StopTimer()
		body, ct, log := u.body(b, i, back)
		t0 := time.Now()
		sink := sha256.Sum256(log)
		floors = append(floors, time.Since(t0))
		_ = sink
		req := httptest.NewRequest("POST", "/v1/flights", bytes.NewReader(body))
		req.Header.Set("Content-Type", ct)
		req.Header.Set("Authorization", "Bearer "+u.tokens[pilot])
		rec := httptest.NewRecorder()
		runtime.GC()
		var ms0, ms1 runtime.MemStats
		runtime.ReadMemStats(&ms0)
		stop := heapPeak()
		b.StartTimer()
		c0 := cpuTime(b)
		t0 = time.Now()
		u.h.ServeHTTP(rec, req)
		times = append(times, time.Since(t0))
		cpus = append(cpus, cpuTime(b)-c0)
		b.StopTimer()
		p := stop()
		runtime.ReadMemStats(&ms1)
		if rec.Code != http.StatusCreated {
			b.Fatalf("upload %d: %d %s", i, rec.Code, rec.Body)
		}
		peak = max(peak, p-min(p, ms0.HeapAlloc))
		alloc = max(alloc, ms1.TotalAlloc-ms0.TotalAlloc)
		b.StartTimer()
	}
	slices.Sort(times)
	slices.Sort(floors)
	slices.Sort(cpus)
	ms := func(d time.Duration) float64 { return float64(d) / float64(time.Millisecond) }
	b.ReportMetric(ms(times[len(times)/2]), "upload-ms-median")
	b.ReportMetric(ms(times[0]), "upload-ms-min")
	b.ReportMetric(ms(cpus[len(cpus)/2]), "upload-cpu-ms-median")
	b.ReportMetric(ms(floors[len(floors)/2]), "hash-floor-ms")
	b.ReportMetric(float64(times[len(times)/2])/float64(floors[len(floors)/2]), "upload/hash-floor")
	b.ReportMetric(float64(peak)/(1<<20), "peak-heap-MB")
	b.ReportMetric(float64(alloc)/(1<<20), "alloc-MB")
	b.ReportMetric(float64(len(u.log))/(1<<20), "log-MB")
}

// cpuTime is the CPU time the process has used.
func cpuTime(b *testing.B) time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		b.Fatal(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
