package api_test

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"log/slog"
	"math/rand/v2"
	"net/http"
	"net/http/httptest"
	"os"
	"os/exec"
	"path/filepath"
	"runtime/pprof"
	"slices"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"testing"
	"time"

	"github.com/valyala/fasthttp"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/internal/logging"
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
	name    string
	chunk   int // requests per chunk (10 chunks a side per round)
	floor   func(ctx context.Context, id string) error
	http    func(id string) error // with the lean client (the target)
	netHTTP func(id string) error // with Go's net/http client (reported beside)
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
// DIR/readiness.pprof, CPU profiles of the HTTP side alone. After the
// measured rounds it runs references, not targets: fitment behind a bare
// net/http handler (what HTTP costs apart from the router) and the old
// fitment query (the new one must not be heavier).
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
	// The service's logger (cmd/rotorwright: internal/logging, text lines
	// batched) to a pipe read by another process, as a container runtime or
	// the system journal reads standard error: each request's access line
	// is formatted and written, not discarded.
	reader := exec.Command("sh", "-c", "cat > /dev/null")
	logPipe, err := reader.StdinPipe()
	if err != nil {
		b.Fatal(err)
	}
	if err := reader.Start(); err != nil {
		b.Fatal(err)
	}
	defer reader.Wait()
	defer logPipe.Close()
	logw := logging.NewWriter(logPipe, logging.FlushEvery)
	defer logw.Stop()
	log := logging.New(logw, slog.LevelInfo, "text")
	// Rate limits off: one key at thousands of requests a second is the point.
	// The service's own http.Server (its timeouts set deadlines on every
	// request), on a loopback listener.
	srv := httptest.NewUnstartedServer(nil)
	srv.Config = api.New(db, log, unlimited(api.DefaultLimits), nil).HTTPServer()
	srv.Start()
	defer srv.Close()
	// Two clients: Go's net/http client (about a fifth of the process's CPU
	// per request, in profiles) and fasthttp's, a lean load generator like
	// those run from another machine. The targets are read with the lean
	// one, so that what is measured is the server, not the client sharing
	// its two cores; the net/http client's figures are reported beside.
	client := &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: lookupConc}}
	get := func(base, path string) error {
		req, err := http.NewRequest(http.MethodGet, base+path, nil)
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
	auth := "Bearer " + token
	var leanMu sync.Mutex
	leans := map[string]*fasthttp.HostClient{} // one per server
	getLean := func(base, path string) error {
		leanMu.Lock()
		lean := leans[base]
		if lean == nil {
			lean = &fasthttp.HostClient{Addr: strings.TrimPrefix(base, "http://"), MaxConns: lookupConc}
			leans[base] = lean
		}
		leanMu.Unlock()
		req, res := fasthttp.AcquireRequest(), fasthttp.AcquireResponse()
		defer fasthttp.ReleaseRequest(req)
		defer fasthttp.ReleaseResponse(res)
		req.SetRequestURI(base + path)
		req.Header.Set("Authorization", auth)
		if err := lean.Do(req, res); err != nil {
			return err
		}
		if res.StatusCode() != http.StatusOK || len(res.Body()) == 0 {
			return fmt.Errorf("GET %s: %d, %d bytes", path, res.StatusCode(), len(res.Body()))
		}
		return nil
	}
	bare := newBareFitment(b, db, getLean)
	defer bare.close()
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
			http:    func(id string) error { return getLean(srv.URL, "/v1/airframes/"+id+"/fitment") },
			netHTTP: func(id string) error { return get(srv.URL, "/v1/airframes/"+id+"/fitment") }},
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
			http:    func(id string) error { return getLean(srv.URL, "/v1/airframes/"+id+"/readiness") },
			netHTTP: func(id string) error { return get(srv.URL, "/v1/airframes/"+id+"/readiness") }},
	}
	rng := rand.New(rand.NewPCG(3, 4))
	for b.Loop() {
		// Warm both sides (plans, caches, connections) before measuring.
		for _, l := range lookups {
			paired(b, ids, rng, 2, 300, lookupConc, func(id string) error { return l.floor(ctx, id) }, l.http)
			paired(b, ids, rng, 2, 100, lookupConc, func(id string) error { return l.floor(ctx, id) }, l.netHTTP)
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
			// The same with Go's net/http client, for comparison.
			var stdRatios []float64
			for r := range rounds {
				fl, ht := paired(b, ids, rng, 10, l.chunk, lookupConc, floorFn, l.netHTTP)
				fl1, ht1 := paired(b, ids, rng, 10, l.chunk/2, 1, floorFn, l.netHTTP)
				stdRatios = append(stdRatios, ht.rate()/fl.rate())
				b.Logf("%s round %d, net/http client: %d clients: floor %.0f/s, HTTP %.0f/s, ratio %.2f; "+
					"1 client: p50/p99 floor %s/%s, HTTP %s/%s",
					l.name, r, lookupConc, fl.rate(), ht.rate(), ht.rate()/fl.rate(),
					fl1.quantile(0.5), fl1.quantile(0.99), ht1.quantile(0.5), ht1.quantile(0.99))
			}
			b.ReportMetric(slices.Min(stdRatios), l.name+"-nethttp-ratio-min")
			b.ReportMetric(slices.Max(stdRatios), l.name+"-nethttp-ratio-max")
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
		// What HTTP itself costs here, apart from the router: the same store
		// call behind a bare net/http handler (no gin, no middleware, no
		// authentication, no access line) against the same floor, and a
		// bare handler answering a constant body of the fitment's size with
		// no query at all. The first is the most any router could reach.
		fitFloor := func(id string) error { return lookups[0].floor(ctx, id) }
		bareRatios := make([]float64, 0, rounds)
		for r := range rounds {
			fl, ht := paired(b, ids, rng, 10, 400, lookupConc, fitFloor, bare.fitment)
			_, emp := paired(b, ids, rng, 4, 400, lookupConc, fitFloor, bare.empty)
			bareRatios = append(bareRatios, ht.rate()/fl.rate())
			b.Logf("fitment round %d, bare net/http handler: floor %.0f/s, HTTP %.0f/s, ratio %.2f; constant body, no query: %.0f/s",
				r, fl.rate(), ht.rate(), ht.rate()/fl.rate(), emp.rate())
		}
		b.ReportMetric(slices.Min(bareRatios), "fitment-bare-ratio-min")
		b.ReportMetric(slices.Max(bareRatios), "fitment-bare-ratio-max")
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

// bareFitment is the fitment lookup behind a bare net/http handler, and a
// handler answering a constant body of the same size: the references that
// show what HTTP costs here apart from the router.
type bareFitment struct {
	srv            *httptest.Server
	fitment, empty func(id string) error
}

func newBareFitment(b *testing.B, db *store.DB, get func(base, path string) error) *bareFitment {
	b.Helper()
	mux := http.NewServeMux()
	mux.HandleFunc("GET /v1/airframes/{id}/fitment", func(w http.ResponseWriter, r *http.Request) {
		id, at := r.PathValue("id"), time.Now()
		parts, empty, err := db.FitmentJSON(r.Context(), id, at)
		if err != nil {
			http.Error(w, err.Error(), http.StatusInternalServerError)
			return
		}
		// The envelope getFitment writes.
		out := make([]byte, 0, 128+len(parts)+len(empty))
		out = append(out, `{"airframe_id":`...)
		out = strconv.AppendQuote(out, id)
		out = append(out, `,"at":"`...)
		out = at.UTC().AppendFormat(out, time.RFC3339Nano)
		out = append(out, `","parts":`...)
		out = append(out, parts...)
		out = append(out, `,"empty":`...)
		out = append(out, empty...)
		out = append(out, '}')
		w.Header().Set("Content-Type", "application/json; charset=utf-8")
		_, _ = w.Write(out)
	})
	constant := bytes.Repeat([]byte(" "), 1700) // about a quad's fitment
	mux.HandleFunc("GET /constant/{id}", func(w http.ResponseWriter, r *http.Request) {
		w.Header().Set("Content-Type", "application/json; charset=utf-8")
		_, _ = w.Write(constant)
	})
	srv := httptest.NewServer(mux)
	return &bareFitment{srv: srv,
		fitment: func(id string) error { return get(srv.URL, "/v1/airframes/"+id+"/fitment") },
		empty:   func(id string) error { return get(srv.URL, "/constant/"+id) }}
}

func (bf *bareFitment) close() { bf.srv.Close() }
