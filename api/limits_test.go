package api_test

import (
	"io"
	"net/http"
	"net/http/httptest"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
)

// serve sends a request from a client address through e's handler.
func (e *env) from(addr, method, path, token string, body io.Reader, headers ...string) *httptest.ResponseRecorder {
	req := httptest.NewRequest(method, path, body)
	req.RemoteAddr = addr + ":40000"
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	for i := 0; i+1 < len(headers); i += 2 {
		req.Header.Set(headers[i], headers[i+1])
	}
	rec := httptest.NewRecorder()
	e.h.ServeHTTP(rec, req)
	return rec
}

func retryAfter(t *testing.T, rec *httptest.ResponseRecorder) int {
	t.Helper()
	n, err := strconv.Atoi(rec.Header().Get("Retry-After"))
	if err != nil || n < 1 {
		t.Fatalf("%d without a Retry-After in seconds: %q %s", rec.Code, rec.Header().Get("Retry-After"), rec.Body)
	}
	return n
}

// Per-key and per-address rate limits answer 429 with Retry-After; another
// key is not slowed by a busy one; /healthz is never limited.
func TestRateLimits(t *testing.T) {
	e := newEnv(t)
	e.h = api.New(e.db, e.log, api.Limits{RatePerKey: 5, RatePerAddr: 2, AuthFailures: -1}, nil).Handler()
	count := func(addr, path, token string, n int) (ok, limited int) {
		for i := 0; i < n; i++ {
			switch rec := e.from(addr, "GET", path, token, nil); rec.Code {
			case 200:
				ok++
			case 429:
				limited++
				retryAfter(t, rec)
				if !strings.Contains(rec.Body.String(), `"code":"too_many_requests"`) {
					t.Fatalf("429 body: %s", rec.Body)
				}
			default:
				t.Fatalf("%s: %d %s", path, rec.Code, rec.Body)
			}
		}
		return ok, limited
	}
	// Per address: burst 5 (2/s), then 429.
	if ok, limited := count("192.0.2.10", "/readyz", "", 30); ok > 8 || limited < 20 {
		t.Fatalf("per address: %d ok, %d limited", ok, limited)
	}
	if ok, _ := count("192.0.2.10", "/healthz", "", 30); ok != 30 {
		t.Fatalf("/healthz limited: %d of 30 ok", ok)
	}
	// Per key, from many addresses: burst 11 (5/s), then 429; another key is unaffected.
	ok, limited := 0, 0
	for i := 0; i < 40; i++ {
		o, l := count("198.51.100."+strconv.Itoa(i), "/v1/airframes", e.tokens[fleet.RoleViewer], 1)
		ok, limited = ok+o, limited+l
	}
	if ok > 16 || limited < 24 {
		t.Fatalf("per key: %d ok, %d limited", ok, limited)
	}
	if rec := e.from("203.0.113.1", "GET", "/v1/airframes", e.tokens[pilot], nil); rec.Code != 200 {
		t.Fatalf("another key: %d", rec.Code)
	}
}

// Failed authentications from one address lock it out for the window: then
// even a good token gets 429 with Retry-After, other addresses do not, and
// X-Forwarded-For from an untrusted peer does not move the lock.
func TestFailedAuthLockout(t *testing.T) {
	e := newEnv(t)
	e.h = api.New(e.db, e.log, api.Limits{RatePerKey: -1, RatePerAddr: -1, AuthFailures: 3, AuthLockout: 2 * time.Second}, nil).Handler()
	const bad = "rw_not-a-real-token"
	for i := 0; i < 4; i++ {
		if rec := e.from("192.0.2.20", "GET", "/v1/airframes", bad, nil); rec.Code != 401 {
			t.Fatalf("bad token %d: %d", i+1, rec.Code)
		}
	}
	rec := e.from("192.0.2.20", "GET", "/v1/airframes", e.tokens[fleet.RoleViewer], nil, "X-Forwarded-For", "203.0.113.99")
	if rec.Code != 429 || retryAfter(t, rec) > 2 {
		t.Fatalf("locked out address with a good token: %d", rec.Code)
	}
	if rec := e.from("192.0.2.21", "GET", "/v1/airframes", e.tokens[fleet.RoleViewer], nil); rec.Code != 200 {
		t.Fatalf("another address: %d", rec.Code)
	}
	time.Sleep(2100 * time.Millisecond)
	if rec := e.from("192.0.2.20", "GET", "/v1/airframes", e.tokens[fleet.RoleViewer], nil); rec.Code != 200 {
		t.Fatalf("after the lockout: %d", rec.Code)
	}
}

