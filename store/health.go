package store

import (
	"context"
	"encoding/json"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// PackCheck is a pack charge, storage or capacity-test record.
type PackCheck struct {
	ID          string    `json:"id"`
	PartID      string    `json:"part_id"`
	At          time.Time `json:"at"`
	Kind        string    `json:"kind"`
	MahIn       *float64  `json:"mah_in"`
	MahOut      *float64  `json:"mah_out"`
	RestVBefore *float64  `json:"rest_v_before"`
	RestVAfter  *float64  `json:"rest_v_after"`
	PackIRmOhm  *float64  `json:"pack_ir_mohm"`
	CellV       []float64 `json:"cell_v"`
	CellIRmOhm  []float64 `json:"cell_ir_mohm"`
	Notes       string    `json:"notes"`
	CreatedAt   time.Time `json:"created_at"`
}

const packCheckCols = `id, part_id, at, kind, mah_in, mah_out, rest_v_before, rest_v_after, pack_ir_mohm,
	coalesce(cell_v, '{}'), coalesce(cell_ir_mohm, '{}'), notes, created_at`

func scanPackCheck(r pgx.Row) (PackCheck, error) {
	var c PackCheck
	err := r.Scan(&c.ID, &c.PartID, &c.At, &c.Kind, &c.MahIn, &c.MahOut, &c.RestVBefore, &c.RestVAfter,
		&c.PackIRmOhm, &c.CellV, &c.CellIRmOhm, &c.Notes, &c.CreatedAt)
	return c, err
}

// Validate checks a pack check against the pack's specs.
func (c *PackCheck) validate(specs fleet.PackSpecs) error {
	switch c.Kind {
	case "charge", "storage", "capacity_test":
	default:
		return fleet.FieldError("kind", "must be charge, storage or capacity_test")
	}
	if c.At.IsZero() {
		return fleet.FieldError("at", "is required")
	}
	if c.Kind == "charge" && c.MahIn == nil {
		return fleet.FieldError("mah_in", "a charge record needs the charge put in")
	}
	if c.Kind == "capacity_test" && c.MahOut == nil {
		return fleet.FieldError("mah_out", "a capacity test needs the charge taken out")
	}
	limits, _ := specs.Chemistry.Limits()
	packMax := float64(specs.CellsS) * (limits.FullV + 0.3)
	for _, v := range []struct {
		f string
		x *float64
	}{{"rest_v_before", c.RestVBefore}, {"rest_v_after", c.RestVAfter}} {
		if v.x != nil && (*v.x <= 0 || *v.x > packMax) {
			return fleet.FieldError(v.f, "%.2f V is not a %dS %s pack voltage", *v.x, specs.CellsS, specs.Chemistry)
		}
	}
	for _, v := range []struct {
		f string
		x *float64
	}{{"mah_in", c.MahIn}, {"mah_out", c.MahOut}} {
		if v.x != nil && (*v.x < 0 || *v.x > 3*specs.RatedMah) {
			return fleet.FieldError(v.f, "must be 0 to three times the rated capacity")
		}
	}
	if n := len(c.CellV); n > 0 && n != specs.CellsS {
		return fleet.FieldError("cell_v", "has %d cells; the pack has %d in series", n, specs.CellsS)
	}
	for _, v := range c.CellV {
		if v <= 0 || v > limits.FullV+0.3 {
			return fleet.FieldError("cell_v", "%.3f V is not a %s cell voltage", v, specs.Chemistry)
		}
	}
	if n := len(c.CellIRmOhm); n > 0 && n != specs.CellsS {
		return fleet.FieldError("cell_ir_mohm", "has %d cells; the pack has %d in series", n, specs.CellsS)
	}
	for _, v := range c.CellIRmOhm {
		if v <= 0 || v > 10000 {
			return fleet.FieldError("cell_ir_mohm", "must be in (0, 10000]")
		}
	}
	if c.PackIRmOhm != nil && (*c.PackIRmOhm <= 0 || *c.PackIRmOhm > 10000) {
		return fleet.FieldError("pack_ir_mohm", "must be in (0, 10000]")
	}
	return checkLen("notes", c.Notes, 4000)
}

func checkLen(field, s string, max int) error {
	if len([]rune(s)) > max {
		return fleet.FieldError(field, "must be at most %d characters", max)
	}
	return nil
}

// CreatePackCheck records a check of a pack.
func (db *DB) CreatePackCheck(ctx context.Context, c *PackCheck) (*PackCheck, error) {
	var out PackCheck
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		p, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1`, c.PartID))
		if err != nil {
			return translateNotFound(err, "part")
		}
		specs, err := fleet.PackSpecsOf(p)
		if err != nil {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id", Message: "checks are for packs; this part is a " + string(p.Kind)}
		}
		if err := fleet.CheckTime("at", c.At, db.now()); err != nil {
			return err
		}
		if err := c.validate(specs); err != nil {
			return err
		}
		var cellV, cellIR []float64
		if len(c.CellV) > 0 {
			cellV = c.CellV
		}
		if len(c.CellIRmOhm) > 0 {
			cellIR = c.CellIRmOhm
		}
		out, err = scanPackCheck(tx.QueryRow(ctx, `
			INSERT INTO pack_checks (id, part_id, at, kind, mah_in, mah_out, rest_v_before, rest_v_after,
				pack_ir_mohm, cell_v, cell_ir_mohm, notes)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12) RETURNING `+packCheckCols,
			newID(), c.PartID, c.At, c.Kind, c.MahIn, c.MahOut, c.RestVBefore, c.RestVAfter, c.PackIRmOhm,
			cellV, cellIR, c.Notes))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "pack_check", out.ID, nil, out)
	})
	if err != nil {
		return nil, err
	}
	return &out, nil
}

const packChecksSQL = `SELECT ` + packCheckCols + ` FROM pack_checks WHERE part_id = $1 ORDER BY at, id`

// PackChecks lists a pack's checks, oldest first.
func (db *DB) PackChecks(ctx context.Context, partID string) ([]PackCheck, error) {
	rows, err := db.pool.Query(ctx, packChecksSQL, partID)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanPackCheck)
}

// PackFlight is one flight of a pack with its share of the figures.
type PackFlight struct {
	FlightID                               string
	TakeoffAt, LandingAt                   time.Time
	ChargeMah, EnergyWh                    *float64
	MinCellV, RestVStart, RestVEnd, IRmOhm *float64
}

// PackFlights lists the flights of a pack, oldest first.
func (db *DB) PackFlights(ctx context.Context, partID string) ([]PackFlight, error) {
	rows, err := db.pool.Query(ctx, packFlightsSQL, partID)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanPackFlight)
}

const packFlightsSQL = `
	SELECT f.id, f.takeoff_at, f.landing_at, fp.charge_mah, fp.energy_wh, fp.min_cell_v, fp.rest_v_start,
		fp.rest_v_end, fp.ir_mohm
	FROM flight_packs fp JOIN flights f ON f.id = fp.flight_id
	WHERE fp.part_id = $1 ORDER BY f.takeoff_at`

func scanPackFlight(r pgx.Row) (PackFlight, error) {
	var p PackFlight
	return p, r.Scan(&p.FlightID, &p.TakeoffAt, &p.LandingAt, &p.ChargeMah, &p.EnergyWh, &p.MinCellV,
		&p.RestVStart, &p.RestVEnd, &p.IRmOhm)
}

// PackRecords are what a pack's health view reads: its flights and checks
// (as PackFlights and PackChecks), every service rule (Rules) and one page
// of its events under a filter (Events).
type PackRecords struct {
	Flights []PackFlight
	Checks  []PackCheck
	Rules   []*fleet.ServiceRule
	Events  []*fleet.Event
}

// PackRecordsOf reads a pack's records in one pipelined batch, one round
// trip instead of four in turn; events is filtered as Events filters it
// (its PartID set to the pack's), first page only.
func (db *DB) PackRecordsOf(ctx context.Context, partID string, events EventFilter, p Page) (*PackRecords, error) {
	events.PartID = partID
	eq, args, err := eventsQuery(events, p)
	if err != nil {
		return nil, err
	}
	b := &pgx.Batch{}
	b.Queue(packFlightsSQL, partID)
	b.Queue(packChecksSQL, partID)
	b.Queue(rulesSQL)
	b.Queue(eq, args...)
	br := db.pool.SendBatch(ctx, b)
	defer br.Close()
	var out PackRecords
	if out.Flights, err = collectBatch(br, scanPackFlight); err != nil {
		return nil, err
	}
	if out.Checks, err = collectBatch(br, scanPackCheck); err != nil {
		return nil, err
	}
	if out.Rules, err = collectBatch(br, scanRule); err != nil {
		return nil, err
	}
	evs, err := collectBatch(br, scanEvent)
	if err != nil {
		return nil, err
	}
	if out.Events, _, err = page(evs, p.Limit, func(e *fleet.Event) string { return e.ID }); err != nil {
		return nil, err
	}
	return &out, translate(br.Close())
}

// RotorRun is a motor's or propeller's run on one flight at its position.
type RotorRun struct {
	FlightID    string
	TakeoffAt   time.Time
	AirframeID  string
	Position    string
	RunS        float64
	Revolutions float64
	MeanRPM     *float64
	ThrustMeanN *float64
	Bins        json.RawMessage
	// BinsArray is Bins as motor_bins_array (migration 021) gives it (five values a
	// bin: rpm_lo, rpm_hi, seconds, revolutions, mean_thrust_n or nil),
	// read (from its packed copy, bins_packed) instead of Bins by
	// RotorRunsOf; nil when Bins is read.
	BinsArray []*float64
}

// RotorRuns lists the runs of the position a motor or propeller was fitted
// at, on every flight while it was fitted (across airframes), from since on.
func (db *DB) RotorRuns(ctx context.Context, partID string, since time.Time) ([]RotorRun, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT fl.id, fl.takeoff_at, fl.airframe_id, mr.position, mr.run_s, mr.revolutions, mr.mean_rpm,
			mr.thrust_mean_n, mr.bins
		FROM fits f
		JOIN flights fl ON `+fitAtTakeoff+`
		JOIN motor_runs mr ON mr.flight_id = fl.id AND mr.position = f.position
		WHERE f.part_id = $1 AND fl.takeoff_at >= $2
		ORDER BY fl.takeoff_at`, partID, since)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (RotorRun, error) {
		var m RotorRun
		return m, r.Scan(&m.FlightID, &m.TakeoffAt, &m.AirframeID, &m.Position, &m.RunS, &m.Revolutions,
			&m.MeanRPM, &m.ThrustMeanN, (*[]byte)(&m.Bins)) // as bytes: pgx would parse a json.RawMessage target
	})
}

