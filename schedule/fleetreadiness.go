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
// tail-code order: the same facts loaded fleet-wide in a few queries, judged
// by the same assess, and the maintenance records (notices, discrepancies)
// judged fleet-wide by the same rules as withRecords. Facts.Due holds the
// items not ok and each airframe's most urgent one (see
// store.FleetReadinessFacts). Decision support only.
func (p *Programme) FleetReadiness(ctx context.Context) ([]AirframeReadiness, error) {
	now := p.Now().UTC()
	all, err := p.DB.FleetReadinessFacts(ctx, now)
	if err != nil {
		return nil, err
	}
	// Notices fleet-wide: one scope without an airframe covers every
	// airframe not retired and every part with the airframe it is fitted to
	// now, the subjects each airframe's own scope would list.
	cs, err := p.Compliance(ctx, store.NoticeScope{At: now})
	if err != nil {
		return nil, err
	}
	notices := map[string][]*fleet.Compliance{}
	for _, c := range cs {
		if c.AirframeID != nil {
			notices[*c.AirframeID] = append(notices[*c.AirframeID], c)
		}
	}
	ds, err := p.DB.FleetOpenDiscrepancies(ctx, now)
	if err != nil {
		return nil, err
	}
	out := make([]AirframeReadiness, len(all))
	for i, rf := range all {
		rd := assess(factsOf(rf, nil), now, now)
		block, warn := notes(rd)
		noticeItemsOf(notices[rf.Airframe.ID], block, warn)
		discrepancyItems(ds[rf.Airframe.ID], block, warn)
		rd.Ready = len(rd.Blockers) == 0
		out[i] = AirframeReadiness{Facts: rf, Readiness: rd}
	}
	return out, nil
}
