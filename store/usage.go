package store

import (
	"context"
	"encoding/json"
	"fmt"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// UsageSum is what a subject went through over a stretch: time in service,
// flights, revolutions at its position (motors and propellers) and
// equivalent full cycles (packs).
type UsageSum struct {
	Hours, Flights, Revolutions, Cycles float64
}

// SubjectUsage is one subject of a rule with its usage summed by the
// database: the latest work record against the rule (nil: never done), the
// moment counting starts (that record, else the subject's start), the use
// from then on, and the use over the trailing window from recentFrom on.
type SubjectUsage struct {
	Subject
	LastDone *time.Time
	Since    time.Time
	Used     UsageSum
	Recent   UsageSum
}

// RuleUsage lists the subjects of a rule as RuleSubjects does, each with its
// usage summed in one statement: the same flights Uses returns (an
// airframe's own, a pack's, or those a part was fitted for at take-off),
// counted from the last work record on and over the window from recentFrom
// on. It reads no flight row into Go, so a fleet's due list costs a
// statement per rule, not rows per flight.
func (db *DB) RuleUsage(ctx context.Context, r *fleet.ServiceRule, airframeID string, packs []string, recentFrom time.Time) ([]SubjectUsage, error) {
	q, args := RuleUsageSQL(r, airframeID, packs)
	rows, err := db.pool.Query(ctx, q, append(args, r.ID, recentFrom)...)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(row pgx.Row) (SubjectUsage, error) {
		var s SubjectUsage
		return s, row.Scan(&s.Kind, &s.ID, &s.Name, &s.AirframeID, &s.PartNumber, &s.Position, &s.Start,
			&s.LastDone, &s.Since, &s.Used.Hours, &s.Used.Flights, &s.Used.Revolutions, &s.Used.Cycles,
			&s.Recent.Hours, &s.Recent.Flights, &s.Recent.Revolutions, &s.Recent.Cycles)
	})
}

// RuleUsageSQL is RuleUsage's statement and its leading arguments; the rule
// id and recentFrom follow them (exported for the benchmark's floor).
func RuleUsageSQL(r *fleet.ServiceRule, airframeID string, packs []string) (string, []any) {
	subjects, args := subjectsSQL(r, airframeID, packs)
	rule, recent := fmt.Sprintf("$%d::uuid", len(args)+1), fmt.Sprintf("$%d::timestamptz", len(args)+2)
	// d: the subjects with their last work record and counting start,
	// materialized so each is read once, not once per reference. A record
	// a later one corrects no longer counts (WorkDone's rule); judging now,
	// the latest of them all counts.
	q := `
		WITH s (kind, id, name, airframe_id, part_number, position, start) AS (` + subjects + `),
		d AS MATERIALIZED (
			SELECT s.*, w.last, coalesce(w.last, s.start) AS since FROM s
			LEFT JOIN LATERAL (
				SELECT max(w.at) AS last FROM work_records w
				WHERE w.rule_id = ` + rule + ` AND CASE WHEN s.kind = 'airframe' THEN w.airframe_id = s.id ELSE w.part_id = s.id END
				  AND NOT EXISTS (SELECT 1 FROM work_records c WHERE c.corrects_id = w.id)) w ON true)`
	cols := `d.kind, d.id, d.name, d.airframe_id, d.part_number, d.position, d.start, d.last, d.since`
	if r.FlightHours == nil && r.Flights == nil && r.Revolutions == nil && r.Cycles == nil {
		// No limit counts use (days, events, health only): nothing to sum.
		// (The window is named only to keep the parameters the same.)
		return q + `
		SELECT ` + cols + `, 0::float8, 0::float8, 0::float8, 0::float8, 0::float8, 0::float8, 0::float8, 0::float8
		FROM d WHERE ` + recent + ` IS NOT NULL`, args
	}
	// The use of each subject from its counting start and over the window:
	// time in the air (summed as intervals, exact integer microseconds,
	// turned into float8 hours once per subject: no numeric arithmetic per
	// flight), flights, revolutions, cycles.
	sums := func(from string) string {
		return `sum(u.air) FILTER (WHERE u.t >= ` + from + `), count(*) FILTER (WHERE u.t >= ` + from + `),
				coalesce(sum(u.rev) FILTER (WHERE u.t >= ` + from + `), 0), coalesce(sum(u.cyc) FILTER (WHERE u.t >= ` + from + `), 0)`
	}
	agg := func(subject, flights string) string {
		return `SELECT ` + sums(subject+".since") + `, ` + sums(recent) + ` FROM (` + flights + `) u`
	}
	const out = `air, n, rev, cyc, recent_air, recent_n, recent_rev, recent_cyc`
	// (a part with no flights has no sums: nulls become zeros.)
	final := `coalesce(` + hoursOf("a.air") + `, 0), coalesce(a.n, 0)::float8, coalesce(a.rev, 0), coalesce(a.cyc, 0),
			coalesce(` + hoursOf("a.recent_air") + `, 0), coalesce(a.recent_n, 0)::float8, coalesce(a.recent_rev, 0),
			coalesce(a.recent_cyc, 0)`
	// The flights of each subject x from the earlier of its counting start
	// and the window on, as Uses reads them: take-off, time in the air,
	// revolutions, cycles.
	switch {
	case r.AppliesTo == "airframe":
		flights := `SELECT fl.takeoff_at AS t, fl.landing_at - fl.takeoff_at AS air, 0::float8 AS rev, 0::float8 AS cyc
			FROM flights fl WHERE fl.airframe_id = d.id AND fl.takeoff_at >= least(d.since, ` + recent + `)`
		return q + `
		SELECT ` + cols + `, ` + final + `
		FROM d CROSS JOIN LATERAL (` + agg("d", flights) + `) a (` + out + `)`, args
	case r.AppliesTo == string(fleet.KindPack):
		flights := `SELECT fl.takeoff_at AS t, fl.landing_at - fl.takeoff_at AS air, 0::float8 AS rev,
				coalesce(fp.charge_mah / nullif((p.specs->>'rated_mah')::float8, 0), ` + unmeasuredCycles + `) AS cyc
			FROM flight_packs fp JOIN flights fl ON fl.id = fp.flight_id JOIN parts p ON p.id = fp.part_id
			WHERE fp.part_id = d.id AND fl.takeoff_at >= least(d.since, ` + recent + `)`
		return q + `
		SELECT ` + cols + `, ` + final + `
		FROM d CROSS JOIN LATERAL (` + agg("d", flights) + `) a (` + out + `)`, args
	}
	// A part: the flights its fits were on board for (fitAtTakeoff). Parts
	// fitted over the same span of the same airframe and counting from the
	// same moment share their flights (a quad's four propellers fitted
	// together), so each distinct span is summed once and its sums go to
	// every part that had it; a part's fits never overlap, so the sums
	// over its spans add up. Revolutions depend on the position, which
	// then joins the span; motor_runs has one row per flight and position
	// (its key), so its join adds no flights.
	pos, rev, runs := `NULL::text`, `0::float8`, ``
	if r.Revolutions != nil {
		pos, rev = `f.position`, `coalesce(mr.revolutions, 0)`
		runs = `LEFT JOIN motor_runs mr ON mr.flight_id = fl.id AND mr.position = x.pos`
	}
	flights := `SELECT fl.takeoff_at AS t, fl.landing_at - fl.takeoff_at AS air, ` + rev + ` AS rev, 0::float8 AS cyc
			FROM flights fl ` + runs + `
			WHERE fl.airframe_id = x.airframe_id AND fl.takeoff_at >= x.lo AND (x.hi IS NULL OR fl.takeoff_at < x.hi)
			  AND fl.takeoff_at >= least(x.since, ` + recent + `)`
	return q + `,
		span AS MATERIALIZED (
			SELECT f.airframe_id, lower(f.during) AS lo, upper(f.during) AS hi, ` + pos + ` AS pos, d.since,
				array_agg(d.id) AS parts
			FROM d JOIN fits f ON f.part_id = d.id
			GROUP BY 1, 2, 3, 4, 5),
		a AS (
			SELECT p.id, sum(a.air) AS air, sum(a.n) AS n, sum(a.rev) AS rev, sum(a.cyc) AS cyc,
				sum(a.recent_air) AS recent_air, sum(a.recent_n) AS recent_n, sum(a.recent_rev) AS recent_rev,
				sum(a.recent_cyc) AS recent_cyc
			FROM span x CROSS JOIN LATERAL (` + agg("x", flights) + `) a (` + out + `)
			CROSS JOIN unnest(x.parts) AS p (id)
			GROUP BY p.id)
		SELECT ` + cols + `, ` + final + `
		FROM d LEFT JOIN a ON a.id = d.id`, args
}

