package schedule_test

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"strconv"
	"sync"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"

	"github.com/rotorwright/rotorwright/schedule"
)

// hit is one request a receiver saw.
type hit struct {
	key, delivery, attempt string
	body                   schedule.Delivery
	status                 int
}

// receiver is a webhook endpoint on 127.0.0.1 that answers with the
// statuses given in turn, then 200.
type receiver struct {
	*httptest.Server
	mu       sync.Mutex
	hits     []hit
	statuses []int
	delay    time.Duration
}

func newReceiver(t *testing.T, statuses ...int) *receiver {
	rc := &receiver{statuses: statuses}
	rc.Server = httptest.NewServer(http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		var h hit
		h.key, h.delivery, h.attempt = r.Header.Get("Idempotency-Key"), r.Header.Get("X-Rotorwright-Delivery"), r.Header.Get("X-Rotorwright-Attempt")
		raw, _ := io.ReadAll(r.Body)
		if err := json.Unmarshal(raw, &h.body); err != nil || r.Method != http.MethodPost || r.Header.Get("Content-Type") != "application/json" {
			t.Errorf("receiver got %s %q (%v)", r.Method, raw, err)
		}
		time.Sleep(rc.delay)
		rc.mu.Lock()
		h.status = http.StatusOK
		if len(rc.statuses) > 0 {
			h.status, rc.statuses = rc.statuses[0], rc.statuses[1:]
		}
		rc.hits = append(rc.hits, h)
		rc.mu.Unlock()
		w.WriteHeader(h.status)
		fmt.Fprintf(w, "status %d from the test receiver", h.status)
	}))
	t.Cleanup(rc.Close)
	return rc
}

func (rc *receiver) seen() []hit {
	rc.mu.Lock()
	defer rc.mu.Unlock()
	return append([]hit(nil), rc.hits...)
}

func enqueue(t *testing.T, pool *pgxpool.Pool, kind, subject string, payload any) {
	t.Helper()
	err := pgx.BeginFunc(t.Context(), pool, func(tx pgx.Tx) error {
		return schedule.Enqueue(t.Context(), tx, kind, subject, payload)
	})
	if err != nil {
		t.Fatal(err)
	}
}

// fakeClock is a settable time source for the Deliverer.
type fakeClock struct {
	mu sync.Mutex
	t  time.Time
}

func (c *fakeClock) now() time.Time { c.mu.Lock(); defer c.mu.Unlock(); return c.t }
func (c *fakeClock) advance(d time.Duration) {
	c.mu.Lock()
	c.t = c.t.Add(d)
	c.mu.Unlock()
}

var loopbackClient = schedule.NewClient(schedule.Policy{AllowLoopback: true}, 2*time.Second)

