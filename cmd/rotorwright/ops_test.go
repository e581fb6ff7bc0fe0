package main

import (
	"bytes"
	"encoding/json"
	"io"
	"net/http"
	"strings"
	"sync"
	"testing"

	"github.com/rotorwright/rotorwright/internal/pgtest"
)

// lockedBuffer is a log sink safe for the app's goroutines.
type lockedBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (l *lockedBuffer) Write(p []byte) (int, error) {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.Write(p)
}

func (l *lockedBuffer) String() string {
	l.mu.Lock()
	defer l.mu.Unlock()
	return l.b.String()
}

// With --log-format json every line the serving app logs is a JSON object,
// requests among them with their request id; the scheduled jobs and the
// webhook count are wired to /metrics.
func TestServeJSONLogsAndJobMetrics(t *testing.T) {
	logs := &lockedBuffer{}
	_, addr, stop := runApp(t, Config{DatabaseURL: pgtest.NewDB(t), LogFormat: "json"}, logs)
	resp, err := http.Get("http://" + addr + "/healthz")
	if err != nil {
		t.Fatal(err)
	}
	resp.Body.Close()
	id := resp.Header.Get("X-Request-ID")
	resp, err = http.Get("http://" + addr + "/metrics")
	if err != nil {
		t.Fatal(err)
	}
	metrics, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	stop()
	for _, want := range []string{`rotorwright_job_runs_total{job="recompute",status="failed"} 0`,
		`rotorwright_job_runs_total{job="nightly",status="ok"} 0`, "rotorwright_webhook_urls 0", "rotorwright_database_up 1"} {
		if !strings.Contains(string(metrics), want) {
			t.Errorf("/metrics of the serving app lacks %s", want)
		}
	}
	found := false
	for _, line := range strings.Split(strings.TrimSpace(logs.String()), "\n") {
		var m map[string]any
		if err := json.Unmarshal([]byte(line), &m); err != nil {
			t.Fatalf("not JSON: %q", line)
		}
		if m["msg"] == "request" && m["route"] == "/healthz" {
			found = m["request_id"] == id && id != "" && m["status"] == float64(200)
		}
	}
	if !found {
		t.Fatalf("no access line for /healthz with request id %q:\n%s", id, logs.String())
	}
}

// A bad ROTORWRIGHT_LOG_FORMAT is a usage error naming the variable.
func TestBadLogFormatEnvironment(t *testing.T) {
	t.Setenv("ROTORWRIGHT_LOG_FORMAT", "xml")
	_, errOut, code := runCLI(t, "due", "--home", t.TempDir())
	if code != exitUsage || !strings.Contains(errOut, "ROTORWRIGHT_LOG_FORMAT") {
		t.Errorf("exit %d, stderr %q; want 2 naming ROTORWRIGHT_LOG_FORMAT", code, errOut)
	}
}
