package store

import (
	"context"
	"encoding/json"
	"strconv"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// Subject is what a rule applies to: an airframe, or a part (fitted parts
// belong to their airframe; packs to none).
type Subject struct {
	Kind       string // airframe or part
	ID         string
	Name       string // tail code or serial
	AirframeID *string
	PartNumber *string
	Position   *string
	Start      time.Time // when counting starts if the rule was never done
}

// RuleSubjects lists the subjects of a rule, within one airframe (its own
// record and its fitted parts) when airframeID is set, or the whole fleet.
// Extra packs (e.g. the packs of a flight just ingested) join when the rule is
// a pack rule.
func (db *DB) RuleSubjects(ctx context.Context, r *fleet.ServiceRule, airframeID string, packs []string) ([]Subject, error) {
	q, args := subjectsSQL(r, airframeID, packs)
	rows, err := db.pool.Query(ctx, q, args...)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(row pgx.Row) (Subject, error) {
		var s Subject
		return s, row.Scan(&s.Kind, &s.ID, &s.Name, &s.AirframeID, &s.PartNumber, &s.Position, &s.Start)
	})
}

// subjectsSQL is the query listing a rule's subjects (kind, id, name,
// airframe_id, part_number, position, start) and its arguments ($1 to $3).
func subjectsSQL(r *fleet.ServiceRule, airframeID string, packs []string) (string, []any) {
	switch {
	case r.AppliesTo == "airframe":
		return `
			SELECT 'airframe', a.id, a.code, a.id, NULL::text, NULL::text,
				coalesce((SELECT min(takeoff_at) FROM flights WHERE airframe_id = a.id), a.created_at)
			FROM airframes a
			WHERE a.retired_at IS NULL AND ($1::uuid IS NULL OR a.id = $1) AND ($2::text IS NULL OR a.model = $2)`,
			[]any{nilIfEmpty(airframeID), r.Model}
	case r.AppliesTo == string(fleet.KindPack):
		return `
			SELECT 'part', p.id, p.serial, NULL::uuid, nullif(p.part_number, ''), NULL::text,
				coalesce((SELECT min(lower(airborne)) FROM flight_packs WHERE part_id = p.id), p.created_at)
			FROM parts p
			WHERE p.kind = 'pack' AND p.status <> 'retired' AND ($1::text IS NULL OR p.part_number = $1)
			  AND ($2::uuid IS NULL OR p.id = ANY($3::uuid[])
			       OR EXISTS (SELECT 1 FROM flight_packs fp JOIN flights f ON f.id = fp.flight_id
			                  WHERE fp.part_id = p.id AND f.airframe_id = $2))`,
			[]any{r.PartNumber, nilIfEmpty(airframeID), packs}
	default:
		return `
			SELECT 'part', p.id, p.serial, f.airframe_id, nullif(p.part_number, ''), f.position,
				(SELECT min(lower(during)) FROM fits WHERE part_id = p.id)
			FROM parts p JOIN fits f ON f.part_id = p.id AND upper_inf(f.during)
			WHERE p.kind = $1 AND p.status <> 'retired' AND ($2::text IS NULL OR p.part_number = $2)
			  AND ($3::uuid IS NULL OR f.airframe_id = $3)`,
			[]any{r.AppliesTo, r.PartNumber, nilIfEmpty(airframeID)}
	}
}