// CurrentFit returns the part's open fit, or ENOTFOUND.
func (db *DB) CurrentFit(ctx context.Context, partID string) (*fleet.Fit, error) {
	f, err := scanFit(db.pool.QueryRow(ctx, `SELECT `+fitCols+` FROM fits WHERE part_id = $1 AND upper_inf(during)`, partID))
	if err != nil {
		return nil, translateNotFound(err, "fit")
	}
	return f, nil
}

// FirstFitted returns when the part was first fitted (zero if never).
func (db *DB) FirstFitted(ctx context.Context, partID string) (time.Time, error) {
	var t *time.Time
	err := db.pool.QueryRow(ctx, `SELECT min(lower(during)) FROM fits WHERE part_id = $1`, partID).Scan(&t)
	if err != nil || t == nil {
		return time.Time{}, translate(err)
	}
	return *t, nil
}

// TrendPoint is one flight's efficiency index and vibration.
type TrendPoint struct {
	FlightID        string    `json:"flight_id"`
	TakeoffAt       time.Time `json:"takeoff_at"`
	EfficiencyIndex *float64  `json:"efficiency_index"`
	VibrationRMS    *float64  `json:"vibration_rms"`
	// VibrationBandHz is the band VibrationRMS was measured over: the
	// high-pass corner and half the sample rate (null when not known).
	VibrationBandHz *[2]float64 `json:"vibration_band_hz"`
}

