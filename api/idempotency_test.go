package api_test

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/json"
	"mime/multipart"
	"net/http/httptest"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
)

// Idempotency-Key on POST: a retry gets the first result, another body with
// the same key is refused, a key still in progress is a conflict, and keys
// are per API key.
func TestIdempotencyKey(t *testing.T) {
	e := newEnv(t)
	body := map[string]any{"code": "IK-1", "client": "Harbour Board"}
	first := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "job-ik-1")
	again := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "job-ik-1")
	var a, b idBody
	first.decode(t, &a)
	again.decode(t, &b)
	if first.Status != 201 || again.Status != 201 || a.ID != b.ID || again.Header.Get("Idempotent-Replayed") != "true" {
		t.Fatalf("retry: %d %s / %d %s", first.Status, a.ID, again.Status, b.ID)
	}
	var jobs struct {
		Items []any `json:"items"`
	}
	e.call("GET", "/v1/jobs", fleet.RoleViewer, nil).decode(t, &jobs)
	if len(jobs.Items) != 1 {
		t.Fatalf("%d jobs after a retried POST, want 1", len(jobs.Items))
	}
	other := e.call("POST", "/v1/jobs", tech, map[string]any{"code": "IK-2", "client": "Harbour Board"}, "Idempotency-Key", "job-ik-1")
	if p := other.problem(t); other.Status != 422 || p.Field != "Idempotency-Key" {
		t.Fatalf("same key, other body: %d %+v", other.Status, p)
	}
	// Another API key may use the same key string for its own request.
	if r := e.call("POST", "/v1/jobs", admin, map[string]any{"code": "IK-3", "client": "Harbour Board"}, "Idempotency-Key", "job-ik-1"); r.Status != 201 {
		t.Fatalf("same key, other API key: %d %s", r.Status, r.Body)
	}
	// A key claimed by a request still running: the retry waits its turn with 409.
	raw, _ := json.Marshal(body)
	sum := sha256.Sum256(append([]byte("application/json\n"), raw...))
	if _, _, err := e.db.ClaimIdempotencyKey(context.Background(), e.keys[tech], "busy", "/v1/jobs", sum[:], time.Minute); err != nil {
		t.Fatal(err)
	}
	busy := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "busy")
	if p := busy.problem(t); busy.Status != 409 || p.Field != "Idempotency-Key" || busy.Header.Get("Retry-After") == "" {
		t.Fatalf("key in progress: %d %+v Retry-After %q", busy.Status, p, busy.Header.Get("Retry-After"))
	}
	// A refused request (4xx) is kept too: the retry gets the same refusal.
	bad := map[string]any{"code": "", "client": "x"}
	r1 := e.call("POST", "/v1/jobs", tech, bad, "Idempotency-Key", "bad-1")
	r2 := e.call("POST", "/v1/jobs", tech, bad, "Idempotency-Key", "bad-1")
	if r1.Status != 400 || r2.Status != 400 || r2.Header.Get("Idempotent-Replayed") != "true" {
		t.Fatalf("refused request retried: %d / %d", r1.Status, r2.Status)
	}
}

func (e *env) jobCount() int {
	e.t.Helper()
	var jobs struct {
		Items []any `json:"items"`
	}
	e.call("GET", "/v1/jobs", fleet.RoleViewer, nil).decode(e.t, &jobs)
	return len(jobs.Items)
}

// A claim is a lease: a holder that died (the service killed, the database
// lost) holds the key only until the lease lapses; then a retry runs (before
// the fix every retry got 409 for 24 hours).
func TestIdempotencyLeaseLapses(t *testing.T) {
	e := newEnv(t)
	body := map[string]any{"code": "LL-1", "client": "Harbour Board"}
	raw, _ := json.Marshal(body)
	sum := sha256.Sum256(append([]byte("application/json\n"), raw...))
	// A request claimed the key and then its process died: nothing completes it.
	if _, _, err := e.db.ClaimIdempotencyKey(t.Context(), e.keys[tech], "dead", "/v1/jobs", sum[:], time.Second); err != nil {
		t.Fatal(err)
	}
	if r := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "dead"); r.Status != 409 || r.Header.Get("Retry-After") != "1" {
		t.Fatalf("within the lease: %d Retry-After %q", r.Status, r.Header.Get("Retry-After"))
	}
	time.Sleep(1200 * time.Millisecond)
	r := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "dead")
	if r.Status != 201 || r.Header.Get("Idempotent-Replayed") != "" {
		t.Fatalf("after the lease lapsed: %d %s", r.Status, r.Body)
	}
	if again := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "dead"); again.Status != 201 || again.Header.Get("Idempotent-Replayed") != "true" {
		t.Fatalf("the taken-over key did not keep its result: %d", again.Status)
	}
	if n := e.jobCount(); n != 1 {
		t.Fatalf("%d jobs, want 1", n)
	}
}

