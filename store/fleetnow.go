package store

import (
	"context"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// FleetNow is everything the fleet page reads, for every airframe at one
// moment, in one round trip: each airframe's readiness facts, the active
// notices, the open discrepancies, and the totals and open events shown
// beside the verdicts.
type FleetNow struct {
	// Airframes in tail-code order. Due holds only what readiness weighs
	// and the page shows: the items not ok, and the most urgent item (so
	// the next one due) of each airframe, in the due list's order. Most of
	// a fleet's items are ok, and reading them all was most of the page's
	// time.
	Airframes     []*ReadinessFacts
	Notices       []*fleet.Notice
	Discrepancies map[string][]OpenDiscrepancy // by airframe id, in OpenDiscrepancies' order
	Totals        map[string]AirframeTotals    // by airframe id; absent: never flown
	OpenEvents    map[string]int               // by airframe id
}

// AirframeTotals is an airframe's time in service, flights and last flight.
type AirframeTotals struct {
	Flights   int
	Hours     float64
	LastFlown *time.Time
}

// FleetBatch queues the statements of FleetNow ($1 the moment). Exported so
// a benchmark can send the very same SQL directly as its floor.
func FleetBatch(at time.Time) *pgx.Batch {
	b := &pgx.Batch{}
	b.Queue(`SELECT ` + airframeCols + ` FROM airframes ORDER BY code`)
	b.Queue(`SELECT name, builtin, positions FROM layouts ORDER BY name`)
	b.Queue(rotorsAtSQL+` ORDER BY f.airframe_id, f.kind, f.position`, at)
	b.Queue(groundingEventsSQL + ` AND airframe_id IS NOT NULL ORDER BY at`)
	b.Queue(fleetDueSQL)
	b.Queue(`SELECT ` + noticeCols + ` FROM notices WHERE withdrawn_at IS NULL ORDER BY id`)
	b.Queue(fleetDiscrepanciesSQL, at)
	b.Queue(fleetTotalsSQL)
	b.Queue(openEventCountsSQL)
	return b
}

// fleetDueSQL reads the airframes' due items that are not ok and each
// airframe's most urgent item, most urgent first.
const fleetDueSQL = `
		SELECT ` + dueItemCols + `
		FROM (SELECT d.*, row_number() OVER (PARTITION BY d.airframe_id ORDER BY ` + dueUrgency + `) AS rank
		      FROM due_items d WHERE d.airframe_id IS NOT NULL) d ` + dueItemJoins + `
		WHERE d.status <> 'ok' OR d.rank = 1
		ORDER BY ` + dueUrgency

// fleetDiscrepanciesSQL lists the discrepancies open at $1 with the
// airframe they are on (the airframe itself, or the one the part is fitted
// to then), in openDiscrepanciesSQL's order.
var fleetDiscrepanciesSQL = `
		SELECT ` + prefixed("d.", discrepancyCols) + `, coalesce(p.serial, a.code), coalesce(f.airframe_id, d.airframe_id)
		FROM discrepancies d
		LEFT JOIN parts p ON p.id = d.part_id
		LEFT JOIN airframes a ON a.id = d.airframe_id
		LEFT JOIN fits f ON d.part_id IS NOT NULL AND f.part_id = d.part_id AND f.during @> $1::timestamptz
		WHERE d.found_at <= $1 AND (d.cleared_at IS NULL OR d.cleared_at > $1)
		  AND ((d.part_id IS NULL AND d.airframe_id IS NOT NULL) OR f.airframe_id IS NOT NULL)
		ORDER BY d.grounding DESC, d.found_at`

// fleetTotalsSQL sums every airframe's flights. The durations are summed as
// intervals (exact, and cheap) and turned into hours once: extract yields
// numeric, and summing 30,000 numerics was most of this query's time.
const fleetTotalsSQL = `
		SELECT airframe_id, count(*), coalesce(extract(epoch FROM sum(landing_at - takeoff_at))::float8 / 3600, 0), max(landing_at)
		FROM flights GROUP BY airframe_id`

// openEventCountsSQL counts the unresolved events of each airframe (events
// on the airframe itself or on a flight of it).
const openEventCountsSQL = `
		SELECT coalesce(e.airframe_id, f.airframe_id), count(*)
		FROM events e LEFT JOIN flights f ON f.id = e.flight_id
		WHERE e.resolved_at IS NULL AND coalesce(e.airframe_id, f.airframe_id) IS NOT NULL
		GROUP BY 1`

// FleetNow reads the fleet page's facts at the moment at, pipelined in one
// round trip (see FleetBatch).
func (db *DB) FleetNow(ctx context.Context, at time.Time) (*FleetNow, error) {
	br := db.pool.SendBatch(ctx, FleetBatch(at))
	defer br.Close()
	airframes, err := collectBatch(br, scanAirframe)
	if err != nil {
		return nil, err
	}
	layouts, err := collectBatch(br, scanLayout)
	if err != nil {
		return nil, err
	}
	byName := map[string]*fleet.Layout{}
	for _, l := range layouts {
		byName[l.Name] = l
	}
	out := &FleetNow{Airframes: make([]*ReadinessFacts, len(airframes)), Discrepancies: map[string][]OpenDiscrepancy{},
		Totals: map[string]AirframeTotals{}, OpenEvents: map[string]int{}}
	byID := map[string]*ReadinessFacts{}
	for i, a := range airframes {
		rf := &ReadinessFacts{Airframe: a, Layout: byName[a.Layout]}
		if rf.Layout == nil {
			rf.Layout = &fleet.Layout{Name: a.Layout}
		}
		out.Airframes[i], byID[a.ID] = rf, rf
	}
	rows, err := br.Query()
	if err != nil {
		return nil, translate(err)
	}
	err = eachRotor(rows, func(id string, fr FittedRotor) {
		if rf := byID[id]; rf != nil {
			rf.Rotors = append(rf.Rotors, fr)
		}
	})
	if err != nil {
		return nil, err
	}
	events, err := collectBatch(br, scanEvent)
	if err != nil {
		return nil, err
	}
	for _, e := range events {
		if rf := byID[*e.AirframeID]; rf != nil {
			rf.Events = append(rf.Events, e)
		}
	}
	due, err := collectBatch(br, scanDueItem)
	if err != nil {
		return nil, err
	}
	for _, d := range due {
		if rf := byID[*d.AirframeID]; rf != nil {
			rf.Due = append(rf.Due, d)
		}
	}
	for _, rf := range out.Airframes {
		rf.Empty = emptyRotorPlaces(rf.Layout, rf.Rotors)
	}
	if out.Notices, err = collectBatch(br, scanNotice); err != nil {
		return nil, err
	}
	_, err = collectBatch(br, func(r pgx.Row) (struct{}, error) {
		var d fleet.Discrepancy
		od := OpenDiscrepancy{Discrepancy: &d}
		var airframeID string
		err := r.Scan(&d.ID, &d.WorkRecordID, &d.AirframeID, &d.PartID, &d.FoundAt, &d.Description, &d.Grounding,
			&d.ClearedAt, &d.ClearedBy, &d.CreatedAt, &od.Subject, &airframeID)
		out.Discrepancies[airframeID] = append(out.Discrepancies[airframeID], od)
		return struct{}{}, err
	})
	if err != nil {
		return nil, err
	}
	_, err = collectBatch(br, func(r pgx.Row) (struct{}, error) {
		var id string
		var t AirframeTotals
		err := r.Scan(&id, &t.Flights, &t.Hours, &t.LastFlown)
		out.Totals[id] = t
		return struct{}{}, err
	})
	if err != nil {
		return nil, err
	}
	_, err = collectBatch(br, func(r pgx.Row) (struct{}, error) {
		var id string
		var n int
		err := r.Scan(&id, &n)
		out.OpenEvents[id] = n
		return struct{}{}, err
	})
	if err != nil {
		return nil, err
	}
	return out, nil
}
