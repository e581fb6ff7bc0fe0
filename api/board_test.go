package api_test

import (
	"strings"
	"testing"
)

// The board page carries the safety cautions and holds no data itself.
func TestBoardPage(t *testing.T) {
	e := newEnv(t)
	r := e.call("GET", "/", "", nil)
	body := string(r.Body)
	if r.Status != 200 || !strings.HasPrefix(r.Header.Get("Content-Type"), "text/html") {
		t.Fatalf("board: %d %s", r.Status, r.Header.Get("Content-Type"))
	}
	for _, want := range []string{"Decision support only", "Lithium packs can burn", "/v1/airframes/", "readiness"} {
		if !strings.Contains(body, want) {
			t.Errorf("board lacks %q", want)
		}
	}
	if r.Header.Get("Content-Security-Policy") == "" {
		t.Error("no Content-Security-Policy on the board")
	}
}
