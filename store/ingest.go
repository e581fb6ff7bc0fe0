package store

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"github.com/rotorwright/rotorwright/fleet"
)

// FlightFacts is what the log analysis needs to know about a flight that the
// log does not carry.
type FlightFacts struct {
	Airframe *fleet.Airframe
	Layout   *fleet.Layout
	Packs    []*fleet.Part
}

// FlightFacts loads the airframe, its layout and the packs of a flight.
func (db *DB) FlightFacts(ctx context.Context, airframeID string, packIDs []string) (*FlightFacts, error) {
	a, err := db.Airframe(ctx, airframeID)
	if err != nil {
		if fleet.ErrorCode(err) == fleet.ENOTFOUND {
			return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "airframe_id", Message: "unknown airframe"}
		}
		return nil, err
	}
	l, err := db.Layout(ctx, a.Layout)
	if err != nil {
		return nil, err
	}
	ff := &FlightFacts{Airframe: a, Layout: l}
	for _, id := range packIDs {
		p, err := db.Part(ctx, id)
		if err != nil {
			if fleet.ErrorCode(err) == fleet.ENOTFOUND {
				return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "packs", Message: "unknown pack " + id}
			}
			return nil, err
		}
		ff.Packs = append(ff.Packs, p)
	}
	return ff, nil
}

// KeyMetrics are the per-flight figures kept as columns for queries and trends.
type KeyMetrics struct {
	RunS, MinCellV, RestVStart, RestVEnd, IRmOhm, HoverRPM, ThrustK *float64
	EfficiencyIndex, VibrationRMS, LandingG, MaxAltM, DistanceM     *float64
	// VibrationSampleHz and VibrationCutoffHz give the band VibrationRMS
	// was measured over (telemetry.Vibration).
	VibrationSampleHz, VibrationCutoffHz                         *float64
	ChargeMah, EnergyWh, MeanPowerW, PeakA, MinPackV, AirDensity float64
}

// MotorRun is one rotor's figures on a flight.
type MotorRun struct {
	Position    string          `json:"position"`
	Revolutions float64         `json:"revolutions"`
	RunS        float64         `json:"run_s"`
	MeanRPM     *float64        `json:"mean_rpm"`
	ThrustMeanN *float64        `json:"thrust_mean_n"`
	Bins        json.RawMessage `json:"bins"`
}

// PackFigures are one pack's share of a logged flight. Packs listed
// together feed pack_a in parallel and are taken to share the load equally
// (Share = 1/n): charge and energy are the bus figures over n, resistance the
// bus resistance times n; the rest voltages are the bus's. Only the first
// pack's minimum cell voltage can come from cell columns (they belong to
// it); another pack's is the bus minimum over its cells in series, a mean
// cell, as MinCellSource says.
type PackFigures struct {
	PartID        string     `json:"part_id"`
	Serial        string     `json:"serial"`
	Slot          int        `json:"slot"`
	Share         float64    `json:"share"`
	ChargeMah     float64    `json:"charge_mah"`
	EnergyWh      float64    `json:"energy_wh"`
	MinCellV      *float64   `json:"min_cell_v"`
	MinCellSource string     `json:"min_cell_source,omitempty"`
	MinCellsV     []*float64 `json:"min_cells_v,omitempty"`
	RestVStart    *float64   `json:"rest_v_start"`
	RestVEnd      *float64   `json:"rest_v_end"`
	IRmOhm        *float64   `json:"ir_mohm"`
}

// Analysis is everything computed from one log.
type Analysis struct {
	Version int
	Metrics json.RawMessage
	Key     KeyMetrics
	Motors  []MotorRun
	Packs   []PackFigures
	Events  []*fleet.Event // airframe, part and time set; flight id filled in on write
}

// LoggedFlight is a flight uploaded with its log.
type LoggedFlight struct {
	Flight *fleet.Flight // Source log, LogSHA256 set
	RawGz  []byte
	// Repack marks RawGz as packed fast at upload, for the repack job.
	Repack   bool
	RawBytes int64
	Columns  []string
	Unknown  []string
	Samples  int
	// Blank counts the blank cells per optional column (telemetry.Log.Blank).
	Blank    map[string]int
	Analysis *Analysis
	// ColumnMap is the map (at its version) the log was read through; nil
	// for the native layout.
	ColumnMap *fleet.ColumnMap
}