// A receiver fails twice, then takes the notification; another takes it at
// once. Each gets it delivered exactly once, retries carry the same id, and
// retries wait for the backoff.
func TestDeliveryRetriesWithBackoff(t *testing.T) {
	t.Parallel()
	pool := replicaPools(t, 1)[0]
	flaky, steady := newReceiver(t, 500, 500), newReceiver(t)
	payload := map[string]any{"airframe": "RW-07", "rule": "motor bearings", "status": "overdue"}
	enqueue(t, pool, "due_status", "airframe/RW-07", payload)
	// A notification whose transaction rolls back never exists.
	_ = pgx.BeginFunc(t.Context(), pool, func(tx pgx.Tx) error {
		if err := schedule.Enqueue(t.Context(), tx, "due_status", "airframe/RW-99", payload); err != nil {
			t.Fatal(err)
		}
		return errors.New("roll back")
	})

	clock := &fakeClock{t: time.Now().Add(time.Second)}
	var asked []int
	d := &schedule.Deliverer{
		Pool: pool, URLs: []string{flaky.URL, steady.URL}, Client: loopbackClient,
		Backoff: func(attempt int) time.Duration { asked = append(asked, attempt); return time.Minute },
		Now:     clock.now,
	}
	pass := func(wantDelivered, wantFailed int) {
		t.Helper()
		n, f, err := d.DeliverOnce(t.Context())
		if err != nil || n != wantDelivered || f != wantFailed {
			t.Fatalf("DeliverOnce = %d delivered, %d failed, %v; want %d, %d", n, f, err, wantDelivered, wantFailed)
		}
	}
	pass(0, 1)
	var next time.Time
	if err := pool.QueryRow(t.Context(), `SELECT next_attempt_at FROM outbox`).Scan(&next); err != nil {
		t.Fatal(err)
	}
	if want := clock.now().Add(time.Minute); next.Sub(want).Abs() > time.Millisecond {
		t.Errorf("next attempt at %s, want %s (now + backoff)", next, want)
	}
	clock.advance(59 * time.Second)
	pass(0, 0) // not due yet
	clock.advance(time.Second)
	pass(0, 1)
	clock.advance(time.Minute)
	pass(1, 0)
	clock.advance(time.Hour)
	pass(0, 0) // delivered rows are done

	if fmt.Sprint(asked) != "[1 2]" {
		t.Errorf("backoff asked for attempts %v, want [1 2]", asked)
	}
	fh, sh := flaky.seen(), steady.seen()
	if len(fh) != 3 || len(sh) != 1 {
		t.Fatalf("flaky saw %d posts, steady %d; want 3 and 1", len(fh), len(sh))
	}
	id := sh[0].key
	for i, h := range append(fh, sh...) {
		if h.key != id || h.delivery != id || h.body.DeliveryID.String() != id {
			t.Errorf("post %d: key %q, delivery header %q, body id %s; want all %s", i, h.key, h.delivery, h.body.DeliveryID, id)
		}
	}
	for i, h := range fh {
		if h.attempt != strconv.Itoa(i+1) {
			t.Errorf("flaky post %d carries attempt %q", i, h.attempt)
		}
	}
	if fh[2].status != 200 || fh[0].status != 500 || fh[1].status != 500 {
		t.Errorf("flaky statuses %d %d %d, want 500 500 200", fh[0].status, fh[1].status, fh[2].status)
	}
	var (
		attempts  int
		delivered *time.Time
		lastErr   *string
		urls      []string
		created   time.Time
	)
	if err := pool.QueryRow(t.Context(), `SELECT attempts, delivered_at, last_error, delivered_urls, created_at FROM outbox`).
		Scan(&attempts, &delivered, &lastErr, &urls, &created); err != nil {
		t.Fatal(err)
	}
	if attempts != 3 || delivered == nil || lastErr != nil || len(urls) != 2 {
		t.Errorf("row: attempts %d, delivered %v, last error %v, urls %v", attempts, delivered, lastErr, urls)
	}
	b := sh[0].body
	var got map[string]any
	if err := json.Unmarshal(b.Payload, &got); err != nil {
		t.Fatal(err)
	}
	if b.Kind != "due_status" || b.Subject != "airframe/RW-07" || !b.CreatedAt.Equal(created) ||
		fmt.Sprint(got) != fmt.Sprint(payload) {
		t.Errorf("body %+v (payload %v)", b, got)
	}
}

// The error of a failed attempt is kept; after MaxAttempts the row is
// given up and no longer tried.
func TestDeliveryGivesUp(t *testing.T) {
	t.Parallel()
	pool := replicaPools(t, 1)[0]
	down := newReceiver(t, 503, 503, 503, 503)
	enqueue(t, pool, "due_status", "part/M-1", map[string]string{"status": "due_soon"})
	d := &schedule.Deliverer{Pool: pool, URLs: []string{down.URL}, Client: loopbackClient,
		Backoff: func(int) time.Duration { return 0 }, MaxAttempts: 2}
	for i, want := range []int{1, 1, 0} {
		if _, f, err := d.DeliverOnce(t.Context()); err != nil || f != want {
			t.Fatalf("pass %d: %d failed, %v; want %d", i+1, f, err, want)
		}
	}
	var msg string
	var next *time.Time
	if err := pool.QueryRow(t.Context(), `SELECT last_error, next_attempt_at FROM outbox`).Scan(&msg, &next); err != nil {
		t.Fatal(err)
	}
	if next != nil || msg != fmt.Sprintf("gave up after 2 attempts: POST %s: status 503: status 503 from the test receiver", down.URL) {
		t.Errorf("given-up row: next %v, error %q", next, msg)
	}
	if n := len(down.seen()); n != 2 {
		t.Errorf("receiver saw %d posts, want 2", n)
	}
}

