package api_test

import (
	"os"
	"regexp"
	"strings"
	"testing"

	dto "github.com/prometheus/client_model/go"
)

// Every rotorwright_ metric the sample alert rules (and their promtool unit
// tests) name is one the service serves, so renaming a metric cannot leave
// the rules watching nothing. A histogram's _bucket, _sum and _count count
// as its own.
func TestAlertRulesNameServedMetrics(t *testing.T) {
	e, srv := opsEnv(t)
	e.quad("MX-01") // a request, so the HTTP families have a series
	srv.Metrics().InitJob("recompute")
	srv.Metrics().JobRun("recompute", "ok", 0) // the last-success gauge exists only after one
	fams := e.scrape()
	served := func(name string) bool {
		if fams[name] != nil {
			return true
		}
		for _, suffix := range []string{"_bucket", "_sum", "_count"} {
			if base, ok := strings.CutSuffix(name, suffix); ok && fams[base] != nil && fams[base].GetType() == dto.MetricType_HISTOGRAM {
				return true
			}
		}
		return false
	}
	names := regexp.MustCompile(`\brotorwright_[a-z0-9_]+`)
	for _, file := range []string{"../deploy/prometheus/alerts.yml", "../deploy/prometheus/alerts_test.yml"} {
		b, err := os.ReadFile(file)
		if err != nil {
			t.Fatal(err)
		}
		found := names.FindAllString(string(b), -1)
		if len(found) == 0 {
			t.Fatalf("%s names no rotorwright_ metric", file)
		}
		for _, n := range found {
			if !served(n) {
				t.Errorf("%s names %s, which /metrics does not serve", file, n)
			}
		}
	}
	b, _ := os.ReadFile("../deploy/prometheus/alerts.yml")
	for _, alert := range []string{"RotorwrightDatabaseLost", "RotorwrightOutboxStuck", "RotorwrightRecomputeFailing"} {
		if !strings.Contains(string(b), "alert: "+alert+"\n") {
			t.Errorf("alerts.yml lacks %s", alert)
		}
	}
}