// fillEmpty gives the log's lists and counts their empty values (the
// columns are NOT NULL).
func (lf *LoggedFlight) fillEmpty() {
	if lf.Columns == nil {
		lf.Columns = []string{}
	}
	if lf.Unknown == nil {
		lf.Unknown = []string{}
	}
	if lf.Blank == nil {
		lf.Blank = map[string]int{}
	}
}

// CreateLoggedFlight writes the flight, packs, compressed log, figures, motor
// runs and detected events in one transaction. The same log for the same
// airframe returns the existing flight (created false): uploads for one
// airframe are serialised by an advisory lock, and the unique key on
// (airframe, sha256) backs it up.
func (db *DB) CreateLoggedFlight(ctx context.Context, lf *LoggedFlight) (id string, created bool, err error) {
	f := lf.Flight
	if err := f.Validate(); err != nil {
		return "", false, err
	}
	if err := checkFlightTimes(f, db.now()); err != nil {
		return "", false, err
	}
	lf.fillEmpty()
	err = db.inTx(ctx, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, uploadLockSQL, "ingest:"+f.AirframeID); err != nil {
			return err
		}
		err := tx.QueryRow(ctx, flightByLogSQL, f.AirframeID, f.LogSHA256).Scan(&id)
		if err == nil {
			return nil
		} else if err != pgx.ErrNoRows {
			return err
		}
		out, err := insertFlight(ctx, tx, f, newID())
		if err != nil {
			return err
		}
		id, created = out.ID, true
		if err := insertFlightLog(ctx, tx, id, *f.LogSHA256, lf.Analysis.Version, lf); err != nil {
			return err
		}
		return writeAnalysis(ctx, tx, id, f.AirframeID, lf.Analysis)
	})
	if existing, ok := db.recordedBefore(ctx, f, err); ok {
		return existing, false, nil
	}
	return id, created, err
}

// uploadLockSQL serialises the uploads of one airframe (the key is
// "ingest:" and its id) until the transaction ends.
const uploadLockSQL = `SELECT pg_advisory_xact_lock(hashtextextended($1, 0))`

// flightByLogSQL finds the flight of an airframe ($1) recorded from the log
// whose text has SHA-256 $2.
const flightByLogSQL = `SELECT id FROM flights WHERE airframe_id = $1 AND log_sha256 = $2`

// recordedBefore answers a logged flight's write that failed on a database
// error or a conflict with the flight already recorded from the same log, if
// there is one: a racing upload of the same log that slipped past the lock
// (it cannot, but the unique key is the rule).
func (db *DB) recordedBefore(ctx context.Context, f *fleet.Flight, err error) (string, bool) {
	var pe *pgconn.PgError
	if f.LogSHA256 == nil || !errors.As(err, &pe) && fleet.ErrorCode(err) != fleet.ECONFLICT {
		return "", false
	}
	id, e := db.FlightIDByLog(ctx, f.AirframeID, *f.LogSHA256)
	return id, e == nil
}

// insertFlightLog writes the stored log's row of flight id (of the text
// with SHA-256 sha, analysed by the model version).
func insertFlightLog(ctx context.Context, tx pgx.Tx, id, sha string, version int, lf *LoggedFlight) error {
	var mapID *string
	var mapVersion *int
	if lf.ColumnMap != nil {
		mapID, mapVersion = &lf.ColumnMap.ID, &lf.ColumnMap.Version
	}
	_, err := tx.Exec(ctx, `
		INSERT INTO flight_logs (flight_id, raw_gz, raw_bytes, sha256, columns, unknown_columns, samples, analysis_version,
			column_map_id, column_map_version, blank_cells, repack)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12)`,
		id, lf.RawGz, lf.RawBytes, sha, lf.Columns, lf.Unknown, lf.Samples, version,
		mapID, mapVersion, lf.Blank, lf.Repack)
	return err
}

