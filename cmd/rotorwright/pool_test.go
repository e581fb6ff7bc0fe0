package main

import (
	"context"
	"io"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
)

// The jobs that tick together on the recompute clock run to the end while
// uploads' early transactions hold half of the API's pool (a pool of 4, as
// on two cores). Their locks were held on the same pool: two uploads'
// transactions and the jobs' locks took every connection while the jobs'
// work waited for one, and the service hung (a demo load across a quarter
// hour did it).
func TestScheduledJobsRunBesideUploadsHoldingConnections(t *testing.T) {
	t.Parallel()
	url := pgtest.NewDB(t)
	if strings.Contains(url, "?") {
		url += "&pool_max_conns=4"
	} else {
		url += "?pool_max_conns=4"
	}
	app, _, _ := runApp(t, Config{DatabaseURL: url}, io.Discard)
	ctx := context.Background()
	if n := app.DB.Pool().Config().MaxConns; n != 4 {
		t.Fatalf("the API's pool has %d connections, want 4", n)
	}
	a, _ := quadWithPack(t, ctx, app.DB, "POOL-01", "POOL-P1")
	if _, err := app.DB.CreateRule(ctx, &fleet.ServiceRule{Name: "pack check", AppliesTo: "pack", Flights: ip(10), WarnAt: 0.9, Action: "inspect"}); err != nil {
		t.Fatal(err)
	}
	// Two uploads analysing their logs: each holds a transaction begun
	// early (the most the store allows at once: half the pool).
	for i, sha := range []string{"a1", "b2"} {
		w, err := app.DB.BeginLoggedFlight(ctx, a.ID, strings.Repeat(sha, 32))
		if err != nil || w == nil {
			t.Fatalf("upload %d: no early transaction (%v)", i, err)
		}
		defer w.Close()
	}
	jctx, jcancel := context.WithTimeout(ctx, 30*time.Second)
	defer jcancel()
	var wg sync.WaitGroup
	errs := make([]error, 3)
	for i, job := range []string{"recompute", "sessions", "repack"} {
		wg.Add(1)
		go func() {
			defer wg.Done()
			_, errs[i] = app.jobs.RunNow(jctx, job)
		}()
	}
	wg.Wait()
	for i, job := range []string{"recompute", "sessions", "repack"} {
		if errs[i] != nil {
			t.Errorf("job %s beside two uploads: %v", job, errs[i])
		}
	}
}
