package ingest

import (
	"context"
	"slices"

	"github.com/rotorwright/rotorwright/fleet"
)

// earlyVerdict is a new flight's verdict as of take-off, judged on another
// goroutine from the moment its take-off time is known (the analysis finds
// it first), so that the judging, which mostly waits on the database,
// overlaps the rest of the analysis rather than following it.
type earlyVerdict struct {
	judge   func(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error)
	ctx     context.Context
	cancel  context.CancelFunc
	started bool
	done    chan struct{}
	f       fleet.Flight // as judged
	rd      *fleet.Readiness
	err     error
}

// startVerdict prepares an early verdict; cancel ends its judging if the
// ingest ends first.
func startVerdict(ctx context.Context, judge func(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error)) *earlyVerdict {
	c, cancel := context.WithCancel(ctx)
	return &earlyVerdict{judge: judge, ctx: c, cancel: cancel, done: make(chan struct{})}
}

// start judges the flight, its times set, on another goroutine (once; nil
// e does nothing). A flight that does not validate is not judged early: the
// ingest refuses it as before.
func (e *earlyVerdict) start(f fleet.Flight) {
	if e == nil || e.started || f.Validate() != nil {
		return
	}
	e.started, e.f = true, f
	go func() {
		defer close(e.done)
		e.rd, e.err = e.judge(e.ctx, &e.f)
	}()
}

// result is the flight's verdict: the one judged early when it judged the
// same airframe, packs and take-off (all a verdict reads of the flight),
// else one judged now.
func (e *earlyVerdict) result(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error) {
	if e.started {
		select {
		case <-e.done:
		case <-ctx.Done():
			return nil, ctx.Err()
		}
		if sameTakeoff(&e.f, f) {
			return e.rd, e.err
		}
	}
	return e.judge(ctx, f)
}

func sameTakeoff(a, b *fleet.Flight) bool {
	return a.AirframeID == b.AirframeID && a.TakeoffAt.Equal(b.TakeoffAt) &&
		slices.EqualFunc(a.Packs, b.Packs, func(x, y fleet.FlightPack) bool { return x.PartID == y.PartID })
}
