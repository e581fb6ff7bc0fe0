package store

import (
	"context"
	"encoding/json"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const noticeCols = `id, reference, title, to_char(issued_on, 'YYYY-MM-DD'), revision, category, required_work,
	applicability, window_spec, withdrawn_at, version, created_at, updated_at`

func scanNotice(row pgx.Row) (*fleet.Notice, error) {
	var n fleet.Notice
	var app, win []byte
	err := row.Scan(&n.ID, &n.Reference, &n.Title, &n.IssuedOn, &n.Revision, &n.Category, &n.RequiredWork,
		&app, &win, &n.WithdrawnAt, &n.Version, &n.CreatedAt, &n.UpdatedAt)
	if err != nil {
		return nil, err
	}
	if err := json.Unmarshal(app, &n.Applicability); err != nil {
		return nil, err
	}
	return &n, json.Unmarshal(win, &n.Window)
}

func noticeArgs(n *fleet.Notice) ([]any, error) {
	app, err := json.Marshal(n.Applicability)
	if err != nil {
		return nil, err
	}
	win, err := json.Marshal(n.Window)
	if err != nil {
		return nil, err
	}
	return []any{n.Reference, n.Title, n.IssuedOn, n.Revision, n.Category, n.RequiredWork, app, win}, nil
}

func init() {
	constraintErrors["notices_reference_key"] = struct{ field, msg string }{"reference", "a notice with this reference exists"}
	constraintErrors["notice_decisions_pkey"] = struct{ field, msg string }{"subject_id", "a decision for this subject exists"}
	constraintErrors["work_records_notice_id_fkey"] = struct{ field, msg string }{"notice_id", "unknown notice"}
}

// CreateNotice records a notice.
func (db *DB) CreateNotice(ctx context.Context, n *fleet.Notice) (*fleet.Notice, error) {
	if err := n.Validate(); err != nil {
		return nil, err
	}
	args, err := noticeArgs(n)
	if err != nil {
		return nil, err
	}
	var out *fleet.Notice
	err = db.inTx(ctx, func(tx pgx.Tx) error {
		var err error
		out, err = scanNotice(tx.QueryRow(ctx, `
			INSERT INTO notices (id, reference, title, issued_on, revision, category, required_work, applicability, window_spec)
			VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9) RETURNING `+noticeCols, append([]any{newID()}, args...)...))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "notice", out.ID, nil, out)
	})
	return out, err
}

