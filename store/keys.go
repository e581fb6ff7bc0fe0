package store

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"crypto/subtle"
	"encoding/base64"
	"strings"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// tokenPrefix marks tokens of this service so leaked ones are recognisable.
const tokenPrefix = "rw_"

// CreateKey makes a key held by the person it is named after.
func (db *DB) CreateKey(ctx context.Context, name string, role fleet.Role) (*fleet.APIKey, string, error) {
	return db.CreatePersonKey(ctx, name, name, role)
}

// CreatePersonKey makes a key held by person and returns it with its token,
// shown only this once.
func (db *DB) CreatePersonKey(ctx context.Context, name, person string, role fleet.Role) (*fleet.APIKey, string, error) {
	name, person = strings.TrimSpace(name), strings.TrimSpace(person)
	if !fleet.Visible(name) || len(name) > 120 {
		return nil, "", fleet.FieldError("name", "must be 1 to 120 characters")
	}
	if !fleet.Visible(person) || len(person) > 120 {
		return nil, "", fleet.FieldError("person", "must be 1 to 120 characters")
	}
	if !role.Valid() {
		return nil, "", fleet.FieldError("role", "must be viewer, pilot, technician or admin")
	}
	secret := make([]byte, 32)
	if _, err := rand.Read(secret); err != nil {
		return nil, "", err
	}
	token := tokenPrefix + base64.RawURLEncoding.EncodeToString(secret)
	sum := sha256.Sum256([]byte(token))
	k := &fleet.APIKey{ID: newID(), Name: name, Person: person, Role: role}
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		if err := tx.QueryRow(ctx, `
			INSERT INTO api_keys (id, name, person, role, token_sha256) VALUES ($1, $2, $3, $4, $5) RETURNING created_at`,
			k.ID, k.Name, k.Person, k.Role, sum[:]).Scan(&k.CreatedAt); err != nil {
			return err
		}
		return audit(ctx, tx, "api_key", k.ID, nil, k)
	})
	if err != nil {
		return nil, "", err
	}
	return k, token, nil
}

// Authenticate returns the live key holding token. The lookup is by hash, and
// the stored hash is compared again in constant time.
func (db *DB) Authenticate(ctx context.Context, token string) (*fleet.APIKey, error) {
	sum := sha256.Sum256([]byte(token))
	var k fleet.APIKey
	var stored []byte
	err := db.pool.QueryRow(ctx, `
		SELECT id, name, person, role, created_at, revoked_at, token_sha256 FROM api_keys WHERE token_sha256 = $1`, sum[:]).
		Scan(&k.ID, &k.Name, &k.Person, &k.Role, &k.CreatedAt, &k.RevokedAt, &stored)
	if err == pgx.ErrNoRows || (err == nil && subtle.ConstantTimeCompare(stored, sum[:]) != 1) {
		return nil, fleet.Errorf(fleet.EUNAUTHORIZED, "unknown or revoked token")
	} else if err != nil {
		return nil, translate(err)
	}
	if k.RevokedAt != nil {
		return nil, fleet.Errorf(fleet.EUNAUTHORIZED, "unknown or revoked token")
	}
	return &k, nil
}

// Keys lists every key (never the tokens).
func (db *DB) Keys(ctx context.Context) ([]*fleet.APIKey, error) {
	rows, err := db.pool.Query(ctx, `SELECT id, name, person, role, created_at, revoked_at FROM api_keys ORDER BY id`)
	if err != nil {
		return nil, translate(err)
	}
	return collect(rows, func(r pgx.Row) (*fleet.APIKey, error) {
		var k fleet.APIKey
		return &k, r.Scan(&k.ID, &k.Name, &k.Person, &k.Role, &k.CreatedAt, &k.RevokedAt)
	})
}

// RevokeKey revokes a key at once.
func (db *DB) RevokeKey(ctx context.Context, id string) (*fleet.APIKey, error) {
	var out fleet.APIKey
	err := db.inTx(ctx, func(tx pgx.Tx) error {
		var before fleet.APIKey
		err := tx.QueryRow(ctx, `SELECT id, name, person, role, created_at, revoked_at FROM api_keys WHERE id = $1 FOR UPDATE`, id).
			Scan(&before.ID, &before.Name, &before.Person, &before.Role, &before.CreatedAt, &before.RevokedAt)
		if err != nil {
			return translateNotFound(err, "key")
		}
		if before.RevokedAt != nil {
			return fleet.Errorf(fleet.ECONFLICT, "the key is already revoked")
		}
		out = *clone(&before)
		now := time.Now()
		if err := tx.QueryRow(ctx, `UPDATE api_keys SET revoked_at = $2 WHERE id = $1 RETURNING revoked_at`, id, now).
			Scan(&out.RevokedAt); err != nil {
			return err
		}
		return audit(ctx, tx, "api_key", id, before, out)
	})
	if err != nil {
		return nil, err
	}
	return &out, nil
}
