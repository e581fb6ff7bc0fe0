package ingest

import (
	"context"
	"sync/atomic"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
)

// The verdict judged early is used only for the flight it judged: when the
// flight's take-off, airframe or packs turned out otherwise (or it was
// never started), the flight is judged again as it is.
func TestEarlyVerdictOnlyForTheSameTakeoff(t *testing.T) {
	t0 := time.Date(2026, 5, 1, 9, 0, 0, 0, time.UTC)
	flight := func(at time.Time, packs ...string) fleet.Flight {
		f := fleet.Flight{AirframeID: "af", Pilot: "test", TakeoffAt: at, LandingAt: at.Add(20 * time.Minute)}
		for i, p := range packs {
			f.Packs = append(f.Packs, fleet.FlightPack{PartID: p, Slot: i + 1})
		}
		return f
	}
	var calls atomic.Int32
	judge := func(_ context.Context, f *fleet.Flight) (*fleet.Readiness, error) {
		calls.Add(1)
		return &fleet.Readiness{Ready: f.TakeoffAt.Equal(t0)}, nil
	}
	for _, c := range []struct {
		name         string
		early, final *fleet.Flight
		calls        int32
		ready        bool
	}{
		{"same take-off", flightPtr(flight(t0, "p1")), flightPtr(flight(t0, "p1")), 1, true},
		{"take-off moved", flightPtr(flight(t0, "p1")), flightPtr(flight(t0.Add(time.Second), "p1")), 2, false},
		{"other packs", flightPtr(flight(t0, "p1")), flightPtr(flight(t0, "p2")), 2, true},
		{"not started", nil, flightPtr(flight(t0)), 1, true},
	} {
		calls.Store(0)
		e := startVerdict(context.Background(), judge)
		if c.early != nil {
			e.start(*c.early)
		}
		rd, err := e.result(context.Background(), c.final)
		e.cancel()
		if err != nil || rd.Ready != c.ready || calls.Load() != c.calls {
			t.Errorf("%s: ready %v (want %v), %d judgements (want %d), %v", c.name, rd.Ready, c.ready, calls.Load(), c.calls, err)
		}
	}
}

func flightPtr(f fleet.Flight) *fleet.Flight { return &f }
