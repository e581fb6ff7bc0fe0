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
}

type dutyEntry struct {
	once        sync.Once
	rpm, thrust float64
	ok          bool
	err         error
}

// withDutyMemo returns a copy of the service that reads each model's duty
// once; used for one run, so a later run sees new flights.
func (s *Service) withDutyMemo() *Service {
	c := *s
	c.duty = &dutyMemo{byPN: map[string]*dutyEntry{}}
	return &c
}

// modelDuty is store.ModelDuty, read once per part number when memoised.
func (s *Service) modelDuty(ctx context.Context, partNumber string) (rpm, thrustN float64, ok bool, err error) {
	if s.duty == nil {
		return s.DB.ModelDuty(ctx, partNumber)
	}
	s.duty.mu.Lock()
	e := s.duty.byPN[partNumber]
	if e == nil {
		e = &dutyEntry{}
		s.duty.byPN[partNumber] = e
	}
	s.duty.mu.Unlock()
	e.once.Do(func() { e.rpm, e.thrust, e.ok, e.err = s.DB.ModelDuty(ctx, partNumber) })
	return e.rpm, e.thrust, e.ok, e.err
}
