package api_test

import (
	"context"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"runtime/pprof"
	"slices"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/scale"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// lookupConc is how many clients run at once, in both the HTTP run and its
// SQL floor: pgxpool's default pool size here (max(4, CPUs)), which the
// service also uses.
const lookupConc = 4

// lookup is one measured lookup: the SQL floor and the same answer over HTTP.
type lookup struct {
	name  string
	chunk int // requests per chunk (10 chunks a side per round)
	floor func(ctx context.Context, id string) error
	http  func(id string) error
}

// sample gathers the requests of one side (floor or HTTP) of a round.
type sample struct {
	wall time.Duration
	d    []time.Duration
}

func (s *sample) rate() float64 { return float64(len(s.d)) / s.wall.Seconds() }

// quantile is the q-quantile of the latencies (sorted in place).
func (s *sample) quantile(q float64) time.Duration {
	slices.Sort(s.d)
	return s.d[int(q*float64(len(s.d)-1))]
}

// drive sends the requests of seq over conc clients and adds their
// latencies and the wall time to s.
func (s *sample) drive(b *testing.B, seq []string, conc int, fn func(id string) error) {
	b.Helper()
	d := make([]time.Duration, len(seq))
	var next atomic.Int64
	var wg sync.WaitGroup
	var failed atomic.Value
	t0 := time.Now()
	for range conc {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for {
				i := int(next.Add(1)) - 1
				if i >= len(seq) {
					return
				}
				t := time.Now()
				if err := fn(seq[i]); err != nil {
					failed.Store(err)
					return
				}
				d[i] = time.Since(t)
			}
		}()
	}
	wg.Wait()
	s.wall += time.Since(t0)
	if err, _ := failed.Load().(error); err != nil {
		b.Fatal(err)
	}
	s.d = append(s.d, d...)
}

// paired runs floor and HTTP in alternating chunks of the same airframes,
// so the shared machine's drift falls on both sides alike.
func paired(b *testing.B, ids []string, rng *rand.Rand, chunks, chunk, conc int, floor, http func(string) error) (fl, ht sample) {
	for k := range chunks {
		seq := make([]string, chunk)
		for i := range seq {
			seq[i] = ids[rng.IntN(len(ids))]
		}
		if k%2 == 0 {
			fl.drive(b, seq, conc, floor)
			ht.drive(b, seq, conc, http)
		} else {
			ht.drive(b, seq, conc, http)
			fl.drive(b, seq, conc, floor)
		}
	}
	return fl, ht
}

