package store

import (
	"context"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// WorkActions are the work-record actions a monthly summary counts.
var WorkActions = []string{"inspect", "service", "repair", "replace", "retire", "update"}

// MonthlyLine is one airframe's month (or the fleet's total).
type MonthlyLine struct {
	AirframeID  *string `json:"airframe_id"` // nil: the total, or work on parts fitted nowhere
	Airframe    string  `json:"airframe"`
	Model       string  `json:"model"`
	Flights     int     `json:"flights"`
	FlightHours float64 `json:"flight_hours"`
	// FlownNotReady counts flights that took off while the airframe was not
	// ready: their verdict at take-off says so, or a flown_not_ready event
	// flags them.
	FlownNotReady        int            `json:"flown_not_ready"`
	WorkRecords          int            `json:"work_records"`
	Maintenance          map[string]int `json:"maintenance"` // by action
	NoticesComplied      int            `json:"notices_complied"`
	Events               int            `json:"events"`
	EventsByKind         map[string]int `json:"events_by_kind"`
	DiscrepanciesFound   int            `json:"discrepancies_found"`
	DiscrepanciesCleared int            `json:"discrepancies_cleared"`
}

// MonthlyReport summarises a calendar month (UTC) per airframe.
type MonthlyReport struct {
	Month     string         `json:"month"` // YYYY-MM
	From      time.Time      `json:"from"`
	To        time.Time      `json:"to"`
	Airframes []*MonthlyLine `json:"airframes"`
	Total     *MonthlyLine   `json:"total"`
}

func newLine(id *string, code, model string) *MonthlyLine {
	l := &MonthlyLine{AirframeID: id, Airframe: code, Model: model, Maintenance: map[string]int{}, EventsByKind: map[string]int{}}
	for _, a := range WorkActions {
		l.Maintenance[a] = 0
	}
	for _, k := range fleet.EventKinds {
		l.EventsByKind[k] = 0
	}
	return l
}

// airframeAt resolves the airframe of a record about a part: the one the
// part was fitted to at the moment ($t), as SQL.
func airframeAt(airframe, part, at string) string {
	return `coalesce(` + airframe + `, (SELECT f.airframe_id FROM fits f WHERE f.part_id = ` + part +
		` AND f.during @> ` + at + ` LIMIT 1))`
}

// Monthly summarises the month starting at from: flights and hours, flights
// flown not ready, maintenance actions, notices complied with, events
// (malfunctions and others) and discrepancies, per airframe, with totals.
func (db *DB) Monthly(ctx context.Context, from time.Time) (*MonthlyReport, error) {
	to := from.AddDate(0, 1, 0)
	rep := &MonthlyReport{Month: from.Format("2006-01"), From: from, To: to, Airframes: []*MonthlyLine{}}
	lines := map[string]*MonthlyLine{}
	var order []*MonthlyLine
	var loose *MonthlyLine // work on parts fitted to no airframe
	line := func(id *string) *MonthlyLine {
		if id == nil {
			if loose == nil {
				loose = newLine(nil, "(parts not fitted)", "")
			}
			return loose
		}
		return lines[*id]
	}
	tx, err := db.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return nil, translate(err)
	}
	defer tx.Rollback(ctx)
	err = each(ctx, tx, `
		SELECT id, code, model FROM airframes
		WHERE created_at < $2 AND (retired_at IS NULL OR retired_at >= $1)
		   OR id IN (SELECT airframe_id FROM flights WHERE takeoff_at >= $1 AND takeoff_at < $2)
		ORDER BY code`, []any{from, to}, func(r pgx.Rows) error {
		var id, code, model string
		if err := r.Scan(&id, &code, &model); err != nil {
			return err
		}
		l := newLine(&id, code, model)
		lines[id] = l
		order = append(order, l)
		return nil
	})
	if err == nil {
		err = each(ctx, tx, `
			SELECT f.airframe_id, count(*), coalesce(sum(extract(epoch FROM f.landing_at - f.takeoff_at)) / 3600, 0),
				count(*) FILTER (WHERE (f.readiness_at_takeoff->>'ready')::boolean IS FALSE
					OR EXISTS (SELECT 1 FROM events e WHERE e.flight_id = f.id AND e.kind = 'flown_not_ready'))
			FROM flights f WHERE f.takeoff_at >= $1 AND f.takeoff_at < $2 GROUP BY f.airframe_id`, []any{from, to},
			func(r pgx.Rows) error {
				var id string
				var n, notReady int
				var h float64
				if err := r.Scan(&id, &n, &h, &notReady); err != nil {
					return err
				}
				if l := line(&id); l != nil {
					l.Flights, l.FlightHours, l.FlownNotReady = n, h, notReady
				}
				return nil
			})
	}
	if err == nil {
		err = each(ctx, tx, `
			SELECT `+airframeAt("w.airframe_id", "w.part_id", "w.at")+` AS af, w.action, count(*), count(w.notice_id)
			FROM work_records w WHERE w.at >= $1 AND w.at < $2 GROUP BY 1, 2`, []any{from, to}, func(r pgx.Rows) error {
			var id *string
			var action string
			var n, notices int
			if err := r.Scan(&id, &action, &n, &notices); err != nil {
				return err
			}
			if l := line(id); l != nil {
				l.WorkRecords += n
				l.Maintenance[action] += n
				l.NoticesComplied += notices
			}
			return nil
		})
	}
	if err == nil {
		err = each(ctx, tx, `
			SELECT coalesce(`+airframeAt("e.airframe_id", "e.part_id", "e.at")+`,
				(SELECT fl.airframe_id FROM flights fl WHERE fl.id = e.flight_id)) AS af, e.kind, count(*)
			FROM events e WHERE e.at >= $1 AND e.at < $2 GROUP BY 1, 2`, []any{from, to}, func(r pgx.Rows) error {
			var id *string
			var kind string
			var n int
			if err := r.Scan(&id, &kind, &n); err != nil {
				return err
			}
			if l := line(id); l != nil {
				l.Events += n
				l.EventsByKind[kind] += n
			}
			return nil
		})
	}
	if err == nil {
		err = each(ctx, tx, `
			SELECT `+airframeAt("d.airframe_id", "d.part_id", "d.found_at")+` AS af,
				count(*) FILTER (WHERE d.found_at >= $1 AND d.found_at < $2),
				count(*) FILTER (WHERE d.cleared_at >= $1 AND d.cleared_at < $2)
			FROM discrepancies d
			WHERE (d.found_at >= $1 AND d.found_at < $2) OR (d.cleared_at >= $1 AND d.cleared_at < $2) GROUP BY 1`,
			[]any{from, to}, func(r pgx.Rows) error {
				var id *string
				var found, cleared int
				if err := r.Scan(&id, &found, &cleared); err != nil {
					return err
				}
				if l := line(id); l != nil {
					l.DiscrepanciesFound += found
					l.DiscrepanciesCleared += cleared
				}
				return nil
			})
	}
	if err != nil {
		return nil, translate(err)
	}
	if loose != nil {
		order = append(order, loose)
	}
	rep.Total = newLine(nil, "all airframes", "")
	for _, l := range order {
		rep.Airframes = append(rep.Airframes, l)
		t := rep.Total
		t.Flights += l.Flights
		t.FlightHours += l.FlightHours
		t.FlownNotReady += l.FlownNotReady
		t.WorkRecords += l.WorkRecords
		t.NoticesComplied += l.NoticesComplied
		t.Events += l.Events
		t.DiscrepanciesFound += l.DiscrepanciesFound
		t.DiscrepanciesCleared += l.DiscrepanciesCleared
		for k, v := range l.Maintenance {
			t.Maintenance[k] += v
		}
		for k, v := range l.EventsByKind {
			t.EventsByKind[k] += v
		}
	}
	return rep, translate(tx.Commit(ctx))
}