// writeAnalysis stores the figures of a flight, replacing earlier ones.
func writeAnalysis(ctx context.Context, tx pgx.Tx, flightID, airframeID string, a *Analysis) error {
	k := a.Key
	if _, err := tx.Exec(ctx, `
		INSERT INTO flight_metrics (flight_id, run_s, charge_mah, energy_wh, mean_power_w, peak_a, min_pack_v,
			min_cell_v, rest_v_start, rest_v_end, ir_mohm, hover_rpm, thrust_k, efficiency_index, vibration_rms,
			landing_g, max_alt_m, distance_m, air_density, metrics, vibration_sample_hz, vibration_cutoff_hz)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, $21, $22)
		ON CONFLICT (flight_id) DO UPDATE SET run_s = EXCLUDED.run_s, charge_mah = EXCLUDED.charge_mah,
			energy_wh = EXCLUDED.energy_wh, mean_power_w = EXCLUDED.mean_power_w, peak_a = EXCLUDED.peak_a,
			min_pack_v = EXCLUDED.min_pack_v, min_cell_v = EXCLUDED.min_cell_v, rest_v_start = EXCLUDED.rest_v_start,
			rest_v_end = EXCLUDED.rest_v_end, ir_mohm = EXCLUDED.ir_mohm, hover_rpm = EXCLUDED.hover_rpm,
			thrust_k = EXCLUDED.thrust_k, efficiency_index = EXCLUDED.efficiency_index,
			vibration_rms = EXCLUDED.vibration_rms, landing_g = EXCLUDED.landing_g, max_alt_m = EXCLUDED.max_alt_m,
			distance_m = EXCLUDED.distance_m, air_density = EXCLUDED.air_density, metrics = EXCLUDED.metrics,
			vibration_sample_hz = EXCLUDED.vibration_sample_hz, vibration_cutoff_hz = EXCLUDED.vibration_cutoff_hz`,
		flightID, k.RunS, k.ChargeMah, k.EnergyWh, k.MeanPowerW, k.PeakA, k.MinPackV, k.MinCellV, k.RestVStart,
		k.RestVEnd, k.IRmOhm, k.HoverRPM, k.ThrustK, k.EfficiencyIndex, k.VibrationRMS, k.LandingG, k.MaxAltM,
		k.DistanceM, k.AirDensity, a.Metrics, k.VibrationSampleHz, k.VibrationCutoffHz); err != nil {
		return err
	}
	if _, err := tx.Exec(ctx, `DELETE FROM motor_runs WHERE flight_id = $1`, flightID); err != nil {
		return err
	}
	rows := make([][]any, len(a.Motors))
	for i, m := range a.Motors {
		rows[i] = []any{flightID, m.Position, m.Revolutions, m.RunS, m.MeanRPM, m.ThrustMeanN, []byte(m.Bins)}
	}
	if _, err := tx.CopyFrom(ctx, pgx.Identifier{"motor_runs"},
		[]string{"flight_id", "position", "revolutions", "run_s", "mean_rpm", "thrust_mean_n", "bins"},
		pgx.CopyFromRows(rows)); err != nil {
		return err
	}
	for _, p := range a.Packs {
		if _, err := tx.Exec(ctx, `
			UPDATE flight_packs SET charge_mah = $3, energy_wh = $4, min_cell_v = $5, rest_v_start = $6,
				rest_v_end = $7, ir_mohm = $8
			WHERE flight_id = $1 AND part_id = $2`,
			flightID, p.PartID, p.ChargeMah, p.EnergyWh, p.MinCellV, p.RestVStart, p.RestVEnd, p.IRmOhm); err != nil {
			return err
		}
	}
	// Open detected events are the analysis's to replace; resolved ones are
	// people's records and stay. The take-off verdict's event is not the
	// analysis's.
	if _, err := tx.Exec(ctx, `
		DELETE FROM events WHERE flight_id = $1 AND detected AND resolved_at IS NULL AND kind <> 'flown_not_ready'`,
		flightID); err != nil {
		return err
	}
	for _, e := range a.Events {
		e.FlightID, e.AirframeID, e.Detected = &flightID, &airframeID, true
		if e.Severity == "" {
			e.Severity = fleet.DefaultSeverity(e.Kind)
		}
		if _, err := insertEvent(ctx, tx, e); err != nil {
			return err
		}
	}
	// The register comparison is redone with the analysis (whose refresh
	// replaced the open detected events).
	if err := checkSoftware(ctx, tx, flightID); err != nil {
		return err
	}
	return audit(ctx, tx, "flight_analysis", flightID, nil, map[string]any{"version": a.Version, "events": len(a.Events)})
}

