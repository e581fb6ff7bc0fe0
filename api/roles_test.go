package api_test

import (
	"net/http"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
)

const someID = "0190f7a0-0000-7000-8000-000000000001"

func concrete(path string) string {
	return strings.ReplaceAll(path, ":id", someID)
}

func isWrite(method string) bool { return method != http.MethodGet && method != http.MethodHead }

// Every route and every role: no token is 401 with WWW-Authenticate; a role
// below the route's is 403 (so a viewer gets 403 on every write); a role at or
// above it passes authorisation.
func TestEveryRouteEveryRole(t *testing.T) {
	e := newEnv(t)
	writes := 0
	for _, r := range api.Routes {
		path := concrete(r.Path)
		if r.Board {
			// Board pages need a sign-in session; a bearer token does not
			// open them (the session tests are in board_test.go).
			for _, role := range []fleet.Role{"", fleet.RoleAdmin} {
				if got := e.call(r.Method, path, role, nil); got.Status != http.StatusSeeOther || got.Header.Get("Location") != "/sign-in" {
					t.Errorf("board %s %s as %q without a session: %d to %q, want 303 to /sign-in", r.Method, path, role,
						got.Status, got.Header.Get("Location"))
				}
			}
			continue
		}
		if r.Public {
			if got := e.call(r.Method, path, "", nil); got.Status == 401 || got.Status == 403 {
				t.Errorf("public %s %s answered %d", r.Method, path, got.Status)
			}
			continue
		}
		var body any
		if isWrite(r.Method) {
			body = map[string]any{}
			writes++
		}
		got := e.call(r.Method, path, "", body)
		if got.Status != http.StatusUnauthorized || !strings.HasPrefix(got.Header.Get("WWW-Authenticate"), "Bearer") {
			t.Errorf("%s %s without a token: %d, WWW-Authenticate %q; want 401 Bearer", r.Method, path, got.Status, got.Header.Get("WWW-Authenticate"))
		}
		got.problem(t)
		for _, role := range fleet.Roles {
			got := e.call(r.Method, path, role, body, "If-Match", `"1"`)
			allowed := role.AtLeast(r.Role)
			switch {
			case !allowed && got.Status != http.StatusForbidden:
				t.Errorf("%s %s as %s: %d, want 403", r.Method, path, role, got.Status)
			case allowed && (got.Status == http.StatusForbidden || got.Status == http.StatusUnauthorized):
				t.Errorf("%s %s as %s: %d, want it authorised", r.Method, path, role, got.Status)
			case got.Status >= 500:
				t.Errorf("%s %s as %s: %d %s", r.Method, path, role, got.Status, got.Body)
			}
			if role == fleet.RoleViewer && isWrite(r.Method) && got.Status != http.StatusForbidden {
				t.Errorf("viewer %s %s: %d, want 403", r.Method, path, got.Status)
			}
		}
	}
	if writes < 15 {
		t.Fatalf("only %d write routes walked", writes)
	}
}

func TestRevokedKeyStopsAtOnce(t *testing.T) {
	e := newEnv(t)
	if got := e.call("GET", "/v1/airframes", fleet.RolePilot, nil); got.Status != 200 {
		t.Fatalf("pilot before revocation: %d", got.Status)
	}
	if got := e.call("DELETE", "/v1/keys/"+e.keys[fleet.RolePilot], fleet.RoleAdmin, nil); got.Status != 200 {
		t.Fatalf("revoke: %d %s", got.Status, got.Body)
	}
	got := e.call("GET", "/v1/airframes", fleet.RolePilot, nil)
	if got.Status != http.StatusUnauthorized || got.Header.Get("WWW-Authenticate") == "" {
		t.Fatalf("revoked key: %d, WWW-Authenticate %q; want 401", got.Status, got.Header.Get("WWW-Authenticate"))
	}
	// A made-up token is refused the same way.
	e.tokens["bogus"] = "rw_not-a-real-token"
	if got := e.call("GET", "/v1/airframes", "bogus", nil); got.Status != http.StatusUnauthorized {
		t.Fatalf("bogus token: %d", got.Status)
	}
	// A new key made by the admin works, and its token is not stored in clear.
	var k struct {
		ID    string `json:"id"`
		Token string `json:"token"`
	}
	e.call("POST", "/v1/keys", fleet.RoleAdmin, map[string]any{"name": "field tablet", "role": "pilot"}).decode(t, &k)
	e.tokens["new"] = k.Token
	if got := e.call("GET", "/v1/airframes", "new", nil); got.Status != 200 {
		t.Fatalf("new key: %d", got.Status)
	}
	var n int
	if err := e.db.Pool().QueryRow(t.Context(), `SELECT count(*) FROM api_keys WHERE convert_from(token_sha256, 'SQL_ASCII') LIKE '%' || $1 || '%'`,
		k.Token[3:20]).Scan(&n); err == nil && n > 0 {
		t.Fatal("token stored in clear")
	}
}
