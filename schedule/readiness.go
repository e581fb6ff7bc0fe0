package schedule

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
	"github.com/rotorwright/rotorwright/wear"
)

// readinessFacts is everything a readiness answer weighs, as it stood at
// one moment.
type readinessFacts struct {
	airframe *fleet.Airframe
	layout   *fleet.Layout
	retired  bool
	hold     *string
	rotors   []store.FittedRotor
	empty    []store.EmptyPlace
	events   []*fleet.Event   // open crash and hard-landing events
	due      []*fleet.DueItem // of the airframe and the parts fitted
	packIDs  []string
	packs    map[string]*packFacts // nil entry: not in the register
}

// packFacts is what readiness weighs about one pack.
type packFacts struct {
	part    *fleet.Part
	status  string
	reasons []wear.Reason // from its health view
	swollen bool          // an open swelling report
	due     []*fleet.DueItem
}

// Readiness answers whether the airframe may fly now with the given packs:
// blockers stop it, warnings are for the pilot and technician to weigh. It
// reads the due list, which is recomputed after every ingest, fit change and
// work record and by the scheduler. Decision support only.
//
// Everything it reads comes in one pipelined round trip (store.ReadinessNow);
// only active notices need more (their compliance facts).
func (p *Programme) Readiness(ctx context.Context, airframeID string, packIDs []string) (*fleet.Readiness, error) {
	now := p.Now().UTC()
	rn, err := p.DB.ReadinessNow(ctx, airframeID, now, packIDs)
	if err != nil {
		return nil, err
	}
	f, err := factsFromNow(rn, packIDs)
	if err != nil {
		return nil, err
	}
	rd := assess(f, now, now)
	block, warn := notes(rd)
	if err := p.recordItemsFrom(ctx, rn.Notices, rn.Discrepancies, f.airframe, now, block, warn); err != nil {
		return nil, err
	}
	rd.Ready = len(rd.Blockers) == 0
	return rd, nil
}

// ReadinessAt answers whether the airframe was ready at the moment at with
// the given packs, judged with every record known now: the parts fitted
// then, the holds in force then, the events open then, and each rule's due
// status recomputed from the use, work and events up to that moment (not
// today's due list). The rules are today's programme.
func (p *Programme) ReadinessAt(ctx context.Context, airframeID string, packIDs []string, at time.Time) (*fleet.Readiness, error) {
	at = at.UTC()
	tl, err := p.timeline(ctx, airframeID, at, at)
	if err != nil {
		return nil, err
	}
	f, err := tl.factsAt(ctx, at, packIDs)
	if err != nil {
		return nil, err
	}
	return p.withRecords(ctx, assess(f, at, p.Now().UTC()), f.airframe, at)
}

// assess turns the facts into blockers and warnings.
func assess(f *readinessFacts, at, checked time.Time) *fleet.Readiness {
	a := f.airframe
	rd := &fleet.Readiness{AirframeID: a.ID, At: at, Blockers: []fleet.ReadinessItem{}, Warnings: []fleet.ReadinessItem{},
		CheckedAt: checked}
	block := func(code, subject, format string, args ...any) {
		rd.Blockers = append(rd.Blockers, fleet.ReadinessItem{Code: code, Subject: subject, Message: fmt.Sprintf(format, args...)})
	}
	warn := func(code, subject, format string, args ...any) {
		rd.Warnings = append(rd.Warnings, fleet.ReadinessItem{Code: code, Subject: subject, Message: fmt.Sprintf(format, args...)})
	}
	if f.retired {
		block(fleet.ReadyAirframeRetired, a.Code, "airframe %s is retired", a.Code)
	}
	if f.hold != nil {
		block(fleet.ReadyAirframeHeld, a.Code, "airframe %s is held: %s", a.Code, *f.hold)
	}
	for _, d := range f.due {
		if d.NoticeID != nil {
			continue // notices are judged as of the moment by withRecords
		}
		switch {
		case d.Status == fleet.DueOverdue && d.Grounding:
			block(fleet.ReadyOverdueGrounding, d.Subject, "%s is overdue on %s (%s)", d.RuleName, d.Subject, d.Reason)
		case d.Status == fleet.DueOverdue:
			warn(fleet.ReadyOverdue, d.Subject, "%s is overdue on %s (%s)", d.RuleName, d.Subject, d.Reason)
		case d.Status == fleet.DueSoon:
			warn(fleet.ReadyDueSoon, d.Subject, "%s is due soon on %s (%s)", d.RuleName, d.Subject, d.Reason)
		}
	}
	for _, e := range f.events {
		block(fleet.ReadyUnresolvedEvent, a.Code, "unresolved %s of %s: %s", e.Kind, e.At.UTC().Format("2006-01-02 15:04Z"), e.Detail)
	}
	for _, e := range f.empty {
		block(fleet.ReadyEmptyPosition, a.Code+"/"+e.Position, "no %s fitted at %s", e.Kind, e.Position)
	}
	motors := 0
	for _, r := range f.rotors {
		if r.Kind == fleet.KindMotor {
			motors++
		}
		pos, ok := f.layout.Position(r.Position)
		switch {
		case !ok:
			block(fleet.ReadyRotationMismatch, r.Serial, "%s %s sits at %s, which layout %s does not have", r.Kind, r.Serial, r.Position, f.layout.Name)
		case r.Rotation != pos.Rotation:
			block(fleet.ReadyRotationMismatch, r.Serial, "%s %s spins %s but %s turns %s", r.Kind, r.Serial, r.Rotation, r.Position, pos.Rotation)
		}
	}
	if motors == 0 && len(f.layout.Positions) > 0 {
		warn(fleet.ReadyNoMotors, a.Code, "the register has no motor fitted on %s at %s: flights then count on no motor "+
			"(is the fit history complete?)", a.Code, at.Format(time.RFC3339))
	}
	assessPacks(f, block, warn)
	rd.Ready = len(rd.Blockers) == 0
	return rd
}

