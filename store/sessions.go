package store

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"encoding/base64"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// BoardSession is a signed-in board session as recorded (never its token).
type BoardSession struct {
	ID        string    `json:"id"`
	APIKeyID  string    `json:"api_key_id"`
	ExpiresAt time.Time `json:"expires_at"`
}

// CreateSession opens a board session for a live key, lasting ttl, and
// returns its token (for the cookie; only its hash is stored).
func (db *DB) CreateSession(ctx context.Context, keyID string, ttl time.Duration) (token string, s *BoardSession, err error) {
	secret := make([]byte, 32)
	if _, err := rand.Read(secret); err != nil {
		return "", nil, err
	}
	token = base64.RawURLEncoding.EncodeToString(secret)
	sum := sha256.Sum256([]byte(token))
	s = &BoardSession{ID: newID(), APIKeyID: keyID, ExpiresAt: db.now().Add(ttl).UTC().Truncate(time.Microsecond)}
	err = db.inTx(ctx, func(tx pgx.Tx) error {
		if _, err := tx.Exec(ctx, `
			INSERT INTO board_sessions (id, token_sha256, api_key_id, expires_at) VALUES ($1, $2, $3, $4)`,
			s.ID, sum[:], keyID, s.ExpiresAt); err != nil {
			return err
		}
		return audit(ctx, tx, "board_session", s.ID, nil, s)
	})
	if err != nil {
		return "", nil, err
	}
	return token, s, nil
}

// SessionKey returns the key behind a live session token: not ended, not
// expired, and its key not revoked (so revoking a key ends its sessions).
func (db *DB) SessionKey(ctx context.Context, token string) (*fleet.APIKey, *BoardSession, error) {
	sum := sha256.Sum256([]byte(token))
	var k fleet.APIKey
	var s BoardSession
	err := db.pool.QueryRow(ctx, `
		SELECT k.id, k.name, k.role, k.created_at, s.id, s.expires_at
		FROM board_sessions s JOIN api_keys k ON k.id = s.api_key_id
		WHERE s.token_sha256 = $1 AND s.ended_at IS NULL AND s.expires_at > now() AND k.revoked_at IS NULL`, sum[:]).
		Scan(&k.ID, &k.Name, &k.Role, &k.CreatedAt, &s.ID, &s.ExpiresAt)
	if err == pgx.ErrNoRows {
		return nil, nil, fleet.Errorf(fleet.EUNAUTHORIZED, "no live session: sign in again")
	} else if err != nil {
		return nil, nil, translate(err)
	}
	s.APIKeyID = k.ID
	return &k, &s, nil
}

// EndSession ends the session of a token (sign-out). Ending an unknown or
// already ended session is not an error: the outcome is the same.
func (db *DB) EndSession(ctx context.Context, token string) error {
	sum := sha256.Sum256([]byte(token))
	return db.inTx(ctx, func(tx pgx.Tx) error {
		var s BoardSession
		err := tx.QueryRow(ctx, `
			UPDATE board_sessions SET ended_at = now() WHERE token_sha256 = $1 AND ended_at IS NULL
			RETURNING id, api_key_id, expires_at`, sum[:]).Scan(&s.ID, &s.APIKeyID, &s.ExpiresAt)
		if err == pgx.ErrNoRows {
			return nil
		} else if err != nil {
			return err
		}
		return audit(ctx, tx, "board_session", s.ID, s, nil)
	})
}

// PurgeSessions deletes up to limit board sessions that can no longer be
// used (expired, ended, or of a revoked key), longest expired first, each
// with its audit row, and returns how many went. The limit keeps one run
// short however many have piled up; the scheduled job comes back each tick.
// Sessions another transaction holds are left for the next run.
func (db *DB) PurgeSessions(ctx context.Context, limit int) (int, error) {
	n := 0
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		n = 0
		rows, err := tx.Query(ctx, `
			DELETE FROM board_sessions WHERE id IN (
				SELECT s.id FROM board_sessions s JOIN api_keys k ON k.id = s.api_key_id
				WHERE s.ended_at IS NOT NULL OR s.expires_at <= $1 OR k.revoked_at IS NOT NULL
				ORDER BY s.expires_at, s.id LIMIT $2 FOR UPDATE OF s SKIP LOCKED)
			RETURNING id, api_key_id, expires_at`, db.now(), limit)
		if err != nil {
			return err
		}
		gone, err := collect(rows, func(r pgx.Row) (BoardSession, error) {
			var s BoardSession
			return s, r.Scan(&s.ID, &s.APIKeyID, &s.ExpiresAt)
		})
		if err != nil {
			return err
		}
		for _, s := range gone {
			if err := audit(ctx, tx, "board_session", s.ID, s, nil); err != nil {
				return err
			}
		}
		n = len(gone)
		return nil
	})
	return n, translate(err)
}
