package store

import (
	"context"
	"strconv"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const eventCols = `id, at, kind, severity, airframe_id, part_id, flight_id, detail, resolved_at, resolution,
	resolved_by, detected, created_by, version, created_at`

func scanEvent(row pgx.Row) (*fleet.Event, error) {
	var e fleet.Event
	err := row.Scan(&e.ID, &e.At, &e.Kind, &e.Severity, &e.AirframeID, &e.PartID, &e.FlightID, &e.Detail,
		&e.ResolvedAt, &e.Resolution, &e.ResolvedBy, &e.Detected, &e.CreatedBy, &e.Version, &e.CreatedAt)
	if err != nil {
		return nil, err
	}
	return &e, nil
}

// CreateEvent records an event.
func (db *DB) CreateEvent(ctx context.Context, e *fleet.Event) (*fleet.Event, error) {
	if e.Severity == "" {
		e.Severity = fleet.DefaultSeverity(e.Kind)
	}
	if err := e.Validate(); err != nil {
		return nil, err
	}
	if err := fleet.CheckTime("at", e.At, db.now()); err != nil {
		return nil, err
	}
	var out *fleet.Event
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var err error
		out, err = insertEvent(ctx, tx, e)
		return err
	})
	return out, err
}

func insertEvent(ctx context.Context, tx pgx.Tx, e *fleet.Event) (*fleet.Event, error) {
	out, err := scanEvent(tx.QueryRow(ctx, `
		INSERT INTO events (id, at, kind, severity, airframe_id, part_id, flight_id, detail, detected, created_by)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10) RETURNING `+eventCols,
		newID(), e.At, e.Kind, e.Severity, e.AirframeID, e.PartID, e.FlightID, e.Detail, e.Detected, actingKey(ctx)))
	if err != nil {
		return nil, err
	}
	return out, audit(ctx, tx, "event", out.ID, nil, out)
}

// Event returns one event.
func (db *DB) Event(ctx context.Context, id string) (*fleet.Event, error) {
	e, err := scanEvent(db.pool.QueryRow(ctx, `SELECT `+eventCols+` FROM events WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "event")
	}
	return e, nil
}

// EventFilter narrows a listing.
type EventFilter struct {
	AirframeID, PartID, FlightID, Kind string
	Open                               *bool // true: unresolved only; false: resolved only
}

// eventsQuery is the statement listing the events a filter selects, one
// page (one more than the page, to tell whether another follows), with only
// the conditions the filter and page set: as dueItemsQuery, one statement
// per combination, so the database keeps a plan for each instead of
// planning a catch-all form on every call (a refresh lists events for
// every propeller and pack it computes).
func eventsQuery(f EventFilter, p Page) (string, []any, error) {
	after, err := p.afterID()
	if err != nil {
		return "", nil, err
	}
	var w where
	if after != nil {
		w.add(`id > $?::uuid`, *after)
	}
	if f.AirframeID != "" {
		w.add(`airframe_id = $?::uuid`, f.AirframeID)
	}
	if f.PartID != "" {
		w.add(`part_id = $?::uuid`, f.PartID)
	}
	if f.FlightID != "" {
		w.add(`flight_id = $?::uuid`, f.FlightID)
	}
	if f.Kind != "" {
		w.add(`kind = $?`, f.Kind)
	}
	if f.Open != nil {
		w.add(`(resolved_at IS NULL) = $?::boolean`, *f.Open)
	}
	args := append(w.args, p.Limit+1)
	return `SELECT ` + eventCols + ` FROM events` + w.sql() + ` ORDER BY id LIMIT $` + strconv.Itoa(len(args)), args, nil
}

// Events lists events in id order, one keyset page.
func (db *DB) Events(ctx context.Context, f EventFilter, p Page) ([]*fleet.Event, string, error) {
	q, args, err := eventsQuery(f, p)
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, q, args...)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanEvent)
	if err != nil {
		return nil, "", err
	}
	return page(list, p.Limit, func(e *fleet.Event) string { return e.ID })
}

// EventPatch changes an event: detail, severity, or resolution.
type EventPatch struct {
	Detail     *string
	Severity   *string
	Resolved   *bool
	Resolution *string
}

// UpdateEvent applies a patch at version. Resolving records who resolved it
// and when; reopening is refused (a new event records a recurrence).
func (db *DB) UpdateEvent(ctx context.Context, id string, version int, p EventPatch) (*fleet.Event, error) {
	var out *fleet.Event
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanEvent(tx.QueryRow(ctx, `SELECT `+eventCols+` FROM events WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "event")
		}
		if before.Version != version {
			return versionMismatch()
		}
		a := actorFrom(ctx)
		if err := fleet.CheckEventEdit(before, a.Role, a.KeyID, p.Resolved != nil && *p.Resolved && before.ResolvedAt == nil); err != nil {
			return err
		}
		e := clone(before)
		if p.Detail != nil {
			e.Detail = *p.Detail
		}
		if p.Severity != nil {
			e.Severity = *p.Severity
		}
		resolve := false
		if p.Resolved != nil {
			switch {
			case *p.Resolved && before.ResolvedAt == nil:
				if p.Resolution == nil || !fleet.Visible(*p.Resolution) {
					return fleet.FieldError("resolution", "say how the event was resolved")
				}
				resolve = true
			case !*p.Resolved && before.ResolvedAt != nil:
				return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "resolved", Message: "a resolved event cannot be reopened; record a new event"}
			}
		} else if p.Resolution != nil {
			return fleet.FieldError("resolved", "set resolved to true with a resolution")
		}
		if err := e.Validate(); err != nil {
			return err
		}
		by := actorFrom(ctx).Name
		out, err = scanEvent(tx.QueryRow(ctx, `
			UPDATE events SET detail = $2, severity = $3,
				resolved_at = CASE WHEN $4 THEN now() ELSE resolved_at END,
				resolution = CASE WHEN $4 THEN $5 ELSE resolution END,
				resolved_by = CASE WHEN $4 THEN $6 ELSE resolved_by END,
				version = version + 1
			WHERE id = $1 RETURNING `+eventCols, id, e.Detail, e.Severity, resolve, p.Resolution, by))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "event", id, before, out)
	})
	return out, err
}
