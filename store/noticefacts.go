package store

import (
	"context"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// NoticeSubject is a subject notices may apply to.
type NoticeSubject struct {
	Kind       string // airframe or part
	ID         string
	Name       string // tail code or serial
	PartKind   fleet.PartKind
	AirframeID *string // the airframe a part is fitted to at the moment asked
}

// NoticeRecord is a work record naming a notice, for one subject.
type NoticeRecord struct {
	NoticeID, SubjectID, WorkRecordID string
	At                                time.Time
}

// NoticeFacts is what the compliance computation reads: the subjects in
// scope, the register's history behind applicability, the records naming
// the notices and the not-applicable decisions.
type NoticeFacts struct {
	Subjects  []NoticeSubject
	Register  *fleet.RegisterFacts
	Records   []NoticeRecord
	Decisions map[string]*NoticeDecision // by notice id + "/" + subject id
}

// NoticeScope is where compliance is computed: one airframe (its own record
// and the parts fitted at At, plus Packs) or, with AirframeID empty, the
// whole fleet.
type NoticeScope struct {
	AirframeID string
	Packs      []string
	At         time.Time
}

// LoadNoticeFacts loads the facts for the notices within a scope, in a few
// queries: only the part kinds the notices name are read.
func (db *DB) LoadNoticeFacts(ctx context.Context, notices []*fleet.Notice, sc NoticeScope) (*NoticeFacts, error) {
	nf := &NoticeFacts{Register: &fleet.RegisterFacts{AirframeModel: map[string]string{}, PartKind: map[string]fleet.PartKind{},
		PartNumber: map[string]string{}, Software: map[string][]fleet.SoftwareSpan{}}, Decisions: map[string]*NoticeDecision{}}
	if len(notices) == 0 {
		return nf, nil
	}
	var subjectKinds, swKinds, noticeIDs []string
	airframes := false
	for _, n := range notices {
		noticeIDs = append(noticeIDs, n.ID)
		if kind, pk := n.Applicability.Subjects(); kind == "airframe" {
			airframes = true
		} else {
			subjectKinds = append(subjectKinds, string(pk))
		}
		for _, r := range n.Applicability.Software {
			swKinds = append(swKinds, string(r.PartKind))
		}
	}
	af := nilIfEmpty(sc.AirframeID)
	tx, err := db.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return nil, translate(err)
	}
	defer tx.Rollback(ctx)
	// Subjects: airframes, and parts of the kinds named (those fitted to the
	// airframe at the moment, or all not retired in the fleet).
	rows, err := tx.Query(ctx, `
		SELECT 'airframe', a.id, a.code, '', a.id FROM airframes a
		WHERE $1 AND a.retired_at IS NULL AND ($2::uuid IS NULL OR a.id = $2)
		UNION ALL
		SELECT 'part', p.id, p.serial, p.kind, f.airframe_id FROM parts p
		LEFT JOIN fits f ON f.part_id = p.id AND f.during @> $4::timestamptz
		WHERE p.kind = ANY($3) AND p.status <> 'retired'
		  AND ($2::uuid IS NULL OR f.airframe_id = $2 OR p.id = ANY($5::uuid[]))`,
		airframes, af, subjectKinds, sc.At, sc.Packs)
	if err != nil {
		return nil, translate(err)
	}
	if nf.Subjects, err = collect(rows, func(r pgx.Row) (NoticeSubject, error) {
		var s NoticeSubject
		return s, r.Scan(&s.Kind, &s.ID, &s.Name, &s.PartKind, &s.AirframeID)
	}); err != nil {
		return nil, err
	}
	var partIDs []string
	for _, s := range nf.Subjects {
		if s.Kind == "part" {
			partIDs = append(partIDs, s.ID)
		}
	}
	// Fits: every stay of the subject parts, and the stays of software kinds
	// on the airframes in scope and those the subject parts visited.
	rows, err = tx.Query(ctx, `
		WITH visited AS (
			SELECT airframe_id FROM fits WHERE part_id = ANY($1::uuid[])
			UNION SELECT $2::uuid WHERE $2::uuid IS NOT NULL)
		SELECT f.part_id, f.airframe_id, f.kind, lower(f.during), upper(f.during) FROM fits f
		WHERE f.part_id = ANY($1::uuid[])
		   OR (f.kind = ANY($3) AND ($2::uuid IS NULL OR f.airframe_id IN (SELECT airframe_id FROM visited)))`,
		partIDs, af, swKinds)
	if err != nil {
		return nil, translate(err)
	}
	fits, err := collect(rows, func(r pgx.Row) (fleet.FitSpan, error) {
		var f fleet.FitSpan
		var from time.Time
		err := r.Scan(&f.PartID, &f.AirframeID, &f.Kind, &from, &f.To)
		f.From = &from
		return f, err
	})
	if err != nil {
		return nil, err
	}
	nf.Register.Fits = fits
	parts := map[string]bool{}
	for _, id := range partIDs {
		parts[id] = true
	}
	for _, f := range fits {
		parts[f.PartID] = true
	}
	ids := make([]string, 0, len(parts))
	for id := range parts {
		ids = append(ids, id)
	}
	rows, err = tx.Query(ctx, `SELECT id, kind, part_number FROM parts WHERE id = ANY($1::uuid[])`, ids)
	if err != nil {
		return nil, translate(err)
	}
	for rows.Next() {
		var id, pn string
		var k fleet.PartKind
		if err := rows.Scan(&id, &k, &pn); err != nil {
			rows.Close()
			return nil, translate(err)
		}
		nf.Register.PartKind[id], nf.Register.PartNumber[id] = k, pn
	}
	rows.Close()
	rows, err = tx.Query(ctx, `SELECT part_id, version, lower(during), upper(during) FROM part_software WHERE part_id = ANY($1::uuid[])`, ids)
	if err != nil {
		return nil, translate(err)
	}
	for rows.Next() {
		var id string
		var s fleet.SoftwareSpan
		if err := rows.Scan(&id, &s.Version, &s.From, &s.To); err != nil {
			rows.Close()
			return nil, translate(err)
		}
		nf.Register.Software[id] = append(nf.Register.Software[id], s)
	}
	rows.Close()
	rows, err = tx.Query(ctx, `SELECT id, model FROM airframes`)
	if err != nil {
		return nil, translate(err)
	}
	for rows.Next() {
		var id, model string
		if err := rows.Scan(&id, &model); err != nil {
			rows.Close()
			return nil, translate(err)
		}
		nf.Register.AirframeModel[id] = model
	}
	rows.Close()
	// Records naming the notices (a record a later one corrects no longer
	// counts) and the decisions.
	rows, err = tx.Query(ctx, `
		SELECT w.notice_id, coalesce(w.part_id, w.airframe_id), w.id, w.at FROM work_records w
		WHERE w.notice_id = ANY($1::uuid[]) AND w.at <= $2
		  AND NOT EXISTS (SELECT 1 FROM work_records c WHERE c.corrects_id = w.id AND c.at <= $2)
		UNION ALL
		SELECT w.notice_id, w.airframe_id, w.id, w.at FROM work_records w
		WHERE w.notice_id = ANY($1::uuid[]) AND w.at <= $2 AND w.part_id IS NOT NULL AND w.airframe_id IS NOT NULL
		  AND NOT EXISTS (SELECT 1 FROM work_records c WHERE c.corrects_id = w.id AND c.at <= $2)
		ORDER BY 4`, noticeIDs, sc.At)
	if err != nil {
		return nil, translate(err)
	}
	if nf.Records, err = collect(rows, func(r pgx.Row) (NoticeRecord, error) {
		var x NoticeRecord
		return x, r.Scan(&x.NoticeID, &x.SubjectID, &x.WorkRecordID, &x.At)
	}); err != nil {
		return nil, err
	}
	rows, err = tx.Query(ctx, `
		SELECT notice_id, subject_kind, subject_id, reason, decided_by, decided_at FROM notice_decisions
		WHERE notice_id = ANY($1::uuid[]) AND decided_at <= $2`, noticeIDs, sc.At)
	if err != nil {
		return nil, translate(err)
	}
	ds, err := collect(rows, func(r pgx.Row) (*NoticeDecision, error) {
		var d NoticeDecision
		return &d, r.Scan(&d.NoticeID, &d.SubjectKind, &d.SubjectID, &d.Reason, &d.DecidedBy, &d.DecidedAt)
	})
	if err != nil {
		return nil, err
	}
	for _, d := range ds {
		nf.Decisions[d.NoticeID+"/"+d.SubjectID] = d
	}
	return nf, tx.Commit(ctx)
}

