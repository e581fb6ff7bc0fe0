package schedule

import (
	"context"
	"fmt"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// withRecords adds the maintenance records' items to a readiness answer
// for the moment at (see recordItems).
func (p *Programme) withRecords(ctx context.Context, rd *fleet.Readiness, a *fleet.Airframe, at time.Time) (*fleet.Readiness, error) {
	block, warn := notes(rd)
	if err := p.recordItems(ctx, a, at, block, warn); err != nil {
		return nil, err
	}
	rd.Ready = len(rd.Blockers) == 0
	return rd, nil
}

// recordItems adds what the maintenance records say about the airframe at
// the moment at: notices (see noticeItems); a grounding discrepancy open
// then blocks, any other open discrepancy warns. Judged as of at, so a past readiness answer is what
// the records said then.
func (p *Programme) recordItems(ctx context.Context, a *fleet.Airframe, at time.Time, block, warn note) error {
	notices, err := p.DB.ActiveNotices(ctx)
	if err != nil {
		return err
	}
	ds, err := p.DB.OpenDiscrepancies(ctx, a.ID, at)
	if err != nil {
		return err
	}
	return p.recordItemsFrom(ctx, notices, ds, a, at, block, warn)
}

// notes are the functions that add a blocker or a warning to rd.
func notes(rd *fleet.Readiness) (block, warn note) {
	block = func(code, subject, format string, args ...any) {
		rd.Blockers = append(rd.Blockers, fleet.ReadinessItem{Code: code, Subject: subject, Message: fmt.Sprintf(format, args...)})
	}
	warn = func(code, subject, format string, args ...any) {
		rd.Warnings = append(rd.Warnings, fleet.ReadinessItem{Code: code, Subject: subject, Message: fmt.Sprintf(format, args...)})
	}
	return block, warn
}

// recordItemsFrom is recordItems with the active notices and the
// discrepancies open at the moment already read.
func (p *Programme) recordItemsFrom(ctx context.Context, notices []*fleet.Notice, ds []store.OpenDiscrepancy, a *fleet.Airframe,
	at time.Time, block, warn note) error {
	if err := p.noticeItems(ctx, notices, a, at, block, warn); err != nil {
		return err
	}
	discrepancyItems(ds, block, warn)
	return nil
}

// discrepancyItems judges an airframe's open discrepancies.
func discrepancyItems(ds []store.OpenDiscrepancy, block, warn note) {
	for _, d := range ds {
		found := d.FoundAt.UTC().Format("2006-01-02")
		if d.Grounding {
			block(fleet.ReadyGroundingDiscrepancy, d.Subject, "grounding discrepancy on %s found %s: %s", d.Subject, found, d.Description)
		} else {
			warn(fleet.ReadyOpenDiscrepancy, d.Subject, "open discrepancy on %s found %s: %s", d.Subject, found, d.Description)
		}
	}
}
