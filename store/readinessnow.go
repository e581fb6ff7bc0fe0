package store

import (
	"context"
	"encoding/json"
	"slices"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// ReadinessNow is everything a readiness answer at a moment reads that the
// store can give in one round trip: the airframe's facts, the active
// notices, the discrepancies open then and the named packs' facts. Its due
// items (the airframe's and each pack's) are the ones a readiness answer
// weighs, the service rules' items overdue or due soon, with what it says
// of them (readinessDueSQL); the rest of the list is not read. Scanning
// every item of the airframe whole was an eighth of its CPU.
type ReadinessNow struct {
	*ReadinessFacts
	Notices       []*fleet.Notice
	Discrepancies []OpenDiscrepancy
	Packs         map[string]*PackNow // by the id asked for; absent: not in the register
}

// PackNow is what readiness reads about one named part.
type PackNow struct {
	Part    *fleet.Part
	Health  json.RawMessage // nil: no health view stored
	Swollen bool            // an open pack_swelling event
	Due     []*fleet.DueItem
}

// ReadinessBatch queues the statements of ReadinessNow ($1 airframe, $2
// moment, then four per pack). Exported so a benchmark can send the very
// same SQL directly as its floor.
func ReadinessBatch(airframeID string, at time.Time, packIDs []string) *pgx.Batch {
	b := &pgx.Batch{}
	b.Queue(`SELECT `+airframeCols+` FROM airframes WHERE id = $1`, airframeID)
	b.Queue(`SELECT name, builtin, positions FROM layouts WHERE name = (SELECT layout FROM airframes WHERE id = $1)`, airframeID)
	b.Queue(rotorsAtSQL+` AND f.airframe_id = $2 ORDER BY f.kind, f.position`, at, airframeID)
	b.Queue(groundingEventsSQL+` AND airframe_id = $1 ORDER BY at`, airframeID)
	b.Queue(readinessDueSQL+`d.airframe_id = $1 ORDER BY `+dueUrgency, airframeID)
	b.Queue(`SELECT ` + noticeCols + ` FROM notices WHERE withdrawn_at IS NULL ORDER BY id`)
	b.Queue(openDiscrepanciesSQL, airframeID, at)
	for _, id := range packIDs {
		b.Queue(`SELECT `+partCols+` FROM parts WHERE id = $1`, id)
		b.Queue(`SELECT view FROM part_health WHERE part_id = $1`, id)
		b.Queue(`SELECT EXISTS (SELECT 1 FROM events WHERE part_id = $1 AND kind = 'pack_swelling' AND resolved_at IS NULL)`, id)
		b.Queue(readinessDueSQL+`d.subject_id = $1 ORDER BY `+dueUrgency, id)
	}
	return b
}

// readinessDueSQL reads the due items readiness weighs (a service rule's,
// overdue or due soon; a notice's are judged as of the moment from the
// notices themselves) with the fields it reads of them; the statement goes
// on with the subject's condition and the list's order.
const readinessDueSQL = `SELECT r.name, coalesce(a.code, p.serial, ''), d.status, d.grounding, d.reason
	FROM due_items d ` + dueItemJoins + `
	WHERE d.rule_id IS NOT NULL AND d.status IN ('overdue', 'due_soon') AND `

// scanReadinessDue scans a row of readinessDueSQL.
func scanReadinessDue(r pgx.Row) (*fleet.DueItem, error) {
	var d fleet.DueItem
	err := r.Scan(&d.RuleName, &d.Subject, &d.Status, &d.Grounding, &d.Reason)
	return &d, err
}

// ReadinessNow reads the facts of a readiness answer at the moment at with
// the packs named, pipelined in one round trip (the statements of
// ReadinessFacts, ActiveNotices, OpenDiscrepancies and per pack Part,
// PartHealth, its open swelling events and DueItems).
func (db *DB) ReadinessNow(ctx context.Context, airframeID string, at time.Time, packIDs []string) (*ReadinessNow, error) {
	br := db.pool.SendBatch(ctx, ReadinessBatch(airframeID, at, packIDs))
	defer br.Close()
	a, err := scanAirframe(br.QueryRow())
	if err != nil {
		return nil, translateNotFound(err, "airframe")
	}
	l, err := scanLayout(br.QueryRow())
	if err != nil {
		return nil, translateNotFound(err, "layout")
	}
	rf := &ReadinessFacts{Airframe: a, Layout: l}
	out := &ReadinessNow{ReadinessFacts: rf, Packs: map[string]*PackNow{}}
	rows, err := br.Query()
	if err != nil {
		return nil, translate(err)
	}
	if err := eachRotor(rows, func(_ string, fr FittedRotor) { rf.Rotors = append(rf.Rotors, fr) }); err != nil {
		return nil, err
	}
	rf.Empty = emptyRotorPlaces(l, rf.Rotors)
	if rf.Events, err = collectBatch(br, scanEvent); err != nil {
		return nil, err
	}
	if rf.Due, err = collectBatch(br, scanReadinessDue); err != nil {
		return nil, err
	}
	if out.Notices, err = collectBatch(br, scanNotice); err != nil {
		return nil, err
	}
	if out.Discrepancies, err = collectBatch(br, scanOpenDiscrepancy); err != nil {
		return nil, err
	}
	for _, id := range packIDs {
		pk, err := scanPart(br.QueryRow())
		found := err == nil
		if err != nil && err != pgx.ErrNoRows {
			return nil, translate(err)
		}
		pn := &PackNow{Part: pk}
		if err := br.QueryRow().Scan(&pn.Health); err != nil && err != pgx.ErrNoRows {
			return nil, translate(err)
		}
		if err := br.QueryRow().Scan(&pn.Swollen); err != nil {
			return nil, translate(err)
		}
		if pn.Due, err = collectBatch(br, scanReadinessDue); err != nil {
			return nil, err
		}
		if found {
			out.Packs[id] = pn
		}
	}
	return out, nil
}

func collectBatch[T any](br pgx.BatchResults, scan func(pgx.Row) (T, error)) ([]T, error) {
	rows, err := br.Query()
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scan)
}

func scanLayout(row pgx.Row) (*fleet.Layout, error) {
	var l fleet.Layout
	var raw []byte
	if err := row.Scan(&l.Name, &l.Builtin, &raw); err != nil {
		return nil, err
	}
	parsed, err := parseLayout(raw)
	if err != nil {
		return nil, err
	}
	l.Positions = slices.Clone(parsed.positions)
	return &l, nil
}