// WorkDone returns when work records against the rule covered the subject,
// oldest first. A record that a later one corrects no longer counts: the
// correction stands in its place.
func (db *DB) WorkDone(ctx context.Context, ruleID string, s Subject) ([]time.Time, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT w.at FROM work_records w
		WHERE w.rule_id = $1 AND CASE WHEN $2 = 'airframe' THEN w.airframe_id = $3 ELSE w.part_id = $3 END
		  AND NOT EXISTS (SELECT 1 FROM work_records c WHERE c.corrects_id = w.id)
		ORDER BY w.at`, ruleID, s.Kind, s.ID)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (time.Time, error) {
		var t time.Time
		return t, r.Scan(&t)
	})
}

// Use is what one flight added to a subject: time in service, one cycle,
// revolutions at its position (motors and propellers) and equivalent full
// cycles (packs).
type Use struct {
	At                         time.Time // take-off
	Hours, Revolutions, Cycles float64
}

// Uses returns the subject's flights taking off from from on (before until
// when given), oldest first: an airframe's own flights, a pack's flights,
// or the flights a part was fitted for at take-off.
func (db *DB) Uses(ctx context.Context, s Subject, from time.Time, until *time.Time) ([]Use, error) {
	var q string
	switch {
	case s.Kind == "airframe":
		q = `SELECT fl.takeoff_at, extract(epoch FROM fl.landing_at - fl.takeoff_at) / 3600, 0::float8, 0::float8
			FROM flights fl WHERE fl.airframe_id = $1 AND fl.takeoff_at >= $2
			  AND ($3::timestamptz IS NULL OR fl.takeoff_at < $3)`
	case s.AirframeID == nil: // a pack
		q = `SELECT fl.takeoff_at, extract(epoch FROM fl.landing_at - fl.takeoff_at) / 3600, 0::float8,
				coalesce(fp.charge_mah / nullif((p.specs->>'rated_mah')::float8, 0), ` + unmeasuredCycles + `)
			FROM flight_packs fp JOIN flights fl ON fl.id = fp.flight_id JOIN parts p ON p.id = fp.part_id
			WHERE fp.part_id = $1 AND fl.takeoff_at >= $2 AND ($3::timestamptz IS NULL OR fl.takeoff_at < $3)`
	default:
		q = `SELECT fl.takeoff_at, extract(epoch FROM fl.landing_at - fl.takeoff_at) / 3600,
				coalesce((SELECT revolutions FROM motor_runs mr WHERE mr.flight_id = fl.id AND mr.position = f.position), 0),
				0::float8
			FROM fits f JOIN flights fl ON ` + fitAtTakeoff + `
			WHERE f.part_id = $1 AND fl.takeoff_at >= $2 AND ($3::timestamptz IS NULL OR fl.takeoff_at < $3)`
	}
	rows, err := db.pool.Query(ctx, q+` ORDER BY 1`, s.ID, from, until)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (Use, error) {
		var u Use
		return u, r.Scan(&u.At, &u.Hours, &u.Revolutions, &u.Cycles)
	})
}

// SubjectEvents returns the events of the kinds on the subject (for an
// airframe, on it; for a part, naming it) from the moment from on, resolved
// or not, oldest first.
func (db *DB) SubjectEvents(ctx context.Context, kinds []string, s Subject, from time.Time) ([]*fleet.Event, error) {
	if len(kinds) == 0 {
		return nil, nil
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+eventCols+` FROM events
		WHERE kind = ANY($1) AND at >= $3
		  AND CASE WHEN $2 = 'airframe' THEN airframe_id = $4 ELSE part_id = $4 END
		ORDER BY at`, kinds, s.Kind, from, s.ID)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanEvent)
}

// DueChange is called for each item whose status changed, inside the
// transaction that writes the due list (for a transactional outbox).
type DueChange func(ctx context.Context, tx pgx.Tx, previous string, item *fleet.DueItem) error

// ReplaceDue rewrites the due items of a scope in one transaction: the whole
// fleet when airframeID is empty, else the airframe's items (its own and its
// parts') and those of the given subjects. Items of the scope no longer
// computed are removed. A run that fails halfway writes nothing.
func (db *DB) ReplaceDue(ctx context.Context, airframeID string, subjects []string, items []*fleet.DueItem, onChange DueChange) error {
	const inScope = `($1::uuid IS NULL OR airframe_id = $1 OR subject_id = ANY($2::uuid[]))`
	return db.inTx(ctx, func(tx pgx.Tx) error {
		prev := map[string]string{}
		rows, err := tx.Query(ctx, `
			SELECT coalesce(rule_id, notice_id)::text || '/' || subject_id::text, status FROM due_items
			WHERE `+inScope+` FOR UPDATE`, nilIfEmpty(airframeID), subjects)
		if err != nil {
			return err
		}
		for rows.Next() {
			var k, st string
			if err := rows.Scan(&k, &st); err != nil {
				rows.Close()
				return err
			}
			prev[k] = st
		}
		rows.Close()
		if _, err := tx.Exec(ctx, `DELETE FROM due_items WHERE `+inScope, nilIfEmpty(airframeID), subjects); err != nil {
			return err
		}
		copyRows := make([][]any, 0, len(items))
		for _, it := range items {
			usage, err := json.Marshal(it.Usage)
			if err != nil {
				return err
			}
			copyRows = append(copyRows, []any{it.RuleID, it.NoticeID, it.SubjectKind, it.SubjectID, it.AirframeID, it.PartNumber,
				it.LastDoneAt, it.Since, usage, it.Fraction, it.Status, it.Grounding, it.Reason, it.ForecastDate, it.ForecastReason, it.ComputedAt})
		}
		if _, err := tx.CopyFrom(ctx, pgx.Identifier{"due_items"}, []string{"rule_id", "notice_id", "subject_kind", "subject_id",
			"airframe_id", "part_number", "last_done_at", "since", "usage", "fraction", "status", "grounding", "reason",
			"forecast_date", "forecast_reason", "computed_at"}, pgx.CopyFromRows(copyRows)); err != nil {
			return err
		}
		if onChange == nil {
			return nil
		}
		for _, it := range items {
			was, ok := prev[it.Source()+"/"+it.SubjectID]
			if !ok {
				was = fleet.DueOK
			}
			if was != it.Status {
				if err := onChange(ctx, tx, was, it); err != nil {
					return err
				}
			}
		}
		return nil
	})
}

// DueFilter narrows the due list.
type DueFilter struct {
	Status     string
	AirframeID string
	SubjectID  string
	Before     *time.Time // forecast date before (or overdue)
}

// unmeasuredCycles is fleet.UnmeasuredPackCycles as SQL: what a pack's
// flight without a measured charge adds to its cycles.
var unmeasuredCycles = strconv.FormatFloat(fleet.UnmeasuredPackCycles, 'f', -1, 64) + "::float8"

// dueItemsQuery is the statement listing the due items the filter selects,
// most urgent first, with only the conditions the filter sets: a statement
// per combination, each planned once and its plan kept by the database.
// The catch-all form ("$2 IS NULL OR d.airframe_id = $2") had no generic
// plan worth keeping, so it was planned again on every call (0.18 ms, more
// than it took to run, on every readiness answer).
func dueItemsQuery(f DueFilter) (string, []any) {
	var w where
	if f.Status != "" {
		w.add(`d.status = $?`, f.Status)
	}
	if f.AirframeID != "" {
		w.add(`d.airframe_id = $?::uuid`, f.AirframeID)
	}
	if f.Before != nil {
		w.add(`(d.status = 'overdue' OR d.forecast_date < $?::timestamptz)`, *f.Before)
	}
	if f.SubjectID != "" {
		w.add(`d.subject_id = $?::uuid`, f.SubjectID)
	}
	return `SELECT ` + dueItemCols + ` FROM due_items d ` + dueItemJoins + w.sql() + ` ORDER BY ` + dueUrgency, w.args
}

// where gathers a statement's conditions and their arguments, numbering
// each condition's placeholder ($?) as it is added.
type where struct {
	conds []string
	args  []any
}

func (w *where) add(cond string, v any) {
	w.args = append(w.args, v)
	w.conds = append(w.conds, strings.ReplaceAll(cond, "$?", "$"+strconv.Itoa(len(w.args))))
}

// sql is the WHERE clause, empty without conditions.
func (w *where) sql() string {
	if len(w.conds) == 0 {
		return ""
	}
	return ` WHERE ` + strings.Join(w.conds, ` AND `)
}

// dueItemCols, dueItemJoins and dueUrgency are a due item as the due list
// reads it (d is due_items) and its order, most urgent first; the last keys
// only make ties come out the same way in every query that reads the list
// (the fleet page reads a part of it: see fleetDueSQL).
const (
	dueItemCols = `d.rule_id, d.notice_id, coalesce(r.name, n.reference || ' rev ' || n.revision || ': ' || n.title),
			coalesce(r.action, 'comply'), d.subject_kind, d.subject_id,
			coalesce(a.code, p.serial, ''), d.airframe_id, d.part_number, d.last_done_at, d.since, d.usage,
			d.fraction, d.status, d.grounding, d.reason, d.forecast_date, d.forecast_reason, d.computed_at`
	dueItemJoins = `LEFT JOIN service_rules r ON r.id = d.rule_id LEFT JOIN notices n ON n.id = d.notice_id
		LEFT JOIN airframes a ON d.subject_kind = 'airframe' AND a.id = d.subject_id
		LEFT JOIN parts p ON d.subject_kind = 'part' AND p.id = d.subject_id`
	dueUrgency = `CASE d.status WHEN 'overdue' THEN 0 WHEN 'due_soon' THEN 1 ELSE 2 END,
			d.forecast_date NULLS LAST, d.fraction DESC, d.subject_id, coalesce(d.rule_id, d.notice_id)`
)

func scanDueItem(r pgx.Row) (*fleet.DueItem, error) {
	d, usage, err := scanDueItemRaw(r)
	if err != nil {
		return nil, err
	}
	return d, json.Unmarshal(usage, &d.Usage)
}

// scanDueItemRaw scans a due item leaving its usage undecoded.
func scanDueItemRaw(r pgx.Row) (*fleet.DueItem, []byte, error) {
	var d fleet.DueItem
	var usage []byte
	err := r.Scan(&d.RuleID, &d.NoticeID, &d.RuleName, &d.Action, &d.SubjectKind, &d.SubjectID, &d.Subject, &d.AirframeID,
		&d.PartNumber, &d.LastDoneAt, &d.Since, &usage, &d.Fraction, &d.Status, &d.Grounding, &d.Reason,
		&d.ForecastDate, &d.ForecastReason, &d.ComputedAt)
	return &d, usage, err
}

// DueItems lists due items, most urgent first.
func (db *DB) DueItems(ctx context.Context, f DueFilter) ([]*fleet.DueItem, error) {
	q, args := dueItemsQuery(f)
	rows, err := db.pool.Query(ctx, q, args...)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanDueItem)
}

// StockByPartNumber counts the parts in stock per part number.
func (db *DB) StockByPartNumber(ctx context.Context) (map[string]int, error) {
	rows, err := db.pool.Query(ctx, `
		SELECT part_number, count(*) FROM parts WHERE status = 'stock' AND part_number <> '' GROUP BY part_number`)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := map[string]int{}
	for rows.Next() {
		var pn string
		var n int
		if err := rows.Scan(&pn, &n); err != nil {
			return nil, translate(err)
		}
		out[pn] = n
	}
	return out, translate(rows.Err())
}

// FittedRotor is a motor or propeller fitted now, with its rotation.
type FittedRotor struct {
	Kind     fleet.PartKind
	Serial   string
	Position string
	Rotation fleet.Rotation
}

// ReadinessFacts is what a readiness answer reads about an airframe, in a
// few queries: the airframe and its layout, the rotor parts fitted at the
// moment with their rotation, the rotor places left empty, its open crash
// and hard-landing events, and the due items of it and its parts.
type ReadinessFacts struct {
	Airframe *fleet.Airframe
	Layout   *fleet.Layout
	Rotors   []FittedRotor
	Empty    []EmptyPlace
	Events   []*fleet.Event
	Due      []*fleet.DueItem
}

// ReadinessFacts loads the facts of a readiness answer at the moment at.
func (db *DB) ReadinessFacts(ctx context.Context, airframeID string, at time.Time) (*ReadinessFacts, error) {
	a, err := db.Airframe(ctx, airframeID)
	if err != nil {
		return nil, err
	}
	l, err := db.Layout(ctx, a.Layout)
	if err != nil {
		return nil, err
	}
	rf := &ReadinessFacts{Airframe: a, Layout: l}
	rows, err := db.pool.Query(ctx, rotorsAtSQL+` AND f.airframe_id = $2 ORDER BY f.kind, f.position`, at, airframeID)
	if err != nil {
		return nil, translate(err)
	}
	err = eachRotor(rows, func(_ string, fr FittedRotor) { rf.Rotors = append(rf.Rotors, fr) })
	if err != nil {
		return nil, err
	}
	rf.Empty = emptyRotorPlaces(l, rf.Rotors)
	rows, err = db.pool.Query(ctx, groundingEventsSQL+` AND airframe_id = $1 ORDER BY at`, airframeID)
	if err != nil {
		return nil, translate(err)
	}
	if rf.Events, err = collect(rows, scanEvent); err != nil {
		return nil, err
	}
	rf.Due, err = db.DueItems(ctx, DueFilter{AirframeID: airframeID})
	return rf, err
}

// rotorsAtSQL lists the motors and propellers fitted at $1 with their
// rotation; callers add the airframe condition and the order.
const rotorsAtSQL = `
		SELECT f.airframe_id, f.kind, p.serial, f.position, coalesce(p.specs->>'rotation', '')
		FROM fits f JOIN parts p ON p.id = f.part_id
		WHERE f.during @> $1::timestamptz AND f.kind IN ('motor', 'propeller')`

// groundingEventsSQL lists the open events that ground an airframe until
// resolved; callers add the airframe condition and the order.
const groundingEventsSQL = `
		SELECT ` + eventCols + ` FROM events
		WHERE resolved_at IS NULL AND kind IN ('crash', 'hard_landing')`

func eachRotor(rows pgx.Rows, fn func(airframeID string, fr FittedRotor)) error {
	defer rows.Close()
	for rows.Next() {
		var id string
		var fr FittedRotor
		if err := rows.Scan(&id, &fr.Kind, &fr.Serial, &fr.Position, &fr.Rotation); err != nil {
			return translate(err)
		}
		fn(id, fr)
	}
	return translate(rows.Err())
}

func emptyRotorPlaces(l *fleet.Layout, rotors []FittedRotor) []EmptyPlace {
	parts := make([]fleet.FittedPart, len(rotors))
	for i, r := range rotors {
		parts[i] = fleet.FittedPart{Kind: r.Kind, Position: r.Position}
	}
	return EmptyPlaces(l, parts)
}
