package store

import (
	"context"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// The reads behind readiness as of a past moment: what was fitted, held,
// open and done then, judged with every record known now.

// HoldSpan is a hold in force over [From, To); To is nil while it lasts.
type HoldSpan struct {
	From   time.Time
	To     *time.Time
	Reason string
}

// Holds returns the airframe's holds, oldest first. A hold takes effect when
// it is recorded (it cannot be back-dated), so the audit log's record of the
// airframe is its hold history: each change of hold_reason opens or closes
// a span at the moment it was written.
func (db *DB) Holds(ctx context.Context, airframeID string) ([]HoldSpan, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT at, after->>'hold_reason' FROM audit_log
		WHERE entity = 'airframe' AND entity_id = $1 AND after IS NOT NULL ORDER BY id`, airframeID)
	if err != nil {
		return nil, translate(err)
	}
	type change struct {
		at     time.Time
		reason *string
	}
	changes, err := collect(rows, func(r pgx.Row) (change, error) {
		var c change
		return c, r.Scan(&c.at, &c.reason)
	})
	if err != nil {
		return nil, err
	}
	var out []HoldSpan
	var open *HoldSpan
	for _, c := range changes {
		if open != nil && (c.reason == nil || *c.reason != open.Reason) {
			to := c.at
			open.To = &to
			out = append(out, *open)
			open = nil
		}
		if open == nil && c.reason != nil {
			open = &HoldSpan{From: c.at, Reason: *c.reason}
		}
	}
	if open != nil {
		out = append(out, *open)
	}
	return out, nil
}

// StatusSpan is a part status in force from a moment on. Unretire marks a
// recorded change from retired to another status.
type StatusSpan struct {
	From     time.Time
	Status   string
	Unretire bool
}

// PartStatuses returns each part's recorded status changes, oldest first:
// the statuses written to the part (audit log: its creation and each change
// of status) and the retirements by work record at the record's own time
// (which may be earlier than its entry, even than the part's registration).
// Fitted and stock read alike: only quarantine and retirement matter to
// readiness.
func (db *DB) PartStatuses(ctx context.Context, ids []string) (map[string][]StatusSpan, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT entity_id, at, after->>'status', coalesce(before->>'status' = 'retired' AND after->>'status' <> 'retired', false)
		FROM audit_log
		WHERE entity = 'part' AND entity_id = ANY($1::text[]) AND after IS NOT NULL
		  AND (before IS NULL OR before->>'status' IS DISTINCT FROM after->>'status')
		UNION ALL
		SELECT w.part_id::text, w.at, 'retired', false FROM work_records w
		WHERE w.action = 'retire' AND w.part_id::text = ANY($1::text[])
		  AND NOT EXISTS (SELECT 1 FROM work_records c WHERE c.corrects_id = w.id)
		ORDER BY 1, 2`, ids)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string][]StatusSpan{}
	for rows.Next() {
		var id string
		var s StatusSpan
		if err := rows.Scan(&id, &s.From, &s.Status, &s.Unretire); err != nil {
			return nil, translate(err)
		}
		if s.Status == fleet.PartFitted {
			s.Status = fleet.PartStock
		}
		out[id] = append(out[id], s)
	}
	return out, translate(rows.Err())
}

// StatusAt is the status in force at the moment at ("stock" before any). A
// retirement holds until a change from retired is recorded: a registration
// entered after a back-dated retirement does not undo it.
func StatusAt(spans []StatusSpan, at time.Time) string {
	st := fleet.PartStock
	for _, s := range spans {
		if s.From.After(at) {
			break
		}
		if st != fleet.PartRetired || s.Unretire {
			st = s.Status
		}
	}
	return st
}

// FitSpan is one stay of a part on the airframe, with what judging needs
// about the part.
type FitSpan struct {
	PartID      string
	Kind        fleet.PartKind
	Serial      string
	PartNumber  *string
	Rotation    fleet.Rotation
	Position    string
	From        time.Time
	To          *time.Time
	FirstFitted time.Time // the part's first fit anywhere (a rule never done counts from it)
}

// On reports whether the part was on board at the moment at.
func (f FitSpan) On(at time.Time) bool {
	return !at.Before(f.From) && (f.To == nil || at.Before(*f.To))
}

// FitsDuring returns the airframe's fits that overlap [from, to].
func (db *DB) FitsDuring(ctx context.Context, airframeID string, from, to time.Time) ([]FitSpan, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT f.part_id, f.kind, p.serial, nullif(p.part_number, ''), coalesce(p.specs->>'rotation', ''),
			f.position, lower(f.during), upper(f.during),
			(SELECT min(lower(x.during)) FROM fits x WHERE x.part_id = f.part_id)
		FROM fits f JOIN parts p ON p.id = f.part_id
		WHERE f.airframe_id = $1 AND f.during && tstzrange($2, $3, '[]')
		ORDER BY f.kind, f.position, lower(f.during)`, airframeID, from, to)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (FitSpan, error) {
		var f FitSpan
		return f, r.Scan(&f.PartID, &f.Kind, &f.Serial, &f.PartNumber, &f.Rotation, &f.Position, &f.From, &f.To, &f.FirstFitted)
	})
}

// AirframeEvents returns the airframe's events of the kinds that took place
// before the moment before, resolved or not, oldest first.
func (db *DB) AirframeEvents(ctx context.Context, airframeID string, kinds []string, before time.Time) ([]*fleet.Event, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT `+eventCols+` FROM events
		WHERE airframe_id = $1 AND kind = ANY($2) AND at < $3 ORDER BY at`, airframeID, kinds, before)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanEvent)
}

// OpenAt reports whether an event was open at the moment at: it had
// happened and was not yet resolved.
func OpenAt(e *fleet.Event, at time.Time) bool {
	return e.At.Before(at) && (e.ResolvedAt == nil || e.ResolvedAt.After(at))
}

// AirframeSubject is the airframe as the subject of airframe rules; a rule
// never done counts from its first flight (else from its registration).
func (db *DB) AirframeSubject(ctx context.Context, a *fleet.Airframe) (Subject, error) {
	s := Subject{Kind: "airframe", ID: a.ID, Name: a.Code, AirframeID: &a.ID}
	err := db.pool.QueryRow(ctx, `
		SELECT coalesce((SELECT min(takeoff_at) FROM flights WHERE airframe_id = $1), $2)`, a.ID, a.CreatedAt).Scan(&s.Start)
	return s, translate(err)
}

// PackSubjects returns the packs as subjects of pack rules, in the order
// given; a rule never done counts from the pack's first flight (else from
// its registration). Unknown ids are left out.
func (db *DB) PackSubjects(ctx context.Context, ids []string) ([]Subject, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT 'part', p.id, p.serial, NULL::uuid, nullif(p.part_number, ''), NULL::text,
			coalesce((SELECT min(lower(airborne)) FROM flight_packs WHERE part_id = p.id), p.created_at)
		FROM unnest($1::uuid[]) WITH ORDINALITY AS g(id, n) JOIN parts p ON p.id = g.id AND p.kind = 'pack'
		ORDER BY g.n`, ids)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(row pgx.Row) (Subject, error) {
		var s Subject
		return s, row.Scan(&s.Kind, &s.ID, &s.Name, &s.AirframeID, &s.PartNumber, &s.Position, &s.Start)
	})
}
