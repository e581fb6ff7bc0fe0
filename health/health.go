// Package health turns what each part went through into its health view:
// motor bearing life, pack health and fade forecast, propeller life and
// airframe trends. It loads from the store, computes with wear, and stores
// the views so reads are cheap; Refresh runs after each ingest and Recompute
// for the whole fleet.
package health

import (
	"cmp"
	"context"
	"fmt"
	"time"

	"golang.org/x/sync/errgroup"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

// ModelVersion numbers the health model; raise it when a stored view or
// trend would come out different from the same records (the service then
// recomputes the older ones when it starts). 1: a pack flight without a
// measured charge counts one cycle, and vibration trends keep to one band.
const ModelVersion = 1

// Settings are the fleet-wide model settings.
type Settings struct {
	// UtilisationWindow is the trailing window for usage rates (default 30 days).
	UtilisationWindow time.Duration
	// RatedBearingHours is the relative-mode bearing interval when neither a
	// bearing rating nor a service rule gives one: a manufacturer-style
	// placeholder (no published hour-based bearing interval exists; set it
	// per motor model from the maker's data).
	RatedBearingHours float64
	// BalanceGrade is the ISO 21940-11 grade of the rotors, mm/s (G 6.3
	// default, common practice for small rotors).
	BalanceGrade float64
	// RotorMassKg is the rotating mass (propeller and motor bell) whose
	// residual unbalance loads the bearings radially; 0.04 kg is a placeholder
	// for a 10 to 15 inch propeller with its bell (from memory): set it per model.
	RotorMassKg float64
	// TrendFlights is how many recent flights an airframe trend looks at,
	// TrendLimitPct the rise that flags it.
	TrendFlights  int
	TrendLimitPct float64
	// EOLFraction is the end-of-life state of health (default 0.8).
	EOLFraction float64
	// DutyMaxAge is how old a stored reference duty of a motor model may be
	// for a refresh to use it (default 1 hour; the fleet recompute, every
	// 15 minutes by default, stores a new one); 0 reads it live every time.
	DutyMaxAge time.Duration
}

// DefaultSettings are the defaults above.
func DefaultSettings() Settings {
	return Settings{UtilisationWindow: 30 * 24 * time.Hour, RatedBearingHours: 500, BalanceGrade: 6.3,
		RotorMassKg: 0.04, TrendFlights: 20, TrendLimitPct: 10, EOLFraction: 0.8, DutyMaxAge: time.Hour}
}

// Service computes and stores health views.
type Service struct {
	DB       *store.DB
	Settings Settings
	Now      func() time.Time
	duty     *dutyMemo   // set for one run over many motors (withDutyMemo)
	stored   *Refreshing // set for a refresh whose views are kept (StartRefresh)
	// splitRuns reads the rotor runs in two halves at once (rotorRuns): set
	// for one flight's parts (Refresh).
	splitRuns bool
}

// New returns a service with the default settings and the wall clock.
func New(db *store.DB) *Service {
	return &Service{DB: db, Settings: DefaultSettings(), Now: time.Now}
}

// View is a part's health view as served.
type View struct {
	PartID     string         `json:"part_id"`
	Kind       fleet.PartKind `json:"kind"`
	Serial     string         `json:"serial"`
	ComputedAt time.Time      `json:"computed_at"`
	Status     string         `json:"status"`
	Motor      *MotorView     `json:"motor,omitempty"`
	Pack       *PackView      `json:"pack,omitempty"`
	Propeller  *PropView      `json:"propeller,omitempty"`
	Notes      []string       `json:"notes"`
}

// Part computes a part's health view now and stores it.
func (s *Service) Part(ctx context.Context, partID string) (*View, error) {
	p, err := s.DB.Part(ctx, partID)
	if err != nil {
		return nil, err
	}
	now := s.Now().UTC()
	v := &View{PartID: p.ID, Kind: p.Kind, Serial: p.Serial, ComputedAt: now, Notes: []string{}}
	switch p.Kind {
	case fleet.KindMotor:
		err = s.motor(ctx, p, now, v)
	case fleet.KindPack:
		err = s.pack(ctx, p, now, nil, v)
	case fleet.KindPropeller:
		err = s.propeller(ctx, p, now, v)
	default:
		return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "id",
			Message: fmt.Sprintf("health is computed for motors, packs and propellers, not a %s", p.Kind)}
	}
	if err != nil {
		return nil, err
	}
	return v, s.DB.SavePartHealth(ctx, p.ID, v.Status, v, ModelVersion, now)
}

// PackAt computes a pack's health view as of the moment at from its flights,
// checks and events before it, without storing it (readiness as of a past
// moment).
func (s *Service) PackAt(ctx context.Context, partID string, at time.Time) (*View, error) {
	p, err := s.DB.Part(ctx, partID)
	if err != nil {
		return nil, err
	}
	v := &View{PartID: p.ID, Kind: p.Kind, Serial: p.Serial, ComputedAt: at, Notes: []string{}}
	if p.Kind != fleet.KindPack {
		return nil, fleet.Errorf(fleet.EUNPROCESSABLE, "%s is a %s, not a pack", p.Serial, p.Kind)
	}
	return v, s.pack(ctx, p, at, &at, v)
}

// Refresh recomputes the health of everything a flight touched: its motors,
// propellers and packs, and its airframe's trends.
func (s *Service) Refresh(ctx context.Context, flightID string) error {
	f, err := s.DB.Flight(ctx, flightID)
	if err != nil {
		return err
	}
	parts, err := s.DB.FlightParts(ctx, flightID)
	if err != nil {
		return err
	}
	// The parts as a batch (a few reads for all of them, one write), as
	// Part would compute each; the airframe's trends beside them, on
	// another connection (they read only the airframe's flights).
	g, gctx := errgroup.WithContext(ctx)
	g.Go(func() error {
		_, err := s.Airframe(gctx, f.AirframeID)
		return err
	})
	run := s.withDutyMemo(false)
	run.splitRuns = true
	_, err = run.partBatch(gctx, parts, nil)
	return cmp.Or(g.Wait(), err)
}

func ptr(v float64) *float64 { return &v }