// BenchmarkLookups measures fitment and readiness over HTTP on loopback (the
// real router, authentication and JSON, a real listener, concurrent
// clients) against their floor, the same SQL sent directly with pgx at the
// same concurrency, on the 500-airframe fleet, warm, in one run. Floor and
// HTTP alternate in each round so drift on the shared machine hits both.
// It needs the service's cluster settings (fsync on), not the test ones:
//
//	ROTORWRIGHT_TEST_CLUSTER=service go test -bench Lookups -run '^$' -benchtime 1x -count 3 ./api
//
// ROTORWRIGHT_LOOKUP_PROFILE=DIR also writes DIR/fitment.pprof and
// DIR/readiness.pprof, CPU profiles of the HTTP side alone.
func BenchmarkLookups(b *testing.B) {
	if !pgtest.ServiceSettings() {
		b.Skip("set " + pgtest.EnvCluster + "=service: the figures must come from the service's cluster settings")
	}
	ctx := context.Background()
	pool := pgtest.NewPool(b)
	var fsync string
	if err := pool.QueryRow(ctx, `SHOW fsync`).Scan(&fsync); err != nil || fsync != "on" {
		b.Fatalf("fsync is %q (%v): not the service's settings", fsync, err)
	}
	ids := scale.Seed(b, pool)
	db := store.New(pool)
	prog := schedule.NewProgramme(db, health.New(db))
	if _, err := prog.RecomputeFleet(ctx); err != nil {
		b.Fatal(err)
	}
	_, token, err := db.CreateKey(ctx, "bench", fleet.RoleViewer)
	if err != nil {
		b.Fatal(err)
	}
	log := slog.New(slog.NewTextHandler(io.Discard, nil))
	// Rate limits off: one key at thousands of requests a second is the point.
	srv := httptest.NewServer(api.New(db, log, unlimited(api.DefaultLimits), nil).Handler())
	defer srv.Close()
	client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: lookupConc}}
	get := func(path string) error {
		req, err := http.NewRequest(http.MethodGet, srv.URL+path, nil)
		if err != nil {
			return err
		}
		req.Header.Set("Authorization", "Bearer "+token)
		res, err := client.Do(req)
		if err != nil {
			return err
		}
		defer res.Body.Close()
		if _, err := io.Copy(io.Discard, res.Body); err != nil {
			return err
		}
		if res.StatusCode != http.StatusOK {
			return fmt.Errorf("GET %s: %s", path, res.Status)
		}
		return nil
	}
	lookups := []lookup{
		{name: "fitment", chunk: 400,
			floor: func(ctx context.Context, id string) error {
				rows, err := pool.Query(ctx, store.FitmentJSONSQL, id, time.Now())
				if err != nil {
					return err
				}
				for rows.Next() {
					_ = rows.RawValues() // the bytes as received, nothing decoded
				}
				rows.Close()
				return rows.Err()
			},
			http: func(id string) error { return get("/v1/airframes/" + id + "/fitment") }},
		{name: "readiness", chunk: 100,
			floor: func(ctx context.Context, id string) error {
				// Every statement of the answer in one pipelined batch, each
				// row's raw bytes read and nothing decoded.
				batch := store.ReadinessBatch(id, time.Now(), nil)
				br := pool.SendBatch(ctx, batch)
				for range batch.Len() {
					rows, err := br.Query()
					if err != nil {
						br.Close()
						return err
					}
					for rows.Next() {
						_ = rows.RawValues()
					}
					if rows.Close(); rows.Err() != nil {
						br.Close()
						return rows.Err()
					}
				}
				return br.Close()
			},
			http: func(id string) error { return get("/v1/airframes/" + id + "/readiness") }},
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for b.Loop() {
		// Warm both sides (plans, caches, connections) before measuring.
		for _, l := range lookups {
			paired(b, ids, rng, 2, 300, lookupConc, func(id string) error { return l.floor(ctx, id) }, l.http)
		}
		const rounds = 3
		for _, l := range lookups {
			var ratios []float64
			var p99s []time.Duration
			floorFn := func(id string) error { return l.floor(ctx, id) }
			for r := range rounds {
				fl, ht := paired(b, ids, rng, 10, l.chunk, lookupConc, floorFn, l.http)
				fl1, ht1 := paired(b, ids, rng, 10, l.chunk/2, 1, floorFn, l.http)
				ratios = append(ratios, ht.rate()/fl.rate())
				p99s = append(p99s, ht1.quantile(0.99))
				b.Logf("%s round %d: %d clients: floor %.0f/s, HTTP %.0f/s, ratio %.2f (p99 floor %s, HTTP %s); "+
					"1 client: p50/p99 floor %s/%s, HTTP %s/%s",
					l.name, r, lookupConc, fl.rate(), ht.rate(), ht.rate()/fl.rate(), fl.quantile(0.99), ht.quantile(0.99),
					fl1.quantile(0.5), fl1.quantile(0.99), ht1.quantile(0.5), ht1.quantile(0.99))
			}
			b.ReportMetric(slices.Min(ratios), l.name+"-ratio-min")
			b.ReportMetric(slices.Max(ratios), l.name+"-ratio-max")
			b.ReportMetric(float64(slices.Max(p99s).Microseconds())/1000, l.name+"-http-p99-ms-max")
		}
		if dir := os.Getenv("ROTORWRIGHT_LOOKUP_PROFILE"); dir != "" {
			// A CPU profile of each lookup over HTTP alone (client included:
			// same process), for `go tool pprof -top`.
			for _, l := range lookups {
				f, err := os.Create(filepath.Join(dir, l.name+".pprof"))
				if err != nil {
					b.Fatal(err)
				}
				if err := pprof.StartCPUProfile(f); err != nil {
					b.Fatal(err)
				}
				var s sample
				for range l.chunk / 10 { // 40 passes of the fleet for fitment, 10 for readiness
					s.drive(b, ids, lookupConc, l.http)
				}
				pprof.StopCPUProfile()
				f.Close()
			}
		}
		// The fitment's SQL writes the whole answer as JSON now; against the
		// query that left the empty places to Go, so a heavier query cannot
		// pass for a better ratio unnoticed.
		old, now := paired(b, ids, rng, 10, 400, lookupConc, func(id string) error {
			var positions, parts []byte
			return pool.QueryRow(ctx, store.FitmentSQL, id, time.Now()).Scan(&positions, &parts)
		}, func(id string) error { return lookups[0].floor(ctx, id) })
		b.Logf("fitment SQL: decoded-by-Go query %.0f/s, JSON-whole query %.0f/s (%.2f)", old.rate(), now.rate(), now.rate()/old.rate())
		b.ReportMetric(now.rate()/old.rate(), "fitment-sql-json-vs-old")
	}
}