// ReplaceAnalysis stores a re-analysis of a stored log.
func (db *DB) ReplaceAnalysis(ctx context.Context, flightID string, a *Analysis) error {
	return db.inTx(ctx, func(tx pgx.Tx) error {
		var airframeID string
		if err := tx.QueryRow(ctx, `SELECT airframe_id FROM flights WHERE id = $1 FOR UPDATE`, flightID).Scan(&airframeID); err != nil {
			return translateNotFound(err, "flight")
		}
		if _, err := tx.Exec(ctx, `UPDATE flight_logs SET analysis_version = $2, analysed_at = now() WHERE flight_id = $1`,
			flightID, a.Version); err != nil {
			return err
		}
		return writeAnalysis(ctx, tx, flightID, airframeID, a)
	})
}

// StoredLog is a raw log with the facts to re-analyse it.
type StoredLog struct {
	Flight  *fleet.Flight
	RawGz   []byte
	Version int
	// ColumnMap is the map at the version the log was read through (nil:
	// the native layout).
	ColumnMap *fleet.ColumnMap
}

// StoredLogs returns up to limit stored logs after the flight id (keyset);
// with below > 0 only those analysed with a model version below it.
func (db *DB) StoredLogs(ctx context.Context, afterID string, below, limit int) ([]StoredLog, error) {
	var after *string
	if afterID != "" {
		after = &afterID
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+prefixed("f.", flightCols)+`, l.raw_gz, l.analysis_version,
			v.map_id, v.name, v.version, v.body, v.saved_at
		FROM flight_logs l JOIN flights f ON f.id = l.flight_id
		LEFT JOIN column_map_versions v ON v.map_id = l.column_map_id AND v.version = l.column_map_version
		WHERE ($1::uuid IS NULL OR l.flight_id > $1) AND ($2 = 0 OR l.analysis_version < $2)
		ORDER BY l.flight_id LIMIT $3`, after, below, limit)
	if err != nil {
		return nil, translate(err)
	}
	out, err := collect(rows, func(r pgx.Row) (StoredLog, error) {
		var s StoredLog
		var mapID, mapName *string
		var mapVersion *int
		var mapBodyRaw []byte
		var savedAt *time.Time
		var err error
		s.Flight, err = scanFlightWith(r, &s.RawGz, &s.Version, &mapID, &mapName, &mapVersion, &mapBodyRaw, &savedAt)
		if err != nil || mapID == nil {
			return s, err
		}
		var b mapBody
		if err := json.Unmarshal(mapBodyRaw, &b); err != nil {
			return s, fmt.Errorf("column map %s version %d: stored body: %w", *mapID, *mapVersion, err)
		}
		s.ColumnMap = &fleet.ColumnMap{ID: *mapID, Name: *mapName, Version: *mapVersion, UpdatedAt: *savedAt}
		b.onto(s.ColumnMap)
		return s, nil
	})
	if err != nil {
		return nil, err
	}
	ids := make([]string, len(out))
	for i := range out {
		ids[i] = out[i].Flight.ID
	}
	packs, err := db.flightPacks(ctx, ids)
	if err != nil {
		return nil, err
	}
	for i := range out {
		out[i].Flight.Packs = packs[out[i].Flight.ID]
	}
	return out, nil
}

// StaleLogs counts the stored logs analysed with a model version below
// version.
func (db *DB) StaleLogs(ctx context.Context, version int) (int, error) {
	var n int
	err := db.pool.QueryRow(ctx, `SELECT count(*) FROM flight_logs WHERE analysis_version < $1`, version).Scan(&n)
	return n, translate(err)
}

// LogInfo describes a flight's stored log.
type LogInfo struct {
	SHA256         string   `json:"sha256"`
	Bytes          int64    `json:"bytes"`
	Samples        int      `json:"samples"`
	Columns        []string `json:"columns"`
	UnknownColumns []string `json:"unknown_columns"`
	// BlankCells counts the blank cells (no reading) per optional column;
	// a column blank in every row is absent from Columns.
	BlankCells      map[string]int `json:"blank_cells"`
	AnalysedAt      time.Time      `json:"analysed_at"`
	AnalysisVersion int            `json:"analysis_version"`
	// ColumnMap is the map the log was read through; null for the native layout.
	ColumnMap *MapRef `json:"column_map"`
}

// MapRef names a column map at a version.
type MapRef struct {
	ID      string `json:"id"`
	Name    string `json:"name"` // as of that version
	Version int    `json:"version"`
}

