package store

import (
	"context"
	"fmt"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// registerSoftware starts a new part's software history with the version
// given at registration, held from the start (nothing earlier is known).
func registerSoftware(ctx context.Context, tx pgx.Tx, p *fleet.Part) error {
	if p.SoftwareVersion == nil {
		return nil
	}
	_, err := tx.Exec(ctx, `INSERT INTO part_software (id, part_id, version, during) VALUES ($1, $2, $3, '(,)')`,
		newID(), p.ID, *p.SoftwareVersion)
	return err
}

// checkUpdate checks an update record against the register before it is
// written: the part carries software, software_from (filled in when left
// out) is what the register holds, and the record comes after the current
// version was installed. The airframe is the one the part is fitted to.
func checkUpdate(ctx context.Context, tx pgx.Tx, w *fleet.WorkRecord) error {
	p, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1 FOR UPDATE`, *w.PartID))
	if err == pgx.ErrNoRows {
		return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id", Message: "unknown part"}
	} else if err != nil {
		return err
	}
	if !p.Kind.CarriesSoftware() {
		return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "part_id",
			Message: fmt.Sprintf("a %s carries no software version; %v do", p.Kind, fleet.SoftwareKinds)}
	}
	cur := p.SoftwareVersion
	switch {
	case w.SoftwareFrom != nil && cur == nil:
		return &fleet.Error{Code: fleet.ECONFLICT, Field: "software_from",
			Message: fmt.Sprintf("the register has no software version for %s; leave software_from out", p.Serial)}
	case w.SoftwareFrom != nil && !fleet.SameVersion(*cur, *w.SoftwareFrom):
		return &fleet.Error{Code: fleet.ECONFLICT, Field: "software_from",
			Message: fmt.Sprintf("the register says %s runs %s", p.Serial, *cur)}
	case cur != nil && fleet.SameVersion(*cur, *w.SoftwareTo):
		return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "software_to",
			Message: fmt.Sprintf("%s already runs %s", p.Serial, *cur)}
	}
	w.SoftwareFrom = cur
	var since *time.Time
	err = tx.QueryRow(ctx, `SELECT lower(during) FROM part_software WHERE part_id = $1 AND upper_inf(during)`, p.ID).Scan(&since)
	if err != nil && err != pgx.ErrNoRows {
		return err
	}
	if since != nil && !w.At.After(*since) {
		return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "at",
			Message: fmt.Sprintf("must be after the current version was installed (%s)", since.UTC().Format(time.RFC3339))}
	}
	if w.AirframeID == nil {
		var af string
		err := tx.QueryRow(ctx, `SELECT airframe_id FROM fits WHERE part_id = $1 AND during @> $2::timestamptz`, p.ID, w.At).Scan(&af)
		if err == nil {
			w.AirframeID = &af
		} else if err != pgx.ErrNoRows {
			return err
		}
	}
	return nil
}

// installSoftware writes an update record's effect: the running version's
// span ends at the record, the new one starts, and the part carries it.
func installSoftware(ctx context.Context, tx pgx.Tx, w *fleet.WorkRecord) error {
	before, err := scanPart(tx.QueryRow(ctx, `SELECT `+partCols+` FROM parts WHERE id = $1`, *w.PartID))
	if err != nil {
		return err
	}
	if _, err := tx.Exec(ctx, `
		UPDATE part_software SET during = tstzrange(lower(during), $2, '[)') WHERE part_id = $1 AND upper_inf(during)`,
		*w.PartID, w.At); err != nil {
		return err
	}
	if _, err := tx.Exec(ctx, `
		INSERT INTO part_software (id, part_id, version, during, work_record_id)
		VALUES ($1, $2, $3, tstzrange($4, NULL, '[)'), $5)`, newID(), *w.PartID, *w.SoftwareTo, w.At, w.ID); err != nil {
		return err
	}
	after, err := scanPart(tx.QueryRow(ctx, `
		UPDATE parts SET software_version = $2, version = version + 1, updated_at = now()
		WHERE id = $1 RETURNING `+partCols, *w.PartID, *w.SoftwareTo))
	if err != nil {
		return err
	}
	return audit(ctx, tx, "part", after.ID, before, after)
}

// SoftwareHistory lists the versions a part ran, newest first.
func (db *DB) SoftwareHistory(ctx context.Context, partID string) ([]fleet.SoftwareSpan, error) {
	if _, err := db.Part(ctx, partID); err != nil {
		return nil, err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT version, lower(during), upper(during), work_record_id FROM part_software
		WHERE part_id = $1 ORDER BY lower(during) DESC NULLS LAST`, partID)
	if err != nil {
		return nil, translate(err)
	}
	list, err := collect(rows, func(r pgx.Row) (fleet.SoftwareSpan, error) {
		var s fleet.SoftwareSpan
		return s, r.Scan(&s.Version, &s.From, &s.To, &s.WorkRecordID)
	})
	if list == nil {
		list = []fleet.SoftwareSpan{}
	}
	return list, err
}

