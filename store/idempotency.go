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
}

// ClaimIdempotencyKey claims key for a request, or returns the stored
// result of the request that claimed it first. A key still in progress is a
// conflict; the same key with another route or body is unprocessable.
// Expired keys are forgotten first.
func (db *DB) ClaimIdempotencyKey(ctx context.Context, apiKeyID, key, route string, bodySHA []byte) (*StoredResponse, error) {
	var out *StoredResponse
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, `DELETE FROM idempotency_keys WHERE api_key_id = $1 AND key = $2 AND created_at < $3`,
			apiKeyID, key, db.now().Add(-IdempotencyTTL)); err != nil {
			return err
		}
		tag, err := tx.Exec(ctx, `
			INSERT INTO idempotency_keys (api_key_id, key, route, body_sha256) VALUES ($1, $2, $3, $4)
			ON CONFLICT (api_key_id, key) DO NOTHING`, apiKeyID, key, route, bodySHA)
		if err != nil {
			return err
		}
		if tag.RowsAffected() == 1 {
			return nil // claimed: the caller runs the request
		}
		var r, ct *string
		var status *int
		var sha, body []byte
		if err := tx.QueryRow(ctx, `
			SELECT route, body_sha256, status, content_type, response FROM idempotency_keys
			WHERE api_key_id = $1 AND key = $2`, apiKeyID, key).Scan(&r, &sha, &status, &ct, &body); err != nil {
			return err
		}
		if *r != route || string(sha) != string(bodySHA) {
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: "Idempotency-Key", Message: "this key was used for another request"}
		}
		if status == nil {
			return &fleet.Error{Code: fleet.ECONFLICT, Field: "Idempotency-Key", Message: "a request with this key is still in progress"}
		}
		out = &StoredResponse{Status: *status, Body: body}
		if ct != nil {
			out.ContentType = *ct
		}
		return nil
	})
	return out, err
}

// CompleteIdempotencyKey stores the result under the key; a failed request
// (5xx) releases the key instead, so the client may retry it.
func (db *DB) CompleteIdempotencyKey(ctx context.Context, apiKeyID, key string, r StoredResponse) error {
	var err error
	if r.Status >= 500 {
		_, err = db.pool.Exec(ctx, `DELETE FROM idempotency_keys WHERE api_key_id = $1 AND key = $2`, apiKeyID, key)
	} else {
		_, err = db.pool.Exec(ctx, `
			UPDATE idempotency_keys SET status = $3, content_type = $4, response = $5
			WHERE api_key_id = $1 AND key = $2`, apiKeyID, key, r.Status, r.ContentType, r.Body)
	}
	return translate(err)
}
