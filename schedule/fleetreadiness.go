package schedule

import (
	"context"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// AirframeReadiness is one airframe's readiness with the facts behind it.
type AirframeReadiness struct {
	Facts     *store.ReadinessFacts
	Readiness *fleet.Readiness
}

// FleetReadiness answers Readiness (without packs) for every airframe, in
// tail-code order (see FleetReadinessNow).
func (p *Programme) FleetReadiness(ctx context.Context) ([]AirframeReadiness, error) {
	all, _, err := p.FleetReadinessNow(ctx)
	return all, err
}

// FleetReadinessNow answers Readiness (without packs) for every airframe,
// in tail-code order, with the rest of what the fleet page shows: the same
// facts read fleet-wide in one round trip (store.FleetNow), judged by the
// same assess, and the maintenance records (notices, discrepancies) judged
// by the same rules as the readiness route. Facts.Due holds the items not
// ok and each airframe's most urgent one. Active notices need their
// compliance facts read too, as on the readiness route. Decision support
// only.
func (p *Programme) FleetReadinessNow(ctx context.Context) ([]AirframeReadiness, *store.FleetNow, error) {
	now := p.Now().UTC()
	fn, err := p.DB.FleetNow(ctx, now)
	if err != nil {
		return nil, nil, err
	}
	// Notices fleet-wide: one scope without an airframe covers every
	// airframe not retired and every part with the airframe it is fitted to
	// now, the subjects each airframe's own scope would list.
	cs, err := p.complianceOf(ctx, fn.Notices, store.NoticeScope{At: now})
	if err != nil {
		return nil, nil, err
	}
	notices := map[string][]*fleet.Compliance{}
	for _, c := range cs {
		if c.AirframeID != nil {
			notices[*c.AirframeID] = append(notices[*c.AirframeID], c)
		}
	}
	out := make([]AirframeReadiness, len(fn.Airframes))
	for i, rf := range fn.Airframes {
		rd := assess(factsOf(rf, nil), now, now)
		block, warn := notes(rd)
		noticeItemsOf(notices[rf.Airframe.ID], block, warn)
		discrepancyItems(fn.Discrepancies[rf.Airframe.ID], block, warn)
		rd.Ready = len(rd.Blockers) == 0
		out[i] = AirframeReadiness{Facts: rf, Readiness: rd}
	}
	return out, fn, nil
}