// checkSoftware compares what a flight says it ran (its log's '# software:'
// line) with the versions the register holds for the parts fitted at
// take-off, and opens a software_mismatch event for each kind that differs.
// A mismatch already recorded for the flight and resolved is not reopened.
func checkSoftware(ctx context.Context, tx pgx.Tx, flightID string) error {
	var airframeID string
	var takeoff time.Time
	var reported *string
	if err := tx.QueryRow(ctx, `SELECT airframe_id, takeoff_at, software FROM flights WHERE id = $1`, flightID).
		Scan(&airframeID, &takeoff, &reported); err != nil {
		return err
	}
	if reported == nil {
		return nil
	}
	report, err := fleet.ParseSoftwareReport(*reported)
	if err != nil {
		return err
	}
	var resolved bool
	if err := tx.QueryRow(ctx, `SELECT EXISTS (SELECT 1 FROM events WHERE flight_id = $1 AND kind = 'software_mismatch')`,
		flightID).Scan(&resolved); err != nil || resolved {
		return err
	}
	for _, kind := range fleet.SoftwareKinds {
		ran, ok := report[kind]
		if !ok {
			continue
		}
		rows, err := tx.Query(ctx, `
			SELECT p.id, p.serial, ps.version FROM fits f JOIN parts p ON p.id = f.part_id
			LEFT JOIN part_software ps ON ps.part_id = p.id AND ps.during @> $3::timestamptz
			WHERE f.airframe_id = $1 AND f.kind = $2 AND f.during @> $3::timestamptz ORDER BY p.serial`,
			airframeID, kind, takeoff)
		if err != nil {
			return err
		}
		type fitted struct {
			id, serial string
			version    *string
		}
		parts, err := collect(rows, func(r pgx.Row) (fitted, error) {
			var f fitted
			return f, r.Scan(&f.id, &f.serial, &f.version)
		})
		if err != nil {
			return err
		}
		var said []string
		match := false
		for _, p := range parts {
			v := "no version"
			if p.version != nil {
				v = *p.version
				match = match || fleet.SameVersion(v, ran)
			}
			said = append(said, p.serial+" "+v)
		}
		if match {
			continue
		}
		e := &fleet.Event{At: takeoff, Kind: "software_mismatch", Severity: fleet.DefaultSeverity("software_mismatch"),
			AirframeID: &airframeID, FlightID: &flightID, Detected: true}
		if len(parts) == 0 {
			e.Detail = fmt.Sprintf("the flight ran %s %s but the register has no %s fitted at take-off", kind, ran, kind)
		} else {
			e.Detail = fmt.Sprintf("the flight ran %s %s but the register says %s", kind, ran, strings.Join(said, ", "))
			if len(parts) == 1 {
				e.PartID = &parts[0].id
			}
		}
		if _, err := insertEvent(ctx, tx, e); err != nil {
			return err
		}
	}
	return nil
}
