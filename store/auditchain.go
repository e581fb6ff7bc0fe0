package store

import (
	"bytes"
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"strconv"
	"time"

	"github.com/jackc/pgx/v5"
)

// The audit chain: the database's insert trigger (migration 007) sets each
// row's prev_hash to the previous row's hash and hash to
// SHA-256(prev_hash || canonical content). The canonical form below is the
// same one, written again outside the database, so that verifying does not
// trust the database's own function.

// genesisHash is the prev_hash of the first row.
var genesisHash = make([]byte, sha256.Size)

// auditField encodes one field: "-" for NULL, else byte length, ':' and text.
func auditField(b *bytes.Buffer, v *string) {
	if v == nil {
		b.WriteByte('-')
		return
	}
	b.WriteString(strconv.Itoa(len(*v)))
	b.WriteByte(':')
	b.WriteString(*v)
}

// auditRowText is an audit row's columns as the canonical form reads them
// (jsonb and uuid columns as PostgreSQL prints them).
type auditRowText struct {
	ID                                                    int64
	At                                                    time.Time
	Actor                                                 *string
	ActorName, RequestID, Method, Route, Entity, EntityID string
	Before, After                                         *string
	ClientRequestID                                       *string
	PrevHash, Hash                                        []byte
}

// canonical is the row's content in the chain's canonical form.
func (r *auditRowText) canonical() []byte {
	var b bytes.Buffer
	str := func(s string) *string { return &s }
	auditField(&b, str(strconv.FormatInt(r.ID, 10)))
	// timestamptz has microsecond resolution; the form names UTC.
	auditField(&b, str(r.At.UTC().Format("2006-01-02T15:04:05.000000Z")))
	auditField(&b, r.Actor)
	for _, s := range []string{r.ActorName, r.RequestID, r.Method, r.Route, r.Entity, r.EntityID} {
		auditField(&b, str(s))
	}
	auditField(&b, r.Before)
	auditField(&b, r.After)
	if r.ClientRequestID != nil { // only when set: older rows keep their form (migration 008)
		auditField(&b, r.ClientRequestID)
	}
	return b.Bytes()
}

// chainHash is SHA-256(prev || content).
func chainHash(prev, content []byte) []byte {
	h := sha256.New()
	h.Write(prev)
	h.Write(content)
	return h.Sum(nil)
}

// AuditFault is the first row of the chain that fails, and why.
type AuditFault struct {
	ID     int64  `json:"id"`
	Reason string `json:"reason"`
}

// AuditCheck is the result of walking the audit chain.
type AuditCheck struct {
	Rows  int64       `json:"rows"`
	Head  string      `json:"head"` // hex hash of the last row ("" when empty)
	Fault *AuditFault `json:"fault"`
}

// VerifyOptions tune a chain walk.
type VerifyOptions struct {
	// Anchor is a head hash recorded earlier (hex); the walk fails unless a
	// row still carries it, which catches rows removed from the end.
	Anchor string
	// Progress, when set, is told the rows checked every 10,000 rows.
	Progress func(rows int64)
}

const auditTextCols = `id, at, actor::text, actor_name, request_id, method, route, entity, entity_id,
	before::text, after::text, client_request_id, prev_hash, hash`

func scanAuditText(r pgx.Row, a *auditRowText) error {
	return r.Scan(&a.ID, &a.At, &a.Actor, &a.ActorName, &a.RequestID, &a.Method, &a.Route, &a.Entity,
		&a.EntityID, &a.Before, &a.After, &a.ClientRequestID, &a.PrevHash, &a.Hash)
}

// VerifyAudit walks the whole audit log in id order, recomputing every hash,
// and stops at the first row that fails: content changed (hash differs),
// a row removed or reordered (prev_hash differs from the previous row's
// hash), or a head anchor no longer found. It reads one consistent snapshot
// and streams the rows, so memory stays flat however long the log.
func (db *DB) VerifyAudit(ctx context.Context, o VerifyOptions) (*AuditCheck, error) {
	var anchor []byte
	if o.Anchor != "" {
		var err error
		if anchor, err = hex.DecodeString(o.Anchor); err != nil || len(anchor) != sha256.Size {
			return nil, fmt.Errorf("anchor %q is not a hex SHA-256", o.Anchor)
		}
	}
	tx, err := db.pool.BeginTx(ctx, pgx.TxOptions{IsoLevel: pgx.RepeatableRead, AccessMode: pgx.ReadOnly})
	if err != nil {
		return nil, translate(err)
	}
	defer tx.Rollback(ctx)
	rows, err := tx.Query(ctx, `SELECT `+auditTextCols+` FROM audit_log ORDER BY id`)
	if err != nil {
		return nil, translate(err)
	}
	defer rows.Close()
	res := &AuditCheck{}
	prev := genesisHash
	anchorFound := false
	var r auditRowText
	for rows.Next() {
		if err := scanAuditText(rows, &r); err != nil {
			return nil, translate(err)
		}
		res.Rows++
		switch {
		case !bytes.Equal(r.PrevHash, prev):
			what := "the previous row's hash"
			if res.Rows == 1 {
				what = "the chain's start"
			}
			res.Fault = &AuditFault{ID: r.ID, Reason: "prev_hash does not match " + what + ": a row before it was removed, inserted or rewritten"}
		case !bytes.Equal(chainHash(r.PrevHash, r.canonical()), r.Hash):
			res.Fault = &AuditFault{ID: r.ID, Reason: "content does not match its hash: the row was changed"}
		}
		if res.Fault != nil {
			return res, nil
		}
		if anchor != nil && bytes.Equal(r.Hash, anchor) {
			anchorFound = true
		}
		prev = r.Hash
		if o.Progress != nil && res.Rows%10000 == 0 {
			o.Progress(res.Rows)
		}
	}
	if err := rows.Err(); err != nil {
		return nil, translate(err)
	}
	if res.Rows > 0 {
		res.Head = hex.EncodeToString(prev)
	}
	if anchor != nil && !anchorFound {
		res.Fault = &AuditFault{ID: 0, Reason: "no row carries the anchor " + o.Anchor + ": rows were removed from the end or rewritten"}
	}
	return res, nil
}
