package api_test

import (
	"context"
	"net/http"
	"net/http/httptest"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
)

// instance is a second (third...) service instance on the env's database,
// with its own key cache and listener.
func (e *env) instance() *api.Server {
	s := api.New(e.db, e.log, unlimited(api.DefaultLimits), nil)
	e.t.Cleanup(s.Close)
	return s
}

// callOn sends a request to one instance, validated against the document.
func (e *env) callOn(s *api.Server, method, path, token string) *resp {
	e.t.Helper()
	req := httptest.NewRequest(method, path, nil)
	req.Header.Set("Authorization", "Bearer "+token)
	rec := httptest.NewRecorder()
	s.Handler().ServeHTTP(rec, req)
	r := &resp{Status: rec.Code, Header: rec.Header(), Body: rec.Body.Bytes()}
	validate(e.t, req, r)
	return r
}

// cached reads with token on the instances until each holds it in its key
// cache (the listeners start with the first authentication).
func (e *env) cached(token string, servers ...*api.Server) {
	e.t.Helper()
	deadline := time.Now().Add(10 * time.Second)
	for _, s := range servers {
		for !api.KeyCached(s, token) {
			if time.Now().After(deadline) {
				e.t.Fatal("the key never reached the instance's cache")
			}
			if r := e.callOn(s, "GET", "/v1/airframes", token); r.Status != http.StatusOK {
				e.t.Fatalf("read with a live key: %d %s", r.Status, r.Body)
			}
			time.Sleep(5 * time.Millisecond)
		}
	}
}

// A key revoked through one instance is refused by every instance on the
// very next request, though each had it cached: the revocation's
// announcement empties the caches.
func TestRevokedKeyRefusedAtOnceAcrossInstances(t *testing.T) {
	e := newEnv(t)
	a, b := e.instance(), e.instance()
	k, token, err := e.db.CreateKey(context.Background(), "field tablet", fleet.RoleViewer)
	if err != nil {
		t.Fatal(err)
	}
	e.cached(token, a, b)
	e.cached(e.tokens[fleet.RoleAdmin], a)
	if r := e.callOn(a, "DELETE", "/v1/keys/"+k.ID, e.tokens[fleet.RoleAdmin]); r.Status != http.StatusOK {
		t.Fatalf("revoke: %d %s", r.Status, r.Body)
	}
	for name, s := range map[string]*api.Server{"other instance": b, "revoking instance": a} {
		if r := e.callOn(s, "GET", "/v1/airframes", token); r.Status != http.StatusUnauthorized {
			t.Fatalf("%s: a revoked key read with status %d", name, r.Status)
		}
	}
}

// The cache really answers (else the test above proves nothing): with the
// announcing trigger disabled, a key revoked behind the service's back is
// still honoured from the cache. And when the listener's connection is
// lost, the cache is emptied, since announcements may then be missed.
func TestKeyCacheAnswersAndEmptiesWhenItCannotHear(t *testing.T) {
	e := newEnv(t)
	s := e.instance()
	ctx := context.Background()
	owner := pgtest.OwnerConn(t, e.db.Pool().Config().ConnString())
	k, token, err := e.db.CreateKey(ctx, "spare laptop", fleet.RoleViewer)
	if err != nil {
		t.Fatal(err)
	}
	e.cached(token, s)
	if _, err := owner.Exec(ctx, `ALTER TABLE api_keys DISABLE TRIGGER api_keys_notify`); err != nil {
		t.Fatal(err)
	}
	if _, err := owner.Exec(ctx, `UPDATE api_keys SET revoked_at = now() WHERE id = $1`, k.ID); err != nil {
		t.Fatal(err)
	}
	if r := e.callOn(s, "GET", "/v1/airframes", token); r.Status != http.StatusOK {
		t.Fatalf("unannounced revocation: status %d, want the cached key's 200 (is the cache in use?)", r.Status)
	}
	// Cut the listener's connection: the cache must let go at once.
	if _, err := owner.Exec(ctx, `SELECT pg_terminate_backend(pid) FROM pg_stat_activity
		WHERE datname = current_database() AND query = 'LISTEN `+"rotorwright_api_keys"+`'`); err != nil {
		t.Fatal(err)
	}
	deadline := time.Now().Add(5 * time.Second)
	for api.KeyCached(s, token) {
		if time.Now().After(deadline) {
			t.Fatal("the cache still holds the key after its listener's connection was lost")
		}
		time.Sleep(time.Millisecond)
	}
	if r := e.callOn(s, "GET", "/v1/airframes", token); r.Status != http.StatusUnauthorized {
		t.Fatalf("after the listener was lost: status %d, want 401 from the database", r.Status)
	}
}
