package schedule

import (
	"context"
	"fmt"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// Verdicts at take-off. Every flight keeps the readiness verdict as of its
// take-off, judged with the records known when it is recorded. A record
// entered later that reaches back before a flight (a back-filled earlier
// flight, a back-dated fit, removal, work record, event or pack check) can
// change what the records say about that take-off; those flights are
// re-judged at once, so a verdict always reflects every record known. The
// verdict it replaces stays in the audit log (entity flight_readiness), so
// what was known when is never lost. The rules are today's programme: a
// change of the programme does not re-judge past flights.

// JudgeTakeoff is the verdict of a flight about to be recorded, as of its
// take-off.
func (p *Programme) JudgeTakeoff(ctx context.Context, f *fleet.Flight) (*fleet.Readiness, error) {
	packs := make([]string, len(f.Packs))
	for i, pk := range f.Packs {
		packs[i] = pk.PartID
	}
	rd, err := p.ReadinessAt(ctx, f.AirframeID, packs, f.TakeoffAt)
	if fleet.ErrorCode(err) == fleet.ENOTFOUND {
		return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "airframe_id", Message: "unknown airframe"}
	} else if err != nil {
		return nil, err
	}
	return fleet.TakeoffVerdict(rd), nil
}

// AfterFlight brings what rests on the flights up to date after a new
// flight: it re-judges the flights it reaches back before (a back-filled
// flight changes what its airframe and packs went through before later
// take-offs) and recomputes the due list of its airframe and packs and of
// every airframe whose verdicts changed. The re-judging reads records, not
// stored health views, so it may run beside the flight's health refresh
// (fresh; nil: already refreshed); the recompute takes the views once the
// refresh has ended (RecomputeAirframeBeside).
func (p *Programme) AfterFlight(ctx context.Context, f *fleet.Flight, fresh *health.Refreshing) error {
	packs := make([]string, len(f.Packs))
	for i, pk := range f.Packs {
		packs[i] = pk.PartID
	}
	r, err := p.RejudgeFrom(ctx, f.AirframeID, packs, f.TakeoffAt)
	if _, e := p.RecomputeAirframeBeside(ctx, f.AirframeID, packs, fresh); err == nil {
		err = e
	}
	if e := p.catchUp(ctx, f, packs, fresh); err == nil {
		err = e
	}
	return p.recomputeChanged(ctx, f.AirframeID, r.Airframes, err)
}

// maxCatchUps bounds catchUp's rounds: each needs yet another flight of the
// same airframe or packs recorded during the one before.
const maxCatchUps = 3

// catchUp refreshes the flight's views and recomputes its airframe's due
// list again when a flight of the same airframe or packs was recorded after
// the refresh began (two uploads at once: each one's work may miss the
// other's flight, and the list written last would stand until the
// scheduled recompute). Whichever work writes last sees the grown mark
// here, since the other flight was recorded before this check (else that
// flight's own work, begun after it was recorded, would write later), and
// reads everything again.
func (p *Programme) catchUp(ctx context.Context, f *fleet.Flight, packs []string, fresh *health.Refreshing) error {
	if fresh == nil || p.Health == nil {
		return nil
	}
	seen, ok := fresh.Mark()
	if !ok {
		return nil // nothing to compare; the scheduled recompute repairs
	}
	<-fresh.Done() // the views are written (a list with no rule on them does not wait)
	for range maxCatchUps {
		now, err := p.DB.FlightMark(ctx, f.ID)
		if err != nil || now == seen {
			return err
		}
		seen = now
		if err := p.Health.Refresh(ctx, f.ID); err != nil {
			return err
		}
		if _, err := p.RecomputeAirframe(ctx, f.AirframeID, packs); err != nil {
			return err
		}
	}
	return nil
}

// AfterRecord brings what rests on the flights up to date after a record
// that takes effect at the moment from on the airframe and the parts (a
// fit, removal, work record, event or pack check, possibly back-dated): it
// re-judges the flights taking off from then on the airframe, or carrying
// or fitted with the parts, and recomputes the due list of the airframe (if
// any) and of every airframe whose verdicts changed.
func (p *Programme) AfterRecord(ctx context.Context, airframeID string, parts []string, from time.Time) error {
	var changed []string
	var err error
	if !from.After(p.Now()) { // else nothing has taken off since
		if airframeID != "" {
			var r Rejudged
			r, err = p.RejudgeFrom(ctx, airframeID, nil, from)
			changed = r.Airframes
		}
		for _, id := range parts {
			r, e := p.RejudgePart(ctx, id, from)
			changed = append(changed, r.Airframes...)
			if err == nil {
				err = e
			}
		}
	}
	if airframeID != "" {
		if _, e := p.RecomputeAirframe(ctx, airframeID, nil); err == nil {
			err = e
		}
	}
	return p.recomputeChanged(ctx, airframeID, changed, err)
}

