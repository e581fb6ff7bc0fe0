package store

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const flightCols = `id, airframe_id, job_id, pilot, takeoff_at, landing_at, takeoff_mass_g, site_elevation_m,
	source, log_sha256, notes, override_reason, created_at, readiness_at_takeoff, software`

func scanFlight(row pgx.Row) (*fleet.Flight, error) { return scanFlightWith(row) }

// scanFlightWith scans flightCols followed by the extra columns.
func scanFlightWith(row pgx.Row, extra ...any) (*fleet.Flight, error) {
	var f fleet.Flight
	var verdict []byte
	dest := append([]any{&f.ID, &f.AirframeID, &f.JobID, &f.Pilot, &f.TakeoffAt, &f.LandingAt, &f.TakeoffMassG,
		&f.SiteElevationM, &f.Source, &f.LogSHA256, &f.Notes, &f.OverrideReason, &f.CreatedAt, &verdict, &f.Software}, extra...)
	if err := row.Scan(dest...); err != nil {
		return nil, err
	}
	f.Packs = []fleet.FlightPack{}
	var rd *fleet.Readiness
	if verdict != nil {
		rd = new(fleet.Readiness)
		if err := json.Unmarshal(verdict, rd); err != nil {
			return nil, err
		}
	}
	f.SetVerdict(rd)
	return &f, nil
}

// CreateFlight records a flight and its packs in one transaction. Only the
// register's integrity refuses a flight: the database refuses overlapping
// flights of one airframe and a pack in two overlapping flights, and an
// unknown airframe or pack is refused. Readiness never refuses it: a flight
// carrying a verdict that is not ready opens its flown_not_ready event in
// the same transaction.
func (db *DB) CreateFlight(ctx context.Context, f *fleet.Flight) (*fleet.Flight, error) {
	if f.Source == "" {
		f.Source = fleet.SourceManual
	}
	if err := f.Validate(); err != nil {
		return nil, err
	}
	if err := checkFlightTimes(f, db.now()); err != nil {
		return nil, err
	}
	var out *fleet.Flight
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var err error
		if out, err = insertFlight(ctx, tx, f, newID()); err != nil {
			return err
		}
		return checkSoftware(ctx, tx, out.ID)
	})
	return out, err
}

// checkFlightTimes bounds a flight's take-off and landing (fleet.CheckTime).
func checkFlightTimes(f *fleet.Flight, now time.Time) error {
	if err := fleet.CheckTime("takeoff_at", f.TakeoffAt, now); err != nil {
		return err
	}
	return fleet.CheckTime("landing_at", f.LandingAt, now)
}