// SubjectUse is a subject's flight hours and flights over [from, to), and
// over the window before to for daily rates: an airframe's flights, a
// fitted part's flights while fitted, a pack's flights.
func (db *DB) SubjectUse(ctx context.Context, s NoticeSubject, from, to time.Time, window time.Duration) (fleet.NoticeUse, error) {
	var u fleet.NoticeUse
	var q string
	switch {
	case s.Kind == "airframe":
		q = `SELECT fl.takeoff_at, extract(epoch FROM fl.landing_at - fl.takeoff_at) / 3600 FROM flights fl
			WHERE fl.airframe_id = $1 AND fl.takeoff_at >= least($2::timestamptz, $4::timestamptz) AND fl.takeoff_at < $3`
	case s.PartKind == fleet.KindPack:
		q = `SELECT fl.takeoff_at, extract(epoch FROM fl.landing_at - fl.takeoff_at) / 3600
			FROM flight_packs fp JOIN flights fl ON fl.id = fp.flight_id
			WHERE fp.part_id = $1 AND fl.takeoff_at >= least($2::timestamptz, $4::timestamptz) AND fl.takeoff_at < $3`
	default:
		q = `SELECT fl.takeoff_at, extract(epoch FROM fl.landing_at - fl.takeoff_at) / 3600
			FROM fits f JOIN flights fl ON ` + fitAtTakeoff + `
			WHERE f.part_id = $1 AND fl.takeoff_at >= least($2::timestamptz, $4::timestamptz) AND fl.takeoff_at < $3`
	}
	recentFrom := to.Add(-window)
	rows, err := db.pool.Query(ctx, q, s.ID, from, to, recentFrom)
	if err != nil {
		return u, translate(err)
	}
	defer rows.Close()
	var rh, rf float64
	for rows.Next() {
		var at time.Time
		var h float64
		if err := rows.Scan(&at, &h); err != nil {
			return u, translate(err)
		}
		if !at.Before(from) {
			u.Hours, u.Flights = u.Hours+h, u.Flights+1
		}
		if !at.Before(recentFrom) {
			rh, rf = rh+h, rf+1
		}
	}
	days := window.Hours() / 24
	u.RecentHoursPerDay, u.RecentFlightsPerDay = rh/days, rf/days
	return u, translate(rows.Err())
}
