package ingest_test

import (
	"context"
	"sync"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// An upload judges its flight's take-off verdict once, beside the analysis,
// with the take-off time the flight is then recorded with (found from the
// log's rotor speeds, as the analysis settles it).
func TestUploadJudgesTakeoffOnceWithRecordedTime(t *testing.T) {
	t.Parallel()
	r := newRig(t)
	var mu sync.Mutex
	var judged []time.Time
	r.in.Judge = func(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error) {
		mu.Lock()
		judged = append(judged, f.TakeoffAt)
		mu.Unlock()
		return ready(), nil
	}
	id, _, err := r.upload(0, false)
	if err != nil {
		t.Fatal(err)
	}
	f, err := r.db.Flight(r.ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	mu.Lock()
	defer mu.Unlock()
	if len(judged) != 1 || !judged[0].Equal(f.TakeoffAt) {
		t.Fatalf("judged at %v, the flight took off at %s", judged, f.TakeoffAt)
	}
	if f.ReadinessAtTakeoff == nil || !f.ReadinessAtTakeoff.Ready {
		t.Fatalf("recorded verdict %+v", f.ReadinessAtTakeoff)
	}
}