// cancelOnWrite is a response recorder whose client goes away as soon as
// the answer starts: the request's context ends right after the work is done.
type cancelOnWrite struct {
	*httptest.ResponseRecorder
	cancel context.CancelFunc
}

func (w *cancelOnWrite) WriteHeader(code int) {
	w.ResponseRecorder.WriteHeader(code)
	w.cancel()
}

// Storing the result does not depend on the request's context: a client
// gone right after the work was done still leaves its result for the retry
// (before the fix the store call failed with the cancelled context and the
// key stayed "in progress").
func TestIdempotencyResultKeptWhenClientLeaves(t *testing.T) {
	e := newEnv(t)
	ctx, cancel := context.WithCancel(t.Context())
	req := httptest.NewRequest("POST", "/v1/jobs", strings.NewReader(`{"code":"CL-1","client":"c"}`)).WithContext(ctx)
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+e.tokens[tech])
	req.Header.Set("Idempotency-Key", "leaves")
	rec := &cancelOnWrite{ResponseRecorder: httptest.NewRecorder(), cancel: cancel}
	e.h.ServeHTTP(rec, req)
	if rec.Code != 201 {
		t.Fatalf("first: %d %s", rec.Code, rec.Body)
	}
	r := e.call("POST", "/v1/jobs", tech, []byte(`{"code":"CL-1","client":"c"}`), "Idempotency-Key", "leaves")
	if r.Status != 201 || r.Header.Get("Idempotent-Replayed") != "true" {
		t.Fatalf("retry after the client left: %d %s", r.Status, r.Body)
	}
}

// A client gone before the work was done releases its key at once: the
// retry runs now, not after a lease or a day.
func TestIdempotencyClientGoneReleasesKey(t *testing.T) {
	e := newEnv(t)
	ctx := t.Context()
	holder, err := e.db.Pool().Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	// Block every job insert behind a lock on the table.
	if _, err := holder.Exec(ctx, `LOCK TABLE jobs IN EXCLUSIVE MODE`); err != nil {
		t.Fatal(err)
	}
	rctx, cancel := context.WithCancel(ctx)
	done := make(chan struct{})
	go func() {
		defer close(done)
		req := httptest.NewRequest("POST", "/v1/jobs", strings.NewReader(`{"code":"CG-1","client":"c"}`)).WithContext(rctx)
		req.Header.Set("Content-Type", "application/json")
		req.Header.Set("Authorization", "Bearer "+e.tokens[tech])
		req.Header.Set("Idempotency-Key", "gone")
		e.h.ServeHTTP(httptest.NewRecorder(), req)
	}()
	waitBlocked(t, e.db)
	cancel()
	<-done
	holder.Rollback(ctx)
	r := e.call("POST", "/v1/jobs", tech, []byte(`{"code":"CG-1","client":"c"}`), "Idempotency-Key", "gone")
	if r.Status != 201 || r.Header.Get("Idempotent-Replayed") != "" {
		t.Fatalf("retry after the client went away: %d %s", r.Status, r.Body)
	}
}

// A replay returns the first answer's ETag and Location too.
func TestIdempotencyReplayHeaders(t *testing.T) {
	e := newEnv(t)
	body := map[string]any{"code": "RH-1", "client": "c"}
	first := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "hdr")
	again := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "hdr")
	for _, h := range []string{"ETag", "Location"} {
		if first.Header.Get(h) == "" || again.Header.Get(h) != first.Header.Get(h) {
			t.Errorf("%s: first %q, replay %q", h, first.Header.Get(h), again.Header.Get(h))
		}
	}
}