// trendPointCols are a trend point's columns of flights f and
// flight_metrics m, in scanTrendPoint's order.
const trendPointCols = `f.id, f.takeoff_at, m.efficiency_index, m.vibration_rms, m.vibration_cutoff_hz,
	m.vibration_sample_hz / 2`

// scanTrendPoint scans trendPointCols after the leading destinations.
func scanTrendPoint(r pgx.Row, lead ...any) (TrendPoint, error) {
	var p TrendPoint
	var lo, hi *float64
	err := r.Scan(append(lead, &p.FlightID, &p.TakeoffAt, &p.EfficiencyIndex, &p.VibrationRMS, &lo, &hi)...)
	if lo != nil && hi != nil {
		p.VibrationBandHz = &[2]float64{*lo, *hi}
	}
	return p, err
}

// AirframeTrendPoints returns the last n logged flights of an airframe
// taking off before the moment before (nil: all), oldest first.
func (db *DB) AirframeTrendPoints(ctx context.Context, airframeID string, n int, before *time.Time) ([]TrendPoint, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT * FROM (
			SELECT `+trendPointCols+`
			FROM flights f JOIN flight_metrics m ON m.flight_id = f.id
			WHERE f.airframe_id = $1 AND ($3::timestamptz IS NULL OR f.takeoff_at < $3)
			ORDER BY f.takeoff_at DESC LIMIT $2) last
		ORDER BY takeoff_at`, airframeID, n, before)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (TrendPoint, error) { return scanTrendPoint(r) })
}

// SavePartHealth stores a part's computed health view, computed by the
// health model numbered model.
func (db *DB) SavePartHealth(ctx context.Context, partID, status string, view any, model int, at time.Time) error {
	b, err := MarshalView(view)
	if err != nil {
		return err
	}
	_, err = db.pool.Exec(ctx, `
		INSERT INTO part_health (part_id, computed_at, status, view, model_version) VALUES ($1, $2, $3, $4, $5)
		ON CONFLICT (part_id) DO UPDATE SET computed_at = EXCLUDED.computed_at, status = EXCLUDED.status, view = EXCLUDED.view,
			model_version = EXCLUDED.model_version`,
		partID, at, status, b, model)
	return translate(err)
}

// StaleViews counts the stored health views and airframe trends computed
// by a health model numbered below model.
func (db *DB) StaleViews(ctx context.Context, model int) (parts, airframes int, err error) {
	err = db.pool.QueryRow(ctx, `
		SELECT (SELECT count(*) FROM part_health WHERE model_version < $1),
			(SELECT count(*) FROM airframe_trends WHERE model_version < $1)`, model).Scan(&parts, &airframes)
	return parts, airframes, translate(err)
}

// PartHealth returns a part's stored health view (ENOTFOUND when never computed).
func (db *DB) PartHealth(ctx context.Context, partID string) (json.RawMessage, error) {
	var v json.RawMessage
	err := db.pool.QueryRow(ctx, `SELECT view FROM part_health WHERE part_id = $1`, partID).Scan((*[]byte)(&v))
	if err != nil {
		return nil, translateNotFound(err, "health")
	}
	return v, nil
}

// AirframeTrends returns an airframe's stored trends (ENOTFOUND when never computed).
func (db *DB) AirframeTrends(ctx context.Context, airframeID string) (json.RawMessage, error) {
	var v json.RawMessage
	err := db.pool.QueryRow(ctx, `SELECT view FROM airframe_trends WHERE airframe_id = $1`, airframeID).Scan((*[]byte)(&v))
	if err != nil {
		return nil, translateNotFound(err, "trends")
	}
	return v, nil
}

// FlightParts returns the motors, propellers and packs a flight carried.
func (db *DB) FlightParts(ctx context.Context, flightID string) ([]string, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT f.part_id FROM flights fl JOIN fits f ON `+fitAtTakeoff+`
		WHERE fl.id = $1 AND f.kind IN ('motor', 'propeller')
		UNION SELECT part_id FROM flight_packs WHERE flight_id = $1`, flightID)
	if err != nil {
		return nil, translate(err)
	}
	return pgx.CollectRows(rows, pgx.RowTo[string])
}

