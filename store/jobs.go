package store

import (
	"context"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

const jobCols = `id, code, client, site, to_char(starts_on, 'YYYY-MM-DD'), to_char(ends_on, 'YYYY-MM-DD'),
	notes, version, created_at, updated_at`

func scanJob(row pgx.Row) (*fleet.Job, error) {
	var j fleet.Job
	err := row.Scan(&j.ID, &j.Code, &j.Client, &j.Site, &j.StartsOn, &j.EndsOn, &j.Notes, &j.Version, &j.CreatedAt, &j.UpdatedAt)
	if err != nil {
		return nil, err
	}
	return &j, nil
}

// CreateJob inserts a job.
func (db *DB) CreateJob(ctx context.Context, j *fleet.Job) (*fleet.Job, error) {
	if err := j.Validate(); err != nil {
		return nil, err
	}
	var out *fleet.Job
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var err error
		out, err = scanJob(tx.QueryRow(ctx, `
			INSERT INTO jobs (id, code, client, site, starts_on, ends_on, notes)
			VALUES ($1, $2, $3, $4, $5, $6, $7) RETURNING `+jobCols,
			newID(), j.Code, j.Client, j.Site, j.StartsOn, j.EndsOn, j.Notes))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "job", out.ID, nil, out)
	})
	return out, err
}

// Job returns one job.
func (db *DB) Job(ctx context.Context, id string) (*fleet.Job, error) {
	j, err := scanJob(db.pool.QueryRow(ctx, `SELECT `+jobCols+` FROM jobs WHERE id = $1`, id))
	if err != nil {
		return nil, translateNotFound(err, "job")
	}
	return j, nil
}

// JobFilter narrows a listing.
type JobFilter struct {
	Client string
	Code   string
}

// Jobs lists jobs in id order, one keyset page.
func (db *DB) Jobs(ctx context.Context, f JobFilter, p Page) ([]*fleet.Job, string, error) {
	after, err := p.afterID()
	if err != nil {
		return nil, "", err
	}
	rows, err := db.pool.Query(ctx, `
		SELECT `+jobCols+` FROM jobs
		WHERE ($1::uuid IS NULL OR id > $1) AND ($2 = '' OR client = $2) AND ($3 = '' OR code = $3)
		ORDER BY id LIMIT $4`, after, f.Client, f.Code, p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, scanJob)
	if err != nil {
		return nil, "", err
	}
	return page(list, p.Limit, func(j *fleet.Job) string { return j.ID })
}

// UpdateJob applies fn to the job at version under a row lock.
func (db *DB) UpdateJob(ctx context.Context, id string, version int, fn func(*fleet.Job) error) (*fleet.Job, error) {
	var out *fleet.Job
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		before, err := scanJob(tx.QueryRow(ctx, `SELECT `+jobCols+` FROM jobs WHERE id = $1 FOR UPDATE`, id))
		if err != nil {
			return translateNotFound(err, "job")
		}
		if before.Version != version {
			return versionMismatch()
		}
		j := clone(before)
		if err := fn(j); err != nil {
			return err
		}
		if err := j.Validate(); err != nil {
			return err
		}
		out, err = scanJob(tx.QueryRow(ctx, `
			UPDATE jobs SET code = $2, client = $3, site = $4, starts_on = $5, ends_on = $6, notes = $7,
				version = version + 1, updated_at = now()
			WHERE id = $1 RETURNING `+jobCols, id, j.Code, j.Client, j.Site, j.StartsOn, j.EndsOn, j.Notes))
		if err != nil {
			return err
		}
		return audit(ctx, tx, "job", id, before, out)
	})
	return out, err
}
