package store

import (
	"context"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// IdempotencyTTL is how long a key's result is kept.
const IdempotencyTTL = 24 * time.Hour

// StoredResponse is the result a completed request left under its key.
type StoredResponse struct {
	Status      int
	ContentType string
	Body        []byte
	// Headers a replay returns as they were (ETag, Location).
	Headers map[string]string
}

// Claim is a request's hold on an idempotency key: a lease on the
// database clock, renewed while the request runs.
type Claim struct {
	APIKeyID, Key string
	ID            string // this holder; completion and renewal need it
	Lease         time.Duration
}

// ClaimIdempotencyKey claims key for a request (a lease of the given
// length), or returns the stored result of the request that completed under
// it. A key held under a live lease is a conflict (with RetryAfter the
// time left); a lapsed lease — its holder died, lost the database or its
// client — is taken over. The same key with another route or body is
// unprocessable. Results older than IdempotencyTTL are forgotten first.
func (db *DB) ClaimIdempotencyKey(ctx context.Context, apiKeyID, key, route string, bodySHA []byte, lease time.Duration) (*StoredResponse, *Claim, error) {
	var out *StoredResponse
	claim := &Claim{APIKeyID: apiKeyID, Key: key, ID: newID(), Lease: lease}
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, `DELETE FROM idempotency_keys WHERE api_key_id = $1 AND key = $2 AND created_at < $3`,
			apiKeyID, key, db.now().Add(-IdempotencyTTL)); err != nil {
			return err
		}
		tag, err := tx.Exec(ctx, `
			INSERT INTO idempotency_keys (api_key_id, key, route, body_sha256, lease_until, claim)
			VALUES ($1, $2, $3, $4, clock_timestamp() + $5::interval, $6)
			ON CONFLICT (api_key_id, key) DO NOTHING`, apiKeyID, key, route, bodySHA, lease, claim.ID)
		if err != nil {
			return err
		}
		if tag.RowsAffected() == 1 {
			return nil // claimed: the caller runs the request
		}
		var r, ct *string
		var status *int
		var sha, body []byte
		var headers map[string]string
		var left *time.Duration
		if err := tx.QueryRow(ctx, `
			SELECT route, body_sha256, status, content_type, response, headers,
				CASE WHEN lease_until > clock_timestamp() THEN lease_until - clock_timestamp() END
			FROM idempotency_keys WHERE api_key_id = $1 AND key = $2 FOR UPDATE`, apiKeyID, key).
			Scan(&r, &sha, &status, &ct, &body, &headers, &left); err != nil {
			return err
		}
		if *r != route || string(sha) != string(bodySHA) {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "Idempotency-Key", Message: "this key was used for another request"}
		}
		if status == nil {
			if left != nil {
				return &fleet.Error{Code: fleet.ECONFLICT, Field: "Idempotency-Key",
					Message: "a request with this key is still in progress", RetryAfter: *left}
			}
			_, err := tx.Exec(ctx, `
				UPDATE idempotency_keys SET lease_until = clock_timestamp() + $3::interval, claim = $4
				WHERE api_key_id = $1 AND key = $2`, apiKeyID, key, lease, claim.ID)
			return err // the lapsed lease is ours now
		}
		out = &StoredResponse{Status: *status, Body: body, Headers: headers}
		if ct != nil {
			out.ContentType = *ct
		}
		return nil
	})
	if err != nil || out != nil {
		return out, nil, err
	}
	return nil, claim, nil
}

// RenewIdempotencyKey extends the lease while its holder still has it;
// false when the lease was lost (taken over after it lapsed, or completed).
func (db *DB) RenewIdempotencyKey(ctx context.Context, c *Claim) (bool, error) {
	tag, err := db.pool.Exec(ctx, `
		UPDATE idempotency_keys SET lease_until = clock_timestamp() + $4::interval
		WHERE api_key_id = $1 AND key = $2 AND claim = $3 AND status IS NULL`, c.APIKeyID, c.Key, c.ID, c.Lease)
	return tag.RowsAffected() == 1, translate(err)
}

// CompleteIdempotencyKey stores the result under the key while the claim
// still holds it; a failed request (5xx) releases the key instead, so the
// client may retry it. It reports whether the claim still held.
func (db *DB) CompleteIdempotencyKey(ctx context.Context, c *Claim, r StoredResponse) (bool, error) {
	var err error
	var held bool
	if r.Status >= 500 {
		held, err = db.ReleaseIdempotencyKey(ctx, c)
	} else {
		if r.Headers == nil {
			r.Headers = map[string]string{}
		}
		var tag interface{ RowsAffected() int64 }
		tag, err = db.pool.Exec(ctx, `
			UPDATE idempotency_keys SET status = $4, content_type = $5, response = $6, headers = $7, lease_until = NULL
			WHERE api_key_id = $1 AND key = $2 AND claim = $3 AND status IS NULL`,
			c.APIKeyID, c.Key, c.ID, r.Status, r.ContentType, r.Body, r.Headers)
		if err == nil {
			held = tag.RowsAffected() == 1
		}
	}
	return held, translate(err)
}

// ReleaseIdempotencyKey forgets a claim that produced nothing to keep (a
// failure, or a client gone before the work was done).
func (db *DB) ReleaseIdempotencyKey(ctx context.Context, c *Claim) (bool, error) {
	tag, err := db.pool.Exec(ctx, `
		DELETE FROM idempotency_keys WHERE api_key_id = $1 AND key = $2 AND claim = $3 AND status IS NULL`,
		c.APIKeyID, c.Key, c.ID)
	return tag.RowsAffected() == 1, translate(err)
}