// Two deliverers working the same outbox post each row once.
func TestConcurrentDeliverersPostOnce(t *testing.T) {
	t.Parallel()
	pools := replicaPools(t, 2)
	rc := newReceiver(t)
	rc.delay = 3 * time.Millisecond // long enough for the two to overlap
	const rows = 40
	for i := range rows {
		enqueue(t, pools[0], "due_status", fmt.Sprintf("part/P-%02d", i), map[string]int{"n": i})
	}
	var wg sync.WaitGroup
	totals := make([]int, 2)
	for i, p := range pools {
		d := &schedule.Deliverer{Pool: p, URLs: []string{rc.URL}, Client: loopbackClient}
		wg.Go(func() {
			n, f, err := d.DeliverOnce(t.Context())
			if err != nil || f != 0 {
				t.Errorf("deliverer %d: %d failed, %v", i, f, err)
			}
			totals[i] = n
		})
	}
	wg.Wait()
	if totals[0]+totals[1] != rows {
		t.Errorf("delivered %v, want %d in all", totals, rows)
	}
	if totals[0] == 0 || totals[1] == 0 {
		t.Logf("one deliverer took every row (%v); the overlap was not exercised this run", totals)
	}
	per := map[string]int{}
	for _, h := range rc.seen() {
		per[h.key]++
	}
	if len(per) != rows {
		t.Errorf("receiver saw %d distinct deliveries, want %d", len(per), rows)
	}
	for id, n := range per {
		if n != 1 {
			t.Errorf("delivery %s posted %d times", id, n)
		}
	}
	if n := count(t, pools[0], `SELECT count(*) FROM outbox WHERE delivered_at IS NULL`); n != 0 {
		t.Errorf("%d rows undelivered", n)
	}
}

// With no URL configured nothing is consumed; Run stops with its context.
func TestDelivererIdleAndRun(t *testing.T) {
	t.Parallel()
	pool := replicaPools(t, 1)[0]
	enqueue(t, pool, "due_status", "airframe/RW-01", map[string]string{})
	idle := &schedule.Deliverer{Pool: pool}
	if n, f, err := idle.DeliverOnce(t.Context()); n+f != 0 || err != nil {
		t.Errorf("no URLs: %d, %d, %v", n, f, err)
	}
	if n := count(t, pool, `SELECT count(*) FROM outbox WHERE attempts = 0 AND delivered_at IS NULL`); n != 1 {
		t.Error("the row was touched with no receiver configured")
	}
	rc := newReceiver(t)
	d := &schedule.Deliverer{Pool: pool, URLs: []string{rc.URL}, Client: loopbackClient}
	ctx, cancel := context.WithCancel(t.Context())
	stopped := make(chan struct{})
	go func() { d.Run(ctx, 20*time.Millisecond); close(stopped) }()
	deadline := time.Now().Add(5 * time.Second)
	for len(rc.seen()) == 0 && time.Now().Before(deadline) {
		time.Sleep(10 * time.Millisecond)
	}
	cancel()
	select {
	case <-stopped:
	case <-time.After(5 * time.Second):
		t.Fatal("Run did not return after its context ended")
	}
	if n := len(rc.seen()); n != 1 {
		t.Errorf("Run posted %d times, want 1", n)
	}
}

// DefaultBackoff follows equal jitter: for attempt n the delay lies in
// [d/2, d] with d = min(1 h, 30 s * 2^(n-1)) (AWS Architecture Blog,
// "Exponential Backoff And Jitter", 2015, from memory), and it varies.
func TestDefaultBackoff(t *testing.T) {
	t.Parallel()
	for n := 1; n <= 40; n++ {
		d := time.Hour
		if n <= 8 {
			d = min(time.Hour, 30*time.Second*time.Duration(1<<(n-1)))
		}
		seen := map[time.Duration]bool{}
		for range 50 {
			b := schedule.DefaultBackoff(n)
			if b < d/2 || b > d {
				t.Fatalf("attempt %d: %s outside [%s, %s]", n, b, d/2, d)
			}
			seen[b] = true
		}
		if len(seen) < 2 {
			t.Errorf("attempt %d: no jitter in 50 draws", n)
		}
	}
}