// A multipart retry with a new boundary (what curl sends each time) is the
// same request: matched by its parts, not its bytes (before the fix: 422).
// Other parts are another request.
func TestIdempotencyMultipartNewBoundary(t *testing.T) {
	e := newEnv(t)
	a, pack, spec := e.simFleet()
	log, _ := genLog(t, spec)
	flight := map[string]any{"airframe_id": a.ID, "pilot": "test pilot", "packs": []string{pack.ID}}
	send := func(log []byte, boundary string) *resp {
		var buf bytes.Buffer
		w := multipart.NewWriter(&buf)
		if err := w.SetBoundary(boundary); err != nil {
			t.Fatal(err)
		}
		fj, _ := json.Marshal(flight)
		fw, _ := w.CreateFormField("flight")
		fw.Write(fj)
		lw, _ := w.CreateFormFile("log", "flight.csv")
		lw.Write(log)
		w.Close()
		req := httptest.NewRequest("POST", "/v1/flights", &buf)
		req.Header.Set("Content-Type", w.FormDataContentType())
		req.Header.Set("Authorization", "Bearer "+e.tokens[pilot])
		req.Header.Set("Idempotency-Key", "upload-1")
		rec := httptest.NewRecorder()
		e.h.ServeHTTP(rec, req)
		r := &resp{Status: rec.Code, Header: rec.Header(), Body: rec.Body.Bytes()}
		validate(t, req, r)
		return r
	}
	first := send(log, "------------------------aaaaaaaaaaaaaaaa")
	if first.Status != 201 {
		t.Fatalf("upload: %d %s", first.Status, first.Body)
	}
	again := send(log, "------------------------bbbbbbbbbbbbbbbb")
	if again.Status != 201 || again.Header.Get("Idempotent-Replayed") != "true" || again.Header.Get("Location") != first.Header.Get("Location") {
		t.Fatalf("same parts, new boundary: %d replayed %q %s", again.Status, again.Header.Get("Idempotent-Replayed"), again.Body)
	}
	other := send(append(append([]byte{}, log...), "# one more comment\n"...), "------------------------cccccccccccccccc")
	if p := other.problem(t); other.Status != 422 || p.Field != "Idempotency-Key" {
		t.Fatalf("other log bytes, same key: %d %+v", other.Status, p)
	}
}

// A request that runs longer than the lease keeps its key: the lease is
// renewed while it runs, so a retry meanwhile still gets 409.
func TestIdempotencyLeaseRenewedWhileRunning(t *testing.T) {
	e := newEnv(t)
	short := *e
	// The lease is short so the test is quick, but not so short that a
	// loaded machine (CI shares two cores with many test binaries) stalls a
	// renewal past it: 300 ms lapsed there and made the retry hang on the lock.
	const lease = 1500 * time.Millisecond
	short.h = api.New(e.db, e.log, api.Limits{IdempotencyLease: lease}, nil).Handler()
	ctx := t.Context()
	holder, err := e.db.Pool().Begin(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer holder.Rollback(context.Background())
	if _, err := holder.Exec(ctx, `LOCK TABLE jobs IN EXCLUSIVE MODE`); err != nil {
		t.Fatal(err)
	}
	done := make(chan int, 1)
	go func() {
		req := httptest.NewRequest("POST", "/v1/jobs", strings.NewReader(`{"code":"LR-1","client":"c"}`))
		req.Header.Set("Content-Type", "application/json")
		req.Header.Set("Authorization", "Bearer "+e.tokens[tech])
		req.Header.Set("Idempotency-Key", "long")
		rec := httptest.NewRecorder()
		short.h.ServeHTTP(rec, req)
		done <- rec.Code
	}()
	waitBlocked(t, e.db)
	time.Sleep(3*lease + 500*time.Millisecond) // over three lease lengths
	// A retry that got past the key would wait on the lock for ever: bound
	// it, so a lapsed lease fails the test instead of hanging it.
	retry := make(chan *resp, 1)
	go func() {
		retry <- short.call("POST", "/v1/jobs", tech, []byte(`{"code":"LR-1","client":"c"}`), "Idempotency-Key", "long")
	}()
	select {
	case r := <-retry:
		if r.Status != 409 {
			t.Fatalf("retry while the first runs past its lease: %d %s", r.Status, r.Body)
		}
	case <-time.After(30 * time.Second):
		holder.Rollback(context.Background())
		t.Fatal("the retry went past the idempotency key (the lease lapsed while the first request ran)")
	}
	holder.Rollback(ctx)
	if code := <-done; code != 201 {
		t.Fatalf("first: %d", code)
	}
	if n := short.jobCount(); n != 1 {
		t.Fatalf("%d jobs, want 1", n)
	}
}