// FlightDetail is a flight with everything computed from its log.
type FlightDetail struct {
	*fleet.Flight
	Log       *LogInfo        `json:"log"`
	Metrics   json.RawMessage `json:"metrics"`
	MotorRuns []MotorRun      `json:"motor_runs"`
	Events    []*fleet.Event  `json:"events"`
}

// NewFlightDetail is the detail of a flight with no log.
func NewFlightDetail(f *fleet.Flight) *FlightDetail {
	return &FlightDetail{Flight: f, Metrics: json.RawMessage("null"), MotorRuns: []MotorRun{}, Events: []*fleet.Event{}}
}

// FlightDetail returns a flight with its log facts, figures, motor runs and events.
func (db *DB) FlightDetail(ctx context.Context, id string) (*FlightDetail, error) {
	f, err := db.Flight(ctx, id)
	if err != nil {
		return nil, err
	}
	d := NewFlightDetail(f)
	var li LogInfo
	var mapID, mapName *string
	var mapVersion *int
	err = db.pool.QueryRow(ctx, `
		SELECT l.sha256, l.raw_bytes, l.samples, l.columns, l.unknown_columns, l.blank_cells, l.analysed_at, l.analysis_version,
			v.map_id, v.name, v.version
		FROM flight_logs l
		LEFT JOIN column_map_versions v ON v.map_id = l.column_map_id AND v.version = l.column_map_version
		WHERE l.flight_id = $1`, id).
		Scan(&li.SHA256, &li.Bytes, &li.Samples, &li.Columns, &li.UnknownColumns, &li.BlankCells, &li.AnalysedAt, &li.AnalysisVersion,
			&mapID, &mapName, &mapVersion)
	switch {
	case err == nil:
		if mapID != nil {
			li.ColumnMap = &MapRef{ID: *mapID, Name: *mapName, Version: *mapVersion}
		}
		d.Log = &li
	case err != pgx.ErrNoRows:
		return nil, translate(err)
	}
	if err := db.pool.QueryRow(ctx, `SELECT metrics FROM flight_metrics WHERE flight_id = $1`, id).Scan(&d.Metrics); err != nil && err != pgx.ErrNoRows {
		return nil, translate(err)
	}
	rows, err := db.pool.Query(ctx, `
		SELECT position, revolutions, run_s, mean_rpm, thrust_mean_n, bins FROM motor_runs
		WHERE flight_id = $1 ORDER BY position`, id)
	if err != nil {
		return nil, translate(err)
	}
	runs, err := collect(rows, func(r pgx.Row) (MotorRun, error) {
		var m MotorRun
		return m, r.Scan(&m.Position, &m.Revolutions, &m.RunS, &m.MeanRPM, &m.ThrustMeanN, &m.Bins)
	})
	if err != nil {
		return nil, err
	}
	if runs != nil {
		d.MotorRuns = runs
	}
	d.Events, _, err = db.Events(ctx, EventFilter{FlightID: id}, Page{Limit: MaxPageSize})
	if d.Events == nil {
		d.Events = []*fleet.Event{}
	}
	return d, err
}

// RawLog returns a flight's stored compressed log.
func (db *DB) RawLog(ctx context.Context, flightID string) ([]byte, error) {
	var gz []byte
	err := db.pool.QueryRow(ctx, `SELECT raw_gz FROM flight_logs WHERE flight_id = $1`, flightID).Scan(&gz)
	if err != nil {
		return nil, translateNotFound(err, "flight log")
	}
	return gz, nil
}

func prefixed(p, cols string) string {
	out := []byte{}
	start := true
	for i := 0; i < len(cols); i++ {
		c := cols[i]
		if start && c != ' ' && c != '\t' && c != '\n' {
			out = append(out, p...)
			start = false
		}
		out = append(out, c)
		if c == ',' {
			start = true
		}
	}
	return string(out)
}

// FlightIDByLog returns the flight of an airframe recorded from the log with
// this sha256.
func (db *DB) FlightIDByLog(ctx context.Context, airframeID, sha string) (string, error) {
	var id string
	err := db.pool.QueryRow(ctx, flightByLogSQL, airframeID, sha).Scan(&id)
	if err != nil {
		return "", translateNotFound(err, "flight")
	}
	return id, nil
}