// insertFlight writes the flight, its packs, its flown_not_ready event when
// its verdict says so, and the audit rows in tx. A retired airframe or pack
// does not refuse it (the flight may predate the retirement, and a flight
// that happened is a fact): the verdict says so.
func insertFlight(ctx context.Context, tx pgx.Tx, f *fleet.Flight, id string) (*fleet.Flight, error) {
	var known bool
	err := tx.QueryRow(ctx, `SELECT true FROM airframes WHERE id = $1`, f.AirframeID).Scan(&known)
	if err == pgx.ErrNoRows {
		return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "airframe_id", Message: "unknown airframe"}
	} else if err != nil {
		return nil, err
	}
	var verdict []byte // NULL until judged
	if f.ReadinessAtTakeoff != nil {
		if verdict, err = json.Marshal(f.ReadinessAtTakeoff); err != nil {
			return nil, err
		}
	}
	out, err := scanFlight(tx.QueryRow(ctx, `
		INSERT INTO flights (id, airframe_id, job_id, pilot, takeoff_at, landing_at, takeoff_mass_g,
			site_elevation_m, source, log_sha256, notes, override_reason, readiness_at_takeoff, software)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14) RETURNING `+flightCols,
		id, f.AirframeID, f.JobID, f.Pilot, f.TakeoffAt, f.LandingAt, f.TakeoffMassG,
		f.SiteElevationM, f.Source, f.LogSHA256, f.Notes, f.OverrideReason, verdict, f.Software))
	if err != nil {
		return nil, err
	}
	for i, fp := range f.Packs {
		field := fmt.Sprintf("packs[%d]", i)
		var kind, serial, pn, lot string
		err := tx.QueryRow(ctx, `SELECT kind, serial, part_number, lot FROM parts WHERE id = $1`, fp.PartID).
			Scan(&kind, &serial, &pn, &lot)
		if err == pgx.ErrNoRows {
			return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: field, Message: "unknown part"}
		} else if err != nil {
			return nil, err
		}
		if kind != string(fleet.KindPack) {
			return nil, &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: field, Message: fmt.Sprintf("part %s is a %s, not a pack", serial, kind)}
		}
		slot := fp.Slot
		if slot == 0 {
			slot = i + 1
		}
		if _, err := tx.Exec(ctx, `
			INSERT INTO flight_packs (flight_id, part_id, slot, airborne)
			VALUES ($1, $2, $3, tstzrange($4, $5, '[)'))`, out.ID, fp.PartID, slot, out.TakeoffAt, out.LandingAt); err != nil {
			return nil, err
		}
		out.Packs = append(out.Packs, fleet.FlightPack{PartID: fp.PartID, Serial: serial, PartNumber: pn, Lot: lot, Slot: slot})
	}
	if err := audit(ctx, tx, "flight", out.ID, nil, out); err != nil {
		return nil, err
	}
	if rd := out.ReadinessAtTakeoff; rd != nil && !rd.Ready {
		if _, err := insertEvent(ctx, tx, flownNotReady(out, rd)); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// flownNotReady is the event that flags a flight which took off not ready.
func flownNotReady(f *fleet.Flight, rd *fleet.Readiness) *fleet.Event {
	return &fleet.Event{At: f.TakeoffAt, Kind: fleet.EventFlownNotReady, Severity: fleet.DefaultSeverity(fleet.EventFlownNotReady),
		AirframeID: &f.AirframeID, FlightID: &f.ID, Detected: true, Detail: fleet.FlownNotReadyDetail(rd, f.OverrideReason)}
}

// Flight returns one flight with its packs.
func (db *DB) Flight(ctx context.Context, id string) (*fleet.Flight, error) {
	f, err := scanFlight(db.pool.QueryRow(ctx, `SELECT `+flightCols+` FROM flights WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "flight")
	}
	packs, err := db.flightPacks(ctx, []string{id})
	if err != nil {
		return nil, err
	}
	f.Packs = append(f.Packs, packs[id]...)
	return f, nil
}

// flightPacks returns the packs of each flight.
func (db *DB) flightPacks(ctx context.Context, ids []string) (map[string][]fleet.FlightPack, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT fp.flight_id, fp.part_id, p.serial, p.part_number, p.lot, fp.slot
		FROM flight_packs fp JOIN parts p ON p.id = fp.part_id
		WHERE fp.flight_id = ANY($1::uuid[]) ORDER BY fp.flight_id, fp.slot`, ids)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string][]fleet.FlightPack{}
	for rows.Next() {
		var fid string
		var fp fleet.FlightPack
		if err := rows.Scan(&fid, &fp.PartID, &fp.Serial, &fp.PartNumber, &fp.Lot, &fp.Slot); err != nil {
			return nil, translate(err)
		}
		out[fid] = append(out[fid], fp)
	}
	return out, translate(rows.Err())
}

// FlightFilter narrows a listing.
type FlightFilter struct {
	AirframeID string
	JobID      string
	From, To   *time.Time
}

// Flights lists flights in id order (ids are time-ordered), one keyset page.
func (db *DB) Flights(ctx context.Context, f FlightFilter, p Page) ([]*fleet.Flight, string, error) {
	after, err := p.afterID()
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+flightCols+` FROM flights
		WHERE ($1::uuid IS NULL OR id > $1)
		  AND ($2::uuid IS NULL OR airframe_id = $2) AND ($3::uuid IS NULL OR job_id = $3)
		  AND ($4::timestamptz IS NULL OR takeoff_at >= $4) AND ($5::timestamptz IS NULL OR takeoff_at < $5)
		ORDER BY id LIMIT $6`, after, nilIfEmpty(f.AirframeID), nilIfEmpty(f.JobID), f.From, f.To, p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanFlight)
	if err != nil {
		return nil, "", err
	}
	list, next, _ := page(list, p.Limit, func(f *fleet.Flight) string { return f.ID })
	ids := make([]string, len(list))
	for i, f := range list {
		ids[i] = f.ID
	}
	packs, err := db.flightPacks(ctx, ids)
	if err != nil {
		return nil, "", err
	}
	for _, f := range list {
		f.Packs = append(f.Packs, packs[f.ID]...)
	}
	return list, next, nil
}

func nilIfEmpty(s string) *string {
	if s == "" {
		return nil
	}
	return &s
}
