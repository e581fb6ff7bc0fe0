package api_test

import (
	"context"
	"crypto/sha256"
	"crypto/tls"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
)

// signIn posts a token to the sign-in form and returns the response.
func (e *env) signIn(token string, headers ...string) *resp {
	e.t.Helper()
	form := url.Values{"token": {token}}.Encode()
	return e.call("POST", "/sign-in", "", []byte(form), append([]string{"Content-Type", "application/x-www-form-urlencoded"}, headers...)...)
}

func sessionCookie(t *testing.T, r *resp) *http.Cookie {
	t.Helper()
	for _, c := range (&http.Response{Header: r.Header}).Cookies() {
		if c.Name == "rw_session" {
			return c
		}
	}
	t.Fatalf("no rw_session cookie set (status %d, Set-Cookie %q)", r.Status, r.Header.Values("Set-Cookie"))
	return nil
}

// The board's security headers: a policy with no inline script, no framing.
func wantBoardHeaders(t *testing.T, what string, r *resp) {
	t.Helper()
	csp := r.Header.Get("Content-Security-Policy")
	for _, want := range []string{"frame-ancestors 'none'", "script-src 'self'", "default-src 'none'"} {
		if !strings.Contains(csp, want) {
			t.Errorf("%s: Content-Security-Policy %q lacks %q", what, csp, want)
		}
	}
	if strings.Contains(csp, "unsafe-inline") || strings.Contains(csp, "unsafe-eval") {
		t.Errorf("%s: Content-Security-Policy %q allows inline code", what, csp)
	}
	if r.Header.Get("X-Content-Type-Options") != "nosniff" {
		t.Errorf("%s: no X-Content-Type-Options: nosniff", what)
	}
}

// Sign-in with a pasted token opens a server-side session held in an
// HttpOnly, SameSite=Strict, expiring cookie; pages need it; sign-out and
// revoking the key end it.
func TestBoardSignInSessions(t *testing.T) {
	e := newEnv(t)
	page := e.call("GET", "/sign-in", "", nil)
	if page.Status != 200 || !strings.Contains(string(page.Body), `name="token"`) {
		t.Fatalf("sign-in page: %d", page.Status)
	}
	wantBoardHeaders(t, "sign-in page", page)

	if r := e.call("GET", "/", "", nil); r.Status != http.StatusSeeOther || r.Header.Get("Location") != "/sign-in" {
		t.Fatalf("fleet page without a session: %d to %q", r.Status, r.Header.Get("Location"))
	}
	if r := e.signIn("rw_not-a-token"); r.Status != http.StatusUnauthorized || len(r.Header.Values("Set-Cookie")) != 0 {
		t.Fatalf("bad token: %d, cookies %q", r.Status, r.Header.Values("Set-Cookie"))
	}
	if r := e.signIn(e.tokens[fleet.RoleViewer], "Origin", "http://elsewhere.example"); r.Status != http.StatusForbidden {
		t.Fatalf("sign-in posted from another site: %d, want 403", r.Status)
	}

	r := e.signIn(e.tokens[fleet.RoleViewer], "Origin", "http://example.com")
	if r.Status != http.StatusSeeOther || r.Header.Get("Location") != "/" {
		t.Fatalf("sign-in: %d to %q, want 303 to /", r.Status, r.Header.Get("Location"))
	}
	ck := sessionCookie(t, r)
	if !ck.HttpOnly || ck.SameSite != http.SameSiteStrictMode || ck.MaxAge <= 0 || ck.Path != "/" || ck.Secure {
		t.Errorf("session cookie %+v: want HttpOnly, SameSite=Strict, expiring, Path=/, not Secure over plain HTTP", ck)
	}
	if strings.Contains(ck.Value, e.tokens[fleet.RoleViewer]) || strings.Contains(r.Header.Get("Location"), "rw_") {
		t.Error("the API token leaks into the cookie or the redirect")
	}
	// Only the session token's hash is stored.
	var stored int
	sum := sha256.Sum256([]byte(ck.Value))
	if err := e.db.Pool().QueryRow(context.Background(), `SELECT count(*) FROM board_sessions WHERE token_sha256 = $1`, sum[:]).Scan(&stored); err != nil || stored != 1 {
		t.Fatalf("stored sessions by hash: %d, %v", stored, err)
	}
	cookie := "rw_session=" + ck.Value
	for _, p := range []string{"/", "/plan", "/plan.csv", "/queue", "/check"} {
		got := e.call("GET", p, "", nil, "Cookie", cookie)
		if got.Status != 200 {
			t.Errorf("GET %s signed in: %d %s", p, got.Status, got.Body)
		}
		if strings.HasSuffix(p, ".csv") {
			continue
		}
		wantBoardHeaders(t, p, got)
		for _, caution := range []string{"Decision support only", "Lithium packs can burn"} {
			if !strings.Contains(string(got.Body), caution) {
				t.Errorf("%s lacks the caution %q", p, caution)
			}
		}
	}
	if got := e.call("GET", "/airframes/NO-SUCH", "", nil, "Cookie", cookie); got.Status != 404 {
		t.Errorf("unknown airframe page: %d, want 404", got.Status)
	}

	// Sign-out ends the session: the same cookie no longer opens a page.
	if got := e.call("POST", "/sign-out", "", nil, "Cookie", cookie); got.Status != http.StatusSeeOther || got.Header.Get("Location") != "/sign-in" {
		t.Fatalf("sign-out: %d to %q", got.Status, got.Header.Get("Location"))
	}
	if got := e.call("GET", "/", "", nil, "Cookie", cookie); got.Status != http.StatusSeeOther {
		t.Fatalf("page after sign-out: %d, want 303", got.Status)
	}

	// Revoking the key ends its sessions.
	ck = sessionCookie(t, e.signIn(e.tokens[fleet.RolePilot]))
	cookie = "rw_session=" + ck.Value
	if got := e.call("GET", "/queue", "", nil, "Cookie", cookie); got.Status != 200 {
		t.Fatalf("pilot's page: %d", got.Status)
	}
	if got := e.call("DELETE", "/v1/keys/"+e.keys[fleet.RolePilot], fleet.RoleAdmin, nil); got.Status != 200 {
		t.Fatalf("revoke: %d", got.Status)
	}
	if got := e.call("GET", "/queue", "", nil, "Cookie", cookie); got.Status != http.StatusSeeOther {
		t.Fatalf("page after the key was revoked: %d, want 303", got.Status)
	}
}

// Over TLS the session cookie is Secure.
func TestBoardSessionCookieSecureOverTLS(t *testing.T) {
	e := newEnv(t)
	req := httptest.NewRequest("POST", "https://board.example/sign-in", strings.NewReader("token="+url.QueryEscape(e.tokens[fleet.RoleViewer])))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.TLS = &tls.ConnectionState{}
	rec := httptest.NewRecorder()
	e.h.ServeHTTP(rec, req)
	ck := sessionCookie(t, &resp{Status: rec.Code, Header: rec.Header()})
	if !ck.Secure {
		t.Fatalf("cookie over TLS is not Secure: %+v", ck)
	}
}
