package store

import (
	"context"
	"encoding/base64"
	"encoding/json"
	"strconv"
	"time"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/fleet"
)

// AuditEntry is one row of the append-only audit log.
type AuditEntry struct {
	ID        int64     `json:"id"`
	At        time.Time `json:"at"`
	Actor     *string   `json:"actor"`
	ActorName string    `json:"actor_name"`
	RequestID string    `json:"request_id"`
	// ClientRequestID is the X-Request-ID the client sent (null if none).
	ClientRequestID *string         `json:"client_request_id"`
	Method          string          `json:"method"`
	Route           string          `json:"route"`
	Entity          string          `json:"entity"`
	EntityID        string          `json:"entity_id"`
	Before          json.RawMessage `json:"before"`
	After           json.RawMessage `json:"after"`
	// PrevHash and Hash chain the rows (hex SHA-256; see VerifyAudit).
	PrevHash string `json:"prev_hash"`
	Hash     string `json:"hash"`
}

// AuditFilter narrows the audit listing.
type AuditFilter struct {
	Entity, EntityID string
}

// Audit lists audit entries oldest first, one keyset page.
func (db *DB) Audit(ctx context.Context, f AuditFilter, p Page) ([]*AuditEntry, string, error) {
	var after int64
	if p.Cursor != "" {
		b, err := base64.RawURLEncoding.DecodeString(p.Cursor)
		if err == nil {
			after, err = strconv.ParseInt(string(b), 10, 64)
		}
		if err != nil {
			return nil, "", fleet.FieldError("cursor", "is not a cursor this service issued")
		}
	}
	rows, err := db.pool.Query(ctx, `
		SELECT id, at, actor, actor_name, request_id, client_request_id, method, route, entity, entity_id, before, after,
			encode(prev_hash, 'hex'), encode(hash, 'hex')
		FROM audit_log
		WHERE id > $1 AND ($2 = '' OR entity = $2) AND ($3 = '' OR entity_id = $3)
		ORDER BY id LIMIT $4`, after, f.Entity, f.EntityID, p.Limit+1)
	if err != nil {
		return nil, "", translate(err)
	}
	list, err := collect(rows, func(r pgx.Row) (*AuditEntry, error) {
		var e AuditEntry
		return &e, r.Scan(&e.ID, &e.At, &e.Actor, &e.ActorName, &e.RequestID, &e.ClientRequestID, &e.Method, &e.Route,
			&e.Entity, &e.EntityID, &e.Before, &e.After, &e.PrevHash, &e.Hash)
	})
	if err != nil {
		return nil, "", err
	}
	next := ""
	if len(list) > p.Limit {
		list = list[:p.Limit]
		next = base64.RawURLEncoding.EncodeToString([]byte(strconv.FormatInt(list[p.Limit-1].ID, 10)))
	}
	return list, next, nil
}
