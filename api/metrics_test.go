package api_test

import (
	"strings"
	"testing"

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
