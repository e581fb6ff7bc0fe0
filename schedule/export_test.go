package schedule

import (
	"context"
	"encoding/json"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/store"
)

// ReadinessOneByOne is Readiness as it was before its reads were batched:
// each fact read by its own store call, one round trip after another. The
// tests hold the batched answer to it.
func (p *Programme) ReadinessOneByOne(ctx context.Context, airframeID string, packIDs []string) (*fleet.Readiness, error) {
	now := p.Now().UTC()
	rf, err := p.DB.ReadinessFacts(ctx, airframeID, now)
	if err != nil {
		return nil, err
	}
	f := factsOf(rf, packIDs)
	for _, id := range packIDs {
		pk, err := p.DB.Part(ctx, id)
		if fleet.ErrorCode(err) == fleet.ENOTFOUND {
			continue
		} else if err != nil {
			return nil, err
		}
		pf := &packFacts{part: pk, status: pk.Status}
		f.packs[id] = pf
		if pk.Kind != fleet.KindPack {
			continue
		}
		raw, err := p.DB.PartHealth(ctx, pk.ID)
		if err == nil {
			var v health.View
			if err := json.Unmarshal(raw, &v); err != nil {
				return nil, err
			}
			if v.Pack != nil {
				pf.reasons = v.Pack.Reasons
			}
		} else if fleet.ErrorCode(err) != fleet.ENOTFOUND {
			return nil, err
		}
		open := true
		evs, _, err := p.DB.Events(ctx, store.EventFilter{PartID: pk.ID, Kind: "pack_swelling", Open: &open}, store.Page{Limit: 1})
		if err != nil {
			return nil, err
		}
		pf.swollen = len(evs) > 0
		if pf.due, err = p.DB.DueItems(ctx, store.DueFilter{SubjectID: pk.ID}); err != nil {
			return nil, err
		}
	}
	return p.withRecords(ctx, assess(f, now, now), f.airframe, now)
}
