package api_test

import (
	"context"
	"crypto/sha256"
	"encoding/json"
	"testing"

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
	if _, err := e.db.ClaimIdempotencyKey(context.Background(), e.keys[tech], "busy", "/v1/jobs", sum[:]); err != nil {
		t.Fatal(err)
	}
	busy := e.call("POST", "/v1/jobs", tech, body, "Idempotency-Key", "busy")
	if p := busy.problem(t); busy.Status != 409 || p.Field != "Idempotency-Key" {
		t.Fatalf("key in progress: %d %+v", busy.Status, p)
	}
	// A refused request (4xx) is kept too: the retry gets the same refusal.
	bad := map[string]any{"code": "", "client": "x"}
	r1 := e.call("POST", "/v1/jobs", tech, bad, "Idempotency-Key", "bad-1")
	r2 := e.call("POST", "/v1/jobs", tech, bad, "Idempotency-Key", "bad-1")
	if r1.Status != 400 || r2.Status != 400 || r2.Header.Get("Idempotent-Replayed") != "true" {
		t.Fatalf("refused request retried: %d / %d", r1.Status, r2.Status)
	}
}
