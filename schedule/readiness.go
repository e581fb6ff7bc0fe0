package schedule

import (
	"context"
	"encoding/json"
	"fmt"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// Readiness answers whether the airframe may fly now with the given packs:
// blockers stop it, warnings are for the pilot and technician to weigh. It
// reads the due list, which is recomputed after every ingest, fit change and
// work record and by the scheduler. Decision support only.
func (p *Programme) Readiness(ctx context.Context, airframeID string, packIDs []string) (*fleet.Readiness, error) {
	now := p.Now().UTC()
	facts, err := p.DB.ReadinessFacts(ctx, airframeID, now)
	if err != nil {
		return nil, err
	}
	a := facts.Airframe
	rd := &fleet.Readiness{AirframeID: a.ID, Blockers: []fleet.ReadinessItem{}, Warnings: []fleet.ReadinessItem{}, CheckedAt: now}
	block := func(code, subject, format string, args ...any) {
		rd.Blockers = append(rd.Blockers, fleet.ReadinessItem{Code: code, Subject: subject, Message: fmt.Sprintf(format, args...)})
	}
	warn := func(code, subject, format string, args ...any) {
		rd.Warnings = append(rd.Warnings, fleet.ReadinessItem{Code: code, Subject: subject, Message: fmt.Sprintf(format, args...)})
	}
	if a.RetiredAt != nil {
		block(fleet.ReadyAirframeRetired, a.Code, "airframe %s is retired", a.Code)
	}
	if a.HoldReason != nil {
		block(fleet.ReadyAirframeHeld, a.Code, "airframe %s is held: %s", a.Code, *a.HoldReason)
	}
	for _, d := range facts.Due {
		switch {
		case d.Status == fleet.DueOverdue && d.Grounding:
			block(fleet.ReadyOverdueGrounding, d.Subject, "%s is overdue on %s (%s)", d.RuleName, d.Subject, d.Reason)
		case d.Status == fleet.DueOverdue:
			warn(fleet.ReadyOverdue, d.Subject, "%s is overdue on %s (%s)", d.RuleName, d.Subject, d.Reason)
		case d.Status == fleet.DueSoon:
			warn(fleet.ReadyDueSoon, d.Subject, "%s is due soon on %s (%s)", d.RuleName, d.Subject, d.Reason)
		}
	}
	for _, e := range facts.Events {
		block(fleet.ReadyUnresolvedEvent, a.Code, "unresolved %s of %s: %s", e.Kind, e.At.Format("2006-01-02 15:04Z"), e.Detail)
	}
	for _, e := range facts.Empty {
		block(fleet.ReadyEmptyPosition, a.Code+"/"+e.Position, "no %s fitted at %s", e.Kind, e.Position)
	}
	for _, r := range facts.Rotors {
		pos, ok := facts.Layout.Position(r.Position)
		switch {
		case !ok:
			block(fleet.ReadyRotationMismatch, r.Serial, "%s %s sits at %s, which layout %s does not have", r.Kind, r.Serial, r.Position, facts.Layout.Name)
		case r.Rotation != pos.Rotation:
			block(fleet.ReadyRotationMismatch, r.Serial, "%s %s spins %s but %s turns %s", r.Kind, r.Serial, r.Rotation, r.Position, pos.Rotation)
		}
	}
	if err := p.packChecks(ctx, a, packIDs, block, warn); err != nil {
		return nil, err
	}
	rd.Ready = len(rd.Blockers) == 0
	return rd, nil
}

type note func(code, subject, format string, args ...any)

func (p *Programme) packChecks(ctx context.Context, a *fleet.Airframe, packIDs []string, block, warn note) error {
	if len(packIDs) > 0 && len(packIDs) != a.PacksPerFlight {
		warn(fleet.ReadyPackCount, a.Code, "%d packs given; %s flies on %d", len(packIDs), a.Code, a.PacksPerFlight)
	}
	for _, id := range packIDs {
		pk, err := p.DB.Part(ctx, id)
		if fleet.ErrorCode(err) == fleet.ENOTFOUND {
			block(fleet.ReadyPackUnknown, id, "no pack %s in the register", id)
			continue
		} else if err != nil {
			return err
		}
		specs, err := fleet.PackSpecsOf(pk)
		if err != nil {
			block(fleet.ReadyPackUnknown, pk.Serial, "%s is a %s, not a pack", pk.Serial, pk.Kind)
			continue
		}
		switch pk.Status {
		case fleet.PartRetired:
			block(fleet.ReadyPackRetired, pk.Serial, "pack %s is retired", pk.Serial)
		case fleet.PartQuarantine:
			block(fleet.ReadyPackQuarantined, pk.Serial, "pack %s is in quarantine", pk.Serial)
		}
		if specs.CellsS != a.CellsS {
			block(fleet.ReadyPackWrongCells, pk.Serial, "pack %s is %dS; %s flies on %dS", pk.Serial, specs.CellsS, a.Code, a.CellsS)
		}
		if err := p.packFlags(ctx, pk, block, warn); err != nil {
			return err
		}
	}
	return nil
}

// packFlags reads the pack's health and due items: retire, swelling or an
// overdue grounding rule block; watch and due-soon items warn.
func (p *Programme) packFlags(ctx context.Context, pk *fleet.Part, block, warn note) error {
	raw, err := p.DB.PartHealth(ctx, pk.ID)
	if err == nil {
		var v health.View
		if err := json.Unmarshal(raw, &v); err != nil {
			return err
		}
		if v.Pack != nil {
			for _, r := range v.Pack.Reasons {
				if r.Level == "retire" {
					block(fleet.ReadyPackFlagged, pk.Serial, "pack %s: %s", pk.Serial, r.Message)
				} else {
					warn(fleet.ReadyPackFlagged, pk.Serial, "pack %s: %s", pk.Serial, r.Message)
				}
			}
		}
	} else if fleet.ErrorCode(err) != fleet.ENOTFOUND {
		return err
	}
	open := true
	evs, _, err := p.DB.Events(ctx, store.EventFilter{PartID: pk.ID, Kind: "pack_swelling", Open: &open}, store.Page{Limit: 1})
	if err != nil {
		return err
	}
	if len(evs) > 0 {
		block(fleet.ReadyPackFlagged, pk.Serial, "pack %s is reported swollen: never charge or fly it", pk.Serial)
	}
	due, err := p.DB.DueItems(ctx, store.DueFilter{SubjectID: pk.ID})
	if err != nil {
		return err
	}
	for _, d := range due {
		if d.Status == fleet.DueOverdue && d.Grounding {
			block(fleet.ReadyPackFlagged, pk.Serial, "%s is overdue on pack %s (%s)", d.RuleName, pk.Serial, d.Reason)
		} else if d.Status == fleet.DueOverdue {
			warn(fleet.ReadyOverdue, pk.Serial, "%s is overdue on pack %s (%s)", d.RuleName, pk.Serial, d.Reason)
		} else if d.Status == fleet.DueSoon {
			warn(fleet.ReadyDueSoon, pk.Serial, "%s is due soon on pack %s (%s)", d.RuleName, pk.Serial, d.Reason)
		}
	}
	return nil
}

// Gate refuses a flight for an airframe that is not ready (409 with the
// blockers), unless the flight carries an override reason, which is kept
// with the flight and its audit row.
func (p *Programme) Gate(ctx context.Context, f *fleet.Flight) error {
	packs := make([]string, len(f.Packs))
	for i, pk := range f.Packs {
		packs[i] = pk.PartID
	}
	rd, err := p.Readiness(ctx, f.AirframeID, packs)
	if err != nil {
		if fleet.ErrorCode(err) == fleet.ENOTFOUND {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "airframe_id", Message: "unknown airframe"}
		}
		return err
	}
	if rd.Ready || (f.OverrideReason != nil && fleet.Visible(*f.OverrideReason)) {
		return nil
	}
	return &fleet.Error{Code: fleet.ECONFLICT, Field: "airframe_id", Blockers: rd.Blockers,
		Message: "the airframe is not ready to fly: " + rd.Blockers[0].Message +
			" (resolve the blockers, or give override_reason to record why it flew anyway)"}
}