// Notice returns one notice.
func (db *DB) Notice(ctx context.Context, id string) (*fleet.Notice, error) {
	n, err := scanNotice(db.pool.QueryRow(ctx, `SELECT `+noticeCols+` FROM notices WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "notice")
	}
	return n, nil
}

// NoticeFilter narrows the notice listing.
type NoticeFilter struct {
	Category string
	Active   bool // leave withdrawn notices out
}

// Notices lists notices in id order, one keyset page.
func (db *DB) Notices(ctx context.Context, f NoticeFilter, p Page) ([]*fleet.Notice, string, error) {
	after, err := p.afterID()
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+noticeCols+` FROM notices
		WHERE ($1::uuid IS NULL OR id > $1) AND ($2 = '' OR category = $2) AND (NOT $3 OR withdrawn_at IS NULL)
		ORDER BY id LIMIT $4`, after, f.Category, f.Active, p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanNotice)
	if err != nil {
		return nil, "", err
	}
	return page(list, p.Limit, func(n *fleet.Notice) string { return n.ID })
}

// ActiveNotices returns every notice not withdrawn (the few the compliance
// computation applies).
func (db *DB) ActiveNotices(ctx context.Context) ([]*fleet.Notice, error) {
	rows, err := db.pool.Query(ctx, `SELECT `+noticeCols+` FROM notices WHERE withdrawn_at IS NULL ORDER BY id`)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, scanNotice)
}

// UpdateNotice applies fn to the notice at version (a new revision, a
// corrected applicability or window).
func (db *DB) UpdateNotice(ctx context.Context, id string, version int, fn func(*fleet.Notice) error) (*fleet.Notice, error) {
	var out *fleet.Notice
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanNotice(tx.QueryRow(ctx, `SELECT `+noticeCols+` FROM notices WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "notice")
		}
		if before.Version != version {
			return versionMismatch()
		}
		if before.WithdrawnAt != nil {
			return fleet.Errorf(fleet.ECONFLICT, "the notice is withdrawn")
		}
		n := clone(before)
		if err := fn(n); err != nil {
			return err
		}
		if err := n.Validate(); err != nil {
			return err
		}
		args, err := noticeArgs(n)
		if err != nil {
			return err
		}
		out, err = scanNotice(tx.QueryRow(ctx, `
			UPDATE notices SET reference = $2, title = $3, issued_on = $4, revision = $5, category = $6,
				required_work = $7, applicability = $8, window_spec = $9, version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+noticeCols, append([]any{id}, args...)...))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "notice", id, before, out)
	})
	return out, err
}

// WithdrawNotice marks a notice withdrawn: it no longer applies, and its
// compliance records stay.
func (db *DB) WithdrawNotice(ctx context.Context, id string, version int) error {
	return db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanNotice(tx.QueryRow(ctx, `SELECT `+noticeCols+` FROM notices WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "notice")
		}
		if before.Version != version {
			return versionMismatch()
		}
		if before.WithdrawnAt != nil {
			return fleet.Errorf(fleet.ECONFLICT, "the notice is already withdrawn")
		}
		out, err := scanNotice(tx.QueryRow(ctx, `
			UPDATE notices SET withdrawn_at = now(), version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+noticeCols, id))
		if err != nil {
			return err
		}
		if _, err := tx.Exec(ctx, `DELETE FROM due_items WHERE notice_id = $1`, id); err != nil {
			return err
		}
		return audit(ctx, tx, "notice", id, before, out)
	})
}

// NoticeDecision records that a notice does not apply to a subject.
type NoticeDecision struct {
	NoticeID    string    `json:"notice_id"`
	SubjectKind string    `json:"subject_kind"`
	SubjectID   string    `json:"subject_id"`
	Reason      string    `json:"reason"`
	DecidedBy   string    `json:"decided_by"`
	DecidedAt   time.Time `json:"decided_at"`
}

// DecideNotApplicable records that the notice does not apply to the subject,
// why, and who decided (the caller's key name).
func (db *DB) DecideNotApplicable(ctx context.Context, d *NoticeDecision) (*NoticeDecision, error) {
	if d.SubjectKind != "airframe" && d.SubjectKind != "part" {
		return nil, fleet.FieldError("subject_kind", "must be airframe or part")
	}
	if len([]rune(d.Reason)) < 1 || len([]rune(d.Reason)) > 4000 {
		return nil, fleet.FieldError("reason", "say why the notice does not apply (1 to 4000 characters)")
	}
	d.DecidedBy = actorFrom(ctx).Name
	if d.DecidedBy == "" {
		d.DecidedBy = "unknown"
	}
	var out NoticeDecision
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var kind string
		if err := tx.QueryRow(ctx, `SELECT applicability->>'part_kind' IS NULL FROM notices WHERE id = $1`, d.NoticeID).
			Scan(new(bool)); err != nil {
			return translateNotFound(err, "notice")
		}
		table := "airframes"
		if d.SubjectKind == "part" {
			table = "parts"
		}
		if err := tx.QueryRow(ctx, `SELECT 'x' FROM `+table+` WHERE id = $1`, d.SubjectID).Scan(&kind); err == pgx.ErrNoRows {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "subject_id", Message: "no " + d.SubjectKind + " with this id"}
		} else if err != nil {
			return err
		}
		err := tx.QueryRow(ctx, `
			INSERT INTO notice_decisions (notice_id, subject_kind, subject_id, reason, decided_by)
			VALUES ($1, $2, $3, $4, $5) RETURNING notice_id, subject_kind, subject_id, reason, decided_by, decided_at`,
			d.NoticeID, d.SubjectKind, d.SubjectID, d.Reason, d.DecidedBy).
			Scan(&out.NoticeID, &out.SubjectKind, &out.SubjectID, &out.Reason, &out.DecidedBy, &out.DecidedAt)
		if err != nil {
			return err
		}
		return audit(ctx, tx, "notice_decision", d.NoticeID+"/"+d.SubjectID, nil, out)
	})
	if err != nil {
		return nil, err
	}
	return &out, nil
}

// WithdrawDecision removes a not-applicable decision (the audit log keeps it).
func (db *DB) WithdrawDecision(ctx context.Context, noticeID, subjectID string) error {
	return db.inTx(ctx, func(tx pgx.Tx) error {
		var before NoticeDecision
		err := tx.QueryRow(ctx, `
			DELETE FROM notice_decisions WHERE notice_id = $1 AND subject_id = $2
			RETURNING notice_id, subject_kind, subject_id, reason, decided_by, decided_at`, noticeID, subjectID).
			Scan(&before.NoticeID, &before.SubjectKind, &before.SubjectID, &before.Reason, &before.DecidedBy, &before.DecidedAt)
		if err != nil {
			return translateNotFound(err, "decision")
		}
		return audit(ctx, tx, "notice_decision", noticeID+"/"+subjectID, before, nil)
	})
}