// At most Limits.Ingests uploads run at once: the next gets 503 with
// Retry-After before any of its body is read.
func TestIngestCap(t *testing.T) {
	e := newEnv(t)
	e.h = api.New(e.db, e.log, api.Limits{RatePerKey: -1, RatePerAddr: -1, AuthFailures: -1, Ingests: 1}, nil).Handler()
	pr, pw := io.Pipe()
	first := make(chan int)
	go func() {
		rec := e.from("192.0.2.30", "POST", "/v1/flights", e.tokens[pilot], pr, "Content-Type", "multipart/form-data; boundary=xyz")
		first <- rec.Code
	}()
	// The first upload is in: its body is being read.
	if _, err := pw.Write([]byte("--xyz\r\nContent-Disposition: form-data; name=\"flight\"\r\n\r\n{}\r\n")); err != nil {
		t.Fatal(err)
	}
	read := 0
	second := &countingReader{r: strings.NewReader("--xyz--\r\n"), n: &read}
	rec := e.from("192.0.2.31", "POST", "/v1/flights", e.tokens[pilot], second, "Content-Type", "multipart/form-data; boundary=xyz")
	if rec.Code != http.StatusServiceUnavailable || read != 0 {
		t.Fatalf("second upload while one runs: %d, %d body bytes read", rec.Code, read)
	}
	retryAfter(t, rec)
	pw.Close()
	<-first
	// Manual JSON flights are not uploads and are not capped.
	if rec := e.from("192.0.2.31", "POST", "/v1/flights", e.tokens[pilot], strings.NewReader(`{}`), "Content-Type", "application/json"); rec.Code == 503 {
		t.Fatalf("a JSON flight was capped")
	}
}

type countingReader struct {
	r io.Reader
	n *int
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	*c.n += n
	return n, err
}

// trickle sends a body a few bytes at a time.
type trickle struct {
	left  int
	every time.Duration
}

func (s *trickle) Read(p []byte) (int, error) {
	if s.left == 0 {
		return 0, io.EOF
	}
	time.Sleep(s.every)
	n := min(len(p), 4, s.left)
	for i := range n {
		p[i] = ' '
	}
	s.left -= n
	return n, nil
}

// A body that arrives slower than the minimum rate after the grace time is
// cut with 408, long before it would end.
func TestSlowBodyCut(t *testing.T) {
	e := newEnv(t)
	e.h = api.New(e.db, e.log, api.Limits{RatePerKey: -1, RatePerAddr: -1, AuthFailures: -1,
		MinBodyRate: 1000, BodyGrace: 300 * time.Millisecond}, nil).Handler()
	start := time.Now()
	rec := e.from("192.0.2.40", "POST", "/v1/jobs", e.tokens[tech], &trickle{left: 4000, every: 50 * time.Millisecond},
		"Content-Type", "application/json")
	if rec.Code != http.StatusRequestTimeout || time.Since(start) > 5*time.Second {
		t.Fatalf("slow body: %d after %v: %s", rec.Code, time.Since(start), rec.Body)
	}
	// The same size arriving at once passes the rate check (and is read).
	rec = e.from("192.0.2.40", "POST", "/v1/jobs", e.tokens[tech], strings.NewReader(`{"code":"SB-1","client":"c"}`+strings.Repeat(" ", 4000)),
		"Content-Type", "application/json")
	if rec.Code != 201 {
		t.Fatalf("fast body: %d %s", rec.Code, rec.Body)
	}
}