// recomputeChanged recomputes the due lists of the airframes other than
// done, keeping the first error.
func (p *Programme) recomputeChanged(ctx context.Context, done string, airframes []string, err error) error {
	seen := map[string]bool{done: true}
	for _, id := range airframes {
		if seen[id] {
			continue
		}
		seen[id] = true
		if _, e := p.RecomputeAirframe(ctx, id, nil); err == nil {
			err = e
		}
	}
	return err
}

// Rejudged says what a re-judgement did.
type Rejudged struct {
	Flights   int      // flights judged
	Changed   int      // verdicts that changed
	Airframes []string // airframes with a changed verdict (their due lists need recomputing)
}

// RejudgeFrom re-judges the flights taking off at or after from on the
// airframe or carrying any of the packs.
func (p *Programme) RejudgeFrom(ctx context.Context, airframeID string, packs []string, from time.Time) (Rejudged, error) {
	fl, err := p.DB.FlightsFrom(ctx, airframeID, packs, from)
	if err != nil {
		return Rejudged{}, err
	}
	return p.judge(ctx, fl)
}

// RejudgePart re-judges the flights taking off at or after from on which
// the part was fitted or flew as a pack.
func (p *Programme) RejudgePart(ctx context.Context, partID string, from time.Time) (Rejudged, error) {
	fl, err := p.DB.PartFlightsFrom(ctx, partID, from)
	if err != nil {
		return Rejudged{}, err
	}
	return p.judge(ctx, fl)
}

// JudgeUnjudged judges every flight without a verdict (recorded before
// verdicts existed, loaded in bulk, or whose judgement failed), a page at a
// time; progress, when set, hears the count done.
func (p *Programme) JudgeUnjudged(ctx context.Context, progress func(done int)) (Rejudged, error) {
	var total Rejudged
	for {
		fl, err := p.DB.UnjudgedFlights(ctx, 2000)
		if err != nil || len(fl) == 0 {
			return total, err
		}
		r, err := p.judge(ctx, fl)
		total.Flights += r.Flights
		total.Changed += r.Changed
		total.Airframes = appendNew(total.Airframes, r.Airframes...)
		if err != nil {
			return total, err
		}
		if r.Changed == 0 {
			return total, fmt.Errorf("%d flights could not be given a verdict", len(fl))
		}
		if progress != nil {
			progress(total.Flights)
		}
	}
}

// judge computes and stores the verdicts of the flights, one timeline read
// per airframe.
func (p *Programme) judge(ctx context.Context, flights []store.FlightToJudge) (Rejudged, error) {
	var r Rejudged
	byAirframe := map[string][]store.FlightToJudge{}
	var order []string
	for _, f := range flights {
		if _, ok := byAirframe[f.AirframeID]; !ok {
			order = append(order, f.AirframeID)
		}
		byAirframe[f.AirframeID] = append(byAirframe[f.AirframeID], f)
	}
	checked := p.Now().UTC()
	for _, id := range order {
		list := byAirframe[id]
		first, last := list[0].TakeoffAt, list[0].TakeoffAt
		for _, f := range list {
			if f.TakeoffAt.Before(first) {
				first = f.TakeoffAt
			}
			if f.TakeoffAt.After(last) {
				last = f.TakeoffAt
			}
		}
		tl, err := p.timeline(ctx, id, first.UTC(), last.UTC())
		if err != nil {
			return r, err
		}
		for _, f := range list {
			at := f.TakeoffAt.UTC()
			facts, err := tl.factsAt(ctx, at, f.Packs)
			if err != nil {
				return r, err
			}
			changed, err := p.DB.SetTakeoffVerdict(ctx, f.ID, fleet.TakeoffVerdict(assess(facts, at, checked)))
			if err != nil {
				return r, err
			}
			r.Flights++
			if changed {
				r.Changed++
				r.Airframes = appendNew(r.Airframes, id)
			}
		}
	}
	return r, nil
}

func appendNew(list []string, ids ...string) []string {
next:
	for _, id := range ids {
		for _, x := range list {
			if x == id {
				continue next
			}
		}
		list = append(list, id)
	}
	return list
}
