package schedule_test

import (
	"math/rand/v2"
	"sort"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/internal/scale"
	"github.com/rotorwright/rotorwright/store"
)

// The large fleet of DESIGN section 10 (internal/scale). The lookups over
// it are measured over HTTP against their SQL in api (BenchmarkLookups);
// here it serves the recompute benchmark.
const (
	scaleAirframes = scale.Airframes
	scaleParts     = scale.Parts
	scaleFlights   = scale.Flights
)

func seedScale(b *testing.B) (*store.DB, []string) {
	b.Helper()
	db := store.New(pgtest.NewPool(b))
	return db, scale.Seed(b, db.Pool())
}

// latencies runs fn n times on random airframes and returns p50 and p99.
func latencies(b *testing.B, ids []string, n int, fn func(id string) error) (p50, p99 time.Duration) {
	rng := rand.New(rand.NewPCG(3, 4))
	d := make([]time.Duration, n)
	for i := range d {
		id := ids[rng.IntN(len(ids))]
		t0 := time.Now()
		if err := fn(id); err != nil {
			b.Fatal(err)
		}
		d[i] = time.Since(t0)
	}
	sort.Slice(d, func(i, j int) bool { return d[i] < d[j] })
	return d[n/2], d[n*99/100]
}