// hoursOf turns an interval expression into float8 hours.
func hoursOf(interval string) string {
	return `extract(epoch FROM ` + interval + `)::float8 / 3600`
}

// ScopeEvents returns the events of the kinds in a scope, oldest first: the
// whole fleet when airframeID is empty, else those on the airframe or naming
// one of the parts (SubjectEvents for many subjects in one read; the caller
// matches each to its subject).
func (db *DB) ScopeEvents(ctx context.Context, kinds []string, airframeID string, parts []string) ([]*fleet.Event, error) {
	if len(kinds) == 0 {
		return nil, nil
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+eventCols+` FROM events
		WHERE kind = ANY($1) AND ($2::uuid IS NULL OR airframe_id = $2 OR part_id = ANY($3::uuid[]))
		ORDER BY at`, kinds, nilIfEmpty(airframeID), parts)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanEvent)
}

// PartHealths returns the stored health views of the parts, by part (a part
// never computed is missing).
func (db *DB) PartHealths(ctx context.Context, partIDs []string) (map[string]json.RawMessage, error) {
	return db.views(ctx, `SELECT part_id::text, view FROM part_health WHERE part_id = ANY($1::uuid[])`, partIDs)
}

// AirframeTrendsOf returns the stored trends of the airframes, by airframe (an
// airframe never computed is missing).
func (db *DB) AirframeTrendsOf(ctx context.Context, airframeIDs []string) (map[string]json.RawMessage, error) {
	return db.views(ctx, `SELECT airframe_id::text, view FROM airframe_trends WHERE airframe_id = ANY($1::uuid[])`, airframeIDs)
}

func (db *DB) views(ctx context.Context, q string, ids []string) (map[string]json.RawMessage, error) {
	rows, err := db.pool.Query(ctx, q, ids)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	out := make(map[string]json.RawMessage, len(ids))
	for rows.Next() {
		var id string
		var v json.RawMessage
		if err := rows.Scan(&id, (*[]byte)(&v)); err != nil {
			return nil, translate(err)
		}
		out[id] = v
	}
	return out, translate(rows.Err())
}