// HealthParts lists every motor, propeller and pack that is not retired.
func (db *DB) HealthParts(ctx context.Context) ([]string, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT id FROM parts WHERE kind IN ('motor', 'propeller', 'pack') AND status <> 'retired' ORDER BY id`)
	if err != nil {
		return nil, translate(err)
	}
	return pgx.CollectRows(rows, pgx.RowTo[string])
}

// AirframeIDs lists every airframe that is not retired.
func (db *DB) AirframeIDs(ctx context.Context) ([]string, error) {
	rows, err := db.pool.Query(ctx, `SELECT id FROM airframes WHERE retired_at IS NULL ORDER BY id`)
	if err != nil {
		return nil, translate(err)
	}
	return pgx.CollectRows(rows, pgx.RowTo[string])
}

// ModelDuty returns the median mean rpm and mean thrust over every logged run
// of motors with this part number: the reference duty of the model, against
// which the relative bearing mode weighs each motor's own duty. ok is false
// when no run has both.
func (db *DB) ModelDuty(ctx context.Context, partNumber string) (rpm, thrustN float64, ok bool, err error) {
	var r, t *float64
	err = db.pool.QueryRow(ctx, `
		SELECT percentile_cont(0.5) WITHIN GROUP (ORDER BY mr.mean_rpm),
		       percentile_cont(0.5) WITHIN GROUP (ORDER BY mr.thrust_mean_n)
		FROM parts p
		JOIN fits f ON f.part_id = p.id
		JOIN flights fl ON `+fitAtTakeoff+`
		JOIN motor_runs mr ON mr.flight_id = fl.id AND mr.position = f.position
		WHERE p.kind = 'motor' AND p.part_number = $1 AND mr.mean_rpm IS NOT NULL AND mr.thrust_mean_n IS NOT NULL`,
		partNumber).Scan(&r, &t)
	if err != nil {
		return 0, 0, false, translate(err)
	}
	if r == nil || t == nil {
		return 0, 0, false, nil
	}
	return *r, *t, true, nil
}