type note func(code, subject, format string, args ...any)

func assessPacks(f *readinessFacts, block, warn note) {
	a := f.airframe
	if len(f.packIDs) > 0 && len(f.packIDs) != a.PacksPerFlight {
		warn(fleet.ReadyPackCount, a.Code, "%d packs given; %s flies on %d", len(f.packIDs), a.Code, a.PacksPerFlight)
	}
	for _, id := range f.packIDs {
		pf := f.packs[id]
		if pf == nil {
			block(fleet.ReadyPackUnknown, id, "no pack %s in the register", id)
			continue
		}
		pk := pf.part
		specs, err := fleet.PackSpecsOf(pk)
		if err != nil {
			block(fleet.ReadyPackUnknown, pk.Serial, "%s is a %s, not a pack", pk.Serial, pk.Kind)
			continue
		}
		switch pf.status {
		case fleet.PartRetired:
			block(fleet.ReadyPackRetired, pk.Serial, "pack %s is retired", pk.Serial)
		case fleet.PartQuarantine:
			block(fleet.ReadyPackQuarantined, pk.Serial, "pack %s is in quarantine", pk.Serial)
		}
		if specs.CellsS != a.CellsS {
			block(fleet.ReadyPackWrongCells, pk.Serial, "pack %s is %dS; %s flies on %dS", pk.Serial, specs.CellsS, a.Code, a.CellsS)
		}
		for _, r := range pf.reasons {
			if r.Level == "retire" {
				block(fleet.ReadyPackFlagged, pk.Serial, "pack %s: %s", pk.Serial, r.Message)
			} else {
				warn(fleet.ReadyPackFlagged, pk.Serial, "pack %s: %s", pk.Serial, r.Message)
			}
		}
		if pf.swollen {
			block(fleet.ReadyPackFlagged, pk.Serial, "pack %s is reported swollen: never charge or fly it", pk.Serial)
		}
		for _, d := range pf.due {
			switch {
			case d.Status == fleet.DueOverdue && d.Grounding:
				block(fleet.ReadyPackFlagged, pk.Serial, "%s is overdue on pack %s (%s)", d.RuleName, pk.Serial, d.Reason)
			case d.Status == fleet.DueOverdue:
				warn(fleet.ReadyOverdue, pk.Serial, "%s is overdue on pack %s (%s)", d.RuleName, pk.Serial, d.Reason)
			case d.Status == fleet.DueSoon:
				warn(fleet.ReadyDueSoon, pk.Serial, "%s is due soon on pack %s (%s)", d.RuleName, pk.Serial, d.Reason)
			}
		}
	}
}

// factsOf is the airframe's part of the facts as the store loaded them now.
func factsOf(rf *store.ReadinessFacts, packIDs []string) *readinessFacts {
	return &readinessFacts{airframe: rf.Airframe, layout: rf.Layout, retired: rf.Airframe.RetiredAt != nil,
		hold: rf.Airframe.HoldReason, rotors: rf.Rotors, empty: rf.Empty, events: rf.Events, due: rf.Due,
		packIDs: packIDs, packs: map[string]*packFacts{}}
}

// factsFromNow turns what the store read now into the facts assess weighs.
func factsFromNow(rn *store.ReadinessNow, packIDs []string) (*readinessFacts, error) {
	f := factsOf(rn.ReadinessFacts, packIDs)
	for _, id := range packIDs {
		pn := rn.Packs[id]
		if pn == nil {
			continue
		}
		pf := &packFacts{part: pn.Part, status: pn.Part.Status}
		f.packs[id] = pf
		if pn.Part.Kind != fleet.KindPack {
			continue
		}
		if pn.Health != nil {
			var v health.View
			if err := json.Unmarshal(pn.Health, &v); err != nil {
				return nil, err
			}
			if v.Pack != nil {
				pf.reasons = v.Pack.Reasons
			}
		}
		pf.swollen = pn.Swollen
		pf.due = pn.Due
	}
	return f, nil
}
