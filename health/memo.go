package health

import (
	"context"
	"sync"
)

// dutyMemo keeps each motor model's reference duty (store.ModelDuty, a
// median over every logged run of the part number) for one run over many
// motors: a fleet recompute or a refresh of one flight's motors would
// otherwise read the same fleet-wide median once per motor.
type dutyMemo struct {
	mu   sync.Mutex
	byPN map[string]*dutyEntry
	live bool // read every model's duty live (the fleet recompute)
}

type dutyEntry struct {
	once        sync.Once
	rpm, thrust float64
	ok          bool
	err         error
}

// withDutyMemo returns a copy of the service that reads each model's duty
// once; used for one run, so a later run sees new flights. live reads each
// from the runs and stores it (the fleet recompute); otherwise the stored
// one serves while recent (referenceDuty).
func (s *Service) withDutyMemo(live bool) *Service {
	c := *s
	c.duty = &dutyMemo{byPN: map[string]*dutyEntry{}, live: live}
	return &c
}

// modelDuty is the model's reference duty (referenceDuty), read once per
// part number when memoised.
func (s *Service) modelDuty(ctx context.Context, partNumber string) (rpm, thrustN float64, ok bool, err error) {
	if s.duty == nil {
		return s.referenceDuty(ctx, partNumber, false)
	}
	s.duty.mu.Lock()
	e := s.duty.byPN[partNumber]
	if e == nil {
		e = &dutyEntry{}
		s.duty.byPN[partNumber] = e
	}
	s.duty.mu.Unlock()
	e.once.Do(func() { e.rpm, e.thrust, e.ok, e.err = s.referenceDuty(ctx, partNumber, s.duty.live) })
	return e.rpm, e.thrust, e.ok, e.err
}

// referenceDuty is the model's reference duty. Read live it joins every
// logged run of the model in the fleet, which grows with the fleet and
// moves little from one flight to the next; so, unless live, the one a
// fleet recompute (or an earlier read) stored serves while it is younger
// than Settings.DutyMaxAge. A live read is stored, also when the model has
// no duty yet (no run gives both figures), so that is not looked for again
// on every ingest either.
func (s *Service) referenceDuty(ctx context.Context, partNumber string, live bool) (rpm, thrustN float64, ok bool, err error) {
	now := s.Now().UTC()
	if !live && s.Settings.DutyMaxAge > 0 {
		rpm, thrustN, ok, found, err := s.DB.StoredModelDuty(ctx, partNumber, now.Add(-s.Settings.DutyMaxAge))
		if found || err != nil {
			return rpm, thrustN, ok, err
		}
	}
	if rpm, thrustN, ok, err = s.DB.ModelDuty(ctx, partNumber); err != nil {
		return 0, 0, false, err
	}
	return rpm, thrustN, ok, s.DB.SaveModelDuty(ctx, partNumber, rpm, thrustN, ok, now)
}
