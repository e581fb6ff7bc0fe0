package logging

import (
	"bytes"
	"fmt"
	"log/slog"
	"strings"
	"sync"
	"testing"
	"time"
)

// sink is an io.Writer safe for the flushing clock's goroutine, counting
// the writes it is given.
type sink struct {
	mu     sync.Mutex
	b      bytes.Buffer
	writes int
}

func (s *sink) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	s.writes++
	return s.b.Write(p)
}

func (s *sink) read() (string, int) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String(), s.writes
}

// Info lines wait for the batch; a warning is written at once and takes
// the lines before it along, in order; Stop writes the rest.
func TestInfoWaitsWarningGoesAtOnce(t *testing.T) {
	s := &sink{}
	w := NewWriter(s, time.Hour) // no clock flush within the test
	log := New(w, slog.LevelInfo, "text")
	log.Info("request", "path", "/v1/airframes")
	if got, _ := s.read(); got != "" {
		t.Fatalf("an info line was written before its batch: %q", got)
	}
	log.Warn("database lost")
	got, n := s.read()
	if n != 1 || !strings.Contains(got, "msg=request") || !strings.Contains(got, `msg="database lost"`) ||
		strings.Index(got, "msg=request") > strings.Index(got, "database lost") {
		t.Fatalf("after a warning, %d writes of %q; want both lines in order in one write", n, got)
	}
	log.With("job", "nightly").Info("scheduled job done")
	log.WithGroup("g").Error("failed", "err", "x")
	if got, _ := s.read(); !strings.Contains(got, "g.err=x") {
		t.Fatalf("an error from a derived logger was not written at once: %q", got)
	}
	log.Info("last")
	if err := w.Stop(); err != nil {
		t.Fatal(err)
	}
	if got, _ := s.read(); !strings.HasSuffix(got, "msg=last\n") {
		t.Fatalf("Stop left a line unwritten: %q", got)
	}
}

// Lines from many goroutines, some longer than a batch, reach the writer
// whole, each once, in fewer writes than lines; the clock flushes within
// its interval.
func TestLinesStayWholeAndTheClockFlushes(t *testing.T) {
	s := &sink{}
	w := NewWriter(s, 20*time.Millisecond)
	log := New(w, slog.LevelInfo, "json")
	var wg sync.WaitGroup
	const goroutines, each = 8, 500
	for g := range goroutines {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for i := range each {
				pad := ""
				if i%97 == 0 {
					pad = strings.Repeat("x", BatchBytes+10) // longer than a whole batch
				}
				log.Info("line", "id", fmt.Sprintf("%d-%d", g, i), "pad", pad)
			}
		}()
	}
	wg.Wait()
	deadline := time.Now().Add(5 * time.Second)
	for {
		got, _ := s.read()
		if strings.Count(got, "\n") == goroutines*each {
			break
		}
		if time.Now().After(deadline) {
			t.Fatalf("the clock did not flush: %d of %d lines written", strings.Count(got, "\n"), goroutines*each)
		}
		time.Sleep(10 * time.Millisecond)
	}
	got, writes := s.read()
	seen := map[string]bool{}
	for _, line := range strings.Split(strings.TrimSuffix(got, "\n"), "\n") {
		if !strings.HasPrefix(line, `{"time":`) || !strings.HasSuffix(line, "}") {
			t.Fatalf("a line was split or mixed with another: %.120q", line)
		}
		i := strings.Index(line, `"id":"`)
		id := line[i+6 : i+6+strings.Index(line[i+6:], `"`)]
		if seen[id] {
			t.Fatalf("line %s written twice", id)
		}
		seen[id] = true
	}
	if len(seen) != goroutines*each || writes >= goroutines*each/4 {
		t.Fatalf("%d distinct lines in %d writes; want %d lines in far fewer writes", len(seen), writes, goroutines*each)
	}
	if err := w.Stop(); err != nil {
		t.Fatal(err)
	}
}
