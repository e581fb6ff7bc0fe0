package api_test

import (
	"net/http"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
)

// The sign-in form is under the same per-address lockout as bearer tokens:
// unknown tokens pasted into it count as failed authentications, good ones
// do not, and while the address is locked out even a good token is refused
// with 429 and Retry-After (on the form and on the API alike).
func TestSignInFailedAuthLockout(t *testing.T) {
	e := newEnv(t)
	// A long window, so the allowance does not refill while the test runs.
	e.h = api.New(e.db, e.log, api.Limits{RatePerKey: -1, RatePerAddr: -1, AuthFailures: 3, AuthLockout: 10 * time.Minute}, nil).Handler()
	good, bad := e.tokens[fleet.RoleViewer], "rw_not-a-real-token"
	want := func(what string, r *resp, status int) {
		t.Helper()
		if r.Status != status {
			t.Fatalf("%s: %d, want %d", what, r.Status, status)
		}
	}
	want("bad token 1", e.signIn(bad), http.StatusUnauthorized)
	for i := 0; i < 5; i++ { // good sign-ins are not failures: five of them do not lock the address
		r := e.signIn(good)
		want("good token", r, http.StatusSeeOther)
		sessionCookie(t, r)
	}
	want("bad token 2", e.signIn(bad), http.StatusUnauthorized)
	want("bad token 3", e.signIn(bad), http.StatusUnauthorized)
	want("good token within the allowance", e.signIn(good), http.StatusSeeOther)
	want("bad token 4, past the allowance", e.signIn(bad), http.StatusUnauthorized)

	r := e.signIn(good)
	want("good token while locked out", r, http.StatusTooManyRequests)
	if n, err := strconv.Atoi(r.Header.Get("Retry-After")); err != nil || n < 1 || n > 600 {
		t.Fatalf("Retry-After %q, want 1 to 600 s", r.Header.Get("Retry-After"))
	}
	if len(r.Header.Values("Set-Cookie")) != 0 || !strings.Contains(string(r.Body), "Too many failed sign-ins") {
		t.Fatalf("locked-out sign-in: cookies %q, body %s", r.Header.Values("Set-Cookie"), r.Body)
	}
	wantBoardHeaders(t, "locked-out sign-in", r)
	// The same lockout: the API refuses the address's good bearer token too.
	want("API with a good token from the locked address", e.call("GET", "/v1/airframes", fleet.RoleViewer, nil), http.StatusTooManyRequests)
	// Another address is not locked out.
	if rec := e.from("192.0.2.77", "POST", "/sign-in", "", strings.NewReader("token="+good),
		"Content-Type", "application/x-www-form-urlencoded"); rec.Code != http.StatusSeeOther {
		t.Fatalf("sign-in from another address: %d", rec.Code)
	}
	// And the other way round: failed bearer tokens lock the form.
	for i := 0; i < 4; i++ {
		if rec := e.from("192.0.2.78", "GET", "/v1/airframes", bad, nil); rec.Code != http.StatusUnauthorized {
			t.Fatalf("bad bearer %d: %d", i+1, rec.Code)
		}
	}
	if rec := e.from("192.0.2.78", "POST", "/sign-in", "", strings.NewReader("token="+good),
		"Content-Type", "application/x-www-form-urlencoded"); rec.Code != http.StatusTooManyRequests || rec.Header().Get("Retry-After") == "" {
		t.Fatalf("sign-in after failed bearer tokens: %d, Retry-After %q", rec.Code, rec.Header().Get("Retry-After"))
	}
}
