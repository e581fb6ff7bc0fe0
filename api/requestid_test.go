package api_test

import (
	"net/http"
	"regexp"
	"sync"
	"testing"
)

// Every request gets an id of its own, even when many arrive at once: the
// process's random prefix, a dash and a count (see requestIDs).
func TestRequestIDsDistinct(t *testing.T) {
	e := newEnv(t)
	const n = 400
	ids := make([]string, n)
	var wg sync.WaitGroup
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			ids[i] = e.call("GET", "/healthz", "", nil).Header.Get("X-Request-ID")
		}()
	}
	wg.Wait()
	form := regexp.MustCompile(`^([0-9a-f]{16})-[0-9a-f]+$`)
	seen := map[string]bool{}
	var prefix string
	for _, id := range ids {
		m := form.FindStringSubmatch(id)
		if m == nil {
			t.Fatalf("request id %q", id)
		}
		if prefix == "" {
			prefix = m[1]
		} else if m[1] != prefix {
			t.Fatalf("prefixes %s and %s in one process", prefix, m[1])
		}
		if seen[id] {
			t.Fatalf("request id %s given twice", id)
		}
		seen[id] = true
	}
	if r := e.call("GET", "/v1/airframes", "", nil); r.Status != http.StatusUnauthorized || r.Header.Get("X-Request-ID") == "" {
		t.Fatalf("refused request: %d, id %q", r.Status, r.Header.Get("X-Request-ID"))
	}
}
