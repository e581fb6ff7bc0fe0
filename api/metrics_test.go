package api_test

import (
	"net/http/httptest"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/api"
	"github.com/rotorwright/rotorwright/fleet"
)

// Requests are counted by route template, never by id (low cardinality).
func TestMetricsCountByRouteTemplate(t *testing.T) {
	e := newEnv(t)
	a := e.quad("MX-01")
	e.call("GET", "/v1/airframes/"+a.ID, fleet.RoleViewer, nil)
	e.call("GET", "/v1/airframes/"+someID, fleet.RoleViewer, nil)
	r := e.call("GET", "/metrics", "", nil)
	body := string(r.Body)
	if r.Status != 200 || !strings.Contains(body, `rotorwright_http_requests_total{code="200",method="GET",route="/v1/airframes/:id"} 1`) ||
		!strings.Contains(body, `rotorwright_http_requests_total{code="404",method="GET",route="/v1/airframes/:id"} 1`) {
		t.Fatalf("metrics:\n%s", body)
	}
	if strings.Contains(body, a.ID) {
		t.Fatal("an id appears in the metrics")
	}
	if !strings.Contains(body, "rotorwright_http_request_duration_seconds_bucket") {
		t.Fatal("no duration histogram")
	}
}

// An unknown method is counted under one fixed label, never a new series
// per method (before the fix each made-up method added a series forever).
func TestMetricsLabelsAreBounded(t *testing.T) {
	e := newEnv(t)
	for _, m := range []string{"FOO", "BAR", "PROPFIND"} {
		e.call(m, "/v1/airframes", fleet.RoleViewer, nil)
	}
	body := string(e.call("GET", "/metrics", "", nil).Body)
	for _, m := range []string{"FOO", "BAR", "PROPFIND"} {
		if strings.Contains(body, `method="`+m+`"`) {
			t.Fatalf("method %s got its own series", m)
		}
	}
	if !strings.Contains(body, `rotorwright_http_requests_total{code="405",method="other",route="unmatched"} 3`) &&
		!strings.Contains(body, `method="other"`) {
		t.Fatalf("unknown methods not counted as other:\n%s", body)
	}
}

// /metrics can require a token, or move to an address of its own.
func TestMetricsAccess(t *testing.T) {
	e := newEnv(t)
	l := api.DefaultLimits
	l.MetricsToken = "m3trics-s3cret"
	srv := api.New(e.db, e.log, l, nil)
	e.h = srv.Handler()
	if r := e.call("GET", "/metrics", "", nil); r.Status != 401 {
		t.Fatalf("without the token: %d", r.Status)
	}
	e.tokens["metrics"] = "m3trics-s3cret"
	if r := e.call("GET", "/metrics", "metrics", nil); r.Status != 200 {
		t.Fatalf("with the token: %d", r.Status)
	}
	l.MetricsToken, l.MetricsElsewhere = "", true
	srv = api.New(e.db, e.log, l, nil)
	e.h = srv.Handler()
	if r := e.call("GET", "/metrics", "", nil); r.Status != 404 {
		t.Fatalf("metrics elsewhere, on the API address: %d", r.Status)
	}
	rec := httptest.NewRecorder()
	srv.MetricsHandler().ServeHTTP(rec, httptest.NewRequest("GET", "/metrics", nil))
	if rec.Code != 200 || !strings.Contains(rec.Body.String(), "rotorwright_http_requests_total") {
		t.Fatalf("the metrics handler: %d", rec.Code)
	}
}
