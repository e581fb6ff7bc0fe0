// Package store holds all SQL. Every write runs in one transaction together
// with its audit-log row; PostgreSQL errors become fleet errors here.
package store

import (
	"context"
	"encoding/base64"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"net"
	"strings"
	"sync"
	"syscall"
	"time"

	"github.com/google/uuid"
	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"
	"github.com/jackc/pgx/v5/pgxpool"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/migrations"
)

// DB is the store over a connection pool.
type DB struct {
	pool *pgxpool.Pool
	now  func() time.Time
	// early bounds the logged-flight transactions begun before their
	// analysis ends (BeginLoggedFlight), each holding a connection while
	// the ingest reads through others.
	early chan struct{}
}

// Open connects to the database at url. It does not migrate.
func Open(ctx context.Context, url string) (*DB, error) {
	cfg, err := pgxpool.ParseConfig(url)
	if err != nil {
		return nil, fmt.Errorf("database url: %w", err)
	}
	pool, err := pgxpool.NewWithConfig(ctx, cfg)
	if err != nil {
		return nil, fmt.Errorf("connect: %w", err)
	}
	return New(pool), nil
}

// New wraps an existing pool.
func New(pool *pgxpool.Pool) *DB {
	// Half the pool, rounded down: on a pool of one connection none (an
	// early transaction would hold it while the ingest waits for another).
	return &DB{pool: pool, now: time.Now, early: make(chan struct{}, pool.Config().MaxConns/2)}
}

// Pool returns the underlying pool.
func (db *DB) Pool() *pgxpool.Pool { return db.pool }

// Close closes the pool.
func (db *DB) Close() { db.pool.Close() }

// Ping checks the database answers.
func (db *DB) Ping(ctx context.Context) error {
	if err := db.pool.Ping(ctx); err != nil {
		return &fleet.Error{Code: fleet.EUNAVAILABLE, Message: "database unavailable"}
	}
	return nil
}

// Migrate applies pending migrations on a dedicated connection and refuses a
// schema newer than this binary knows.
func (db *DB) Migrate(ctx context.Context, logf func(string, ...any)) error {
	conn, err := db.pool.Acquire(ctx)
	if err != nil {
		return fmt.Errorf("acquire: %w", err)
	}
	defer conn.Release()
	if _, _, err := schemaVersions(ctx, conn.Conn()); err != nil {
		return err
	}
	return migrations.Migrate(ctx, conn.Conn(), logf)
}

// ErrSchemaBehind is wrapped by CheckSchema's error when migrations are
// pending.
var ErrSchemaBehind = errors.New("database schema is behind")

// CheckSchema fails unless the schema is the version this binary knows; it
// never migrates (only migrate, serve and demo do).
func (db *DB) CheckSchema(ctx context.Context) error {
	cur, latest, err := schemaVersions(ctx, db.pool)
	if err != nil {
		return err
	}
	if cur < latest {
		return fmt.Errorf("%w: it is at version %d and this rotorwright needs %d: run rotorwright migrate", ErrSchemaBehind, cur, latest)
	}
	return nil
}

// schemaVersions reads the database's schema version and the latest this
// binary knows, and refuses a newer database.
func schemaVersions(ctx context.Context, q migrations.Querier) (cur, latest int32, err error) {
	cur, err = migrations.Current(ctx, q)
	if err != nil {
		return 0, 0, fmt.Errorf("schema version: %w", err)
	}
	latest, err = migrations.Latest()
	if err != nil {
		return 0, 0, err
	}
	if cur > latest {
		return 0, 0, fmt.Errorf("database schema version %d is newer than this binary knows (%d): upgrade rotorwright", cur, latest)
	}
	return cur, latest, nil
}

// Actor is who makes a change, recorded in the audit log.
type Actor struct {
	KeyID     string // api key id; empty for the command line
	Name      string
	RequestID string // the service's own id of the request
	// ClientRequestID is the X-Request-ID the client sent, if any: kept
	// apart from ours because the client chooses it.
	ClientRequestID string
	Method          string
	Route           string
	// Role is the key's role; empty for the command line.
	Role fleet.Role
}

type actorKey struct{}

// WithActor attaches the actor of the current request to ctx.
func WithActor(ctx context.Context, a Actor) context.Context {
	return context.WithValue(ctx, actorKey{}, a)
}

func actorFrom(ctx context.Context) Actor {
	a, _ := ctx.Value(actorKey{}).(Actor)
	return a
}

// actingKey is the acting key's id, or nil for the command line.
func actingKey(ctx context.Context) *string {
	if a := actorFrom(ctx); a.KeyID != "" {
		return &a.KeyID
	}
	return nil
}

func newID() string { return uuid.Must(uuid.NewV7()).String() }

// inTx runs fn in a transaction, retrying on serialization failure or
// deadlock, and translates database errors.
func (db *DB) inTx(ctx context.Context, fn func(tx pgx.Tx) error) error {
	var err error
	for attempt := 0; attempt < 3; attempt++ {
		if err = db.tryTx(ctx, fn); !retryable(err) {
			break
		}
	}
	return translate(err)
}

func (db *DB) tryTx(ctx context.Context, fn func(tx pgx.Tx) error) error {
	tx, err := db.pool.Begin(ctx)
	if err != nil {
		return err
	}
	defer tx.Rollback(ctx)
	var rows [][]any
	pendingAudit.Store(tx, &rows)
	defer pendingAudit.Delete(tx)
	if err := fn(tx); err != nil {
		return err
	}
	return commitWithAudit(ctx, tx, rows)
}

// commitWithAudit writes the transaction's pending audit rows and commits.
func commitWithAudit(ctx context.Context, tx pgx.Tx, rows [][]any) error {
	if len(rows) > 0 {
		b := &pgx.Batch{}
		for _, args := range rows {
			b.Queue(insertAuditSQL, args...)
		}
		if err := tx.SendBatch(ctx, b).Close(); err != nil {
			return err
		}
	}
	return tx.Commit(ctx)
}

// retryable is a serialization failure or deadlock: the transaction may
// succeed if run again.
func retryable(err error) bool {
	var pe *pgconn.PgError
	return errors.As(err, &pe) && (pe.Code == "40001" || pe.Code == "40P01")
}

// pendingAudit holds, per transaction run by tryTx, the audit rows written
// during it; they are inserted together just before the commit. Appending
// to the hash chain takes its lock until the commit (migration 007), so
// writing the rows last holds that lock for the commit only, not for the
// whole transaction, and concurrent writers serialise for that much alone.
var pendingAudit sync.Map // pgx.Tx -> *[][]any

const insertAuditSQL = `
		INSERT INTO audit_log (actor, actor_name, request_id, client_request_id, method, route, entity, entity_id,
			before, after)
		VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10)`

// audit writes one audit-log row in tx, at its commit when tx is run by
// tryTx (see pendingAudit). before and after are marshalled to JSON now (nil
// stays SQL NULL), so the row holds the values as they were at the call.
func audit(ctx context.Context, tx pgx.Tx, entity, entityID string, before, after any) error {
	a := actorFrom(ctx)
	var actor *string
	if a.KeyID != "" {
		actor = &a.KeyID
	}
	b, err := jsonOrNil(before)
	if err != nil {
		return err
	}
	af, err := jsonOrNil(after)
	if err != nil {
		return err
	}
	var client *string
	if a.ClientRequestID != "" {
		client = &a.ClientRequestID
	}
	args := []any{actor, a.Name, a.RequestID, client, a.Method, a.Route, entity, entityID, b, af}
	if p, ok := pendingAudit.Load(tx); ok {
		rows := p.(*[][]any)
		*rows = append(*rows, args)
		return nil
	}
	_, err = tx.Exec(ctx, insertAuditSQL, args...)
	return err
}

func jsonOrNil(v any) ([]byte, error) {
	if v == nil {
		return nil, nil
	}
	return json.Marshal(v)
}

// constraintErrors maps constraint names to the field and message a client
// sees. Anything unlisted becomes a generic conflict.
var constraintErrors = map[string]struct{ field, msg string }{
	"airframes_code_key":            {"code", "an airframe with this code exists"},
	"parts_kind_serial_key":         {"serial", "a part of this kind with this serial exists"},
	"jobs_code_key":                 {"code", "a job with this code exists"},
	"fits_part_overlap":             {"part_id", "the part is fitted elsewhere over an overlapping time"},
	"fits_position_overlap":         {"position", "the position holds another part of this kind over an overlapping time"},
	"flights_airframe_overlap":      {"takeoff_at", "the airframe has another flight over an overlapping time"},
	"flights_log_key":               {"log", "this log was already uploaded for this airframe"},
	"flight_packs_overlap":          {"packs", "a pack flies another flight over an overlapping time"},
	"flight_packs_part_once":        {"packs", "a pack is listed twice"},
	"flights_landing_after_takeoff": {"landing_at", "must be after takeoff_at"},
	"api_keys_token_key":            {"token", "token collision"},
	"airframes_layout_fkey":         {"layout", "unknown layout"},
	"flights_job_id_fkey":           {"job_id", "unknown job"},
	"events_airframe_id_fkey":       {"airframe_id", "unknown airframe"},
	"events_part_id_fkey":           {"part_id", "unknown part"},
	"events_flight_id_fkey":         {"flight_id", "unknown flight"},
	"layouts_pkey":                  {"name", "a layout with this name exists"},
	"flight_packs_part_id_fkey":     {"packs", "unknown pack"},
	"flights_airframe_id_fkey":      {"airframe_id", "unknown airframe"},
	"column_maps_name_key":          {"name", "a column map with this name exists"},
	"events_flown_not_ready_once":   {"flight_id", "the flight already has a flown_not_ready event"},
}

// translate maps PostgreSQL errors to fleet errors, trusting constraints
// rather than checking first.
func translate(err error) error {
	if err == nil {
		return nil
	}
	var fe *fleet.Error
	if errors.As(err, &fe) {
		return fe
	}
	if errors.Is(err, pgx.ErrNoRows) {
		return fleet.Errorf(fleet.ENOTFOUND, "not found")
	}
	var pe *pgconn.PgError
	if errors.As(err, &pe) {
		m, known := constraintErrors[pe.ConstraintName]
		if !known {
			m.field = fieldOfConstraint(pe)
		}
		switch pe.Code {
		case "23505", "23P01": // unique_violation, exclusion_violation
			if !known {
				m.msg = "conflicts with an existing record"
			}
			return &fleet.Error{Code: fleet.ECONFLICT, Field: m.field, Message: m.msg}
		case "23503": // foreign_key_violation
			if !known {
				m.msg = "refers to a record that does not exist"
			}
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: m.field, Message: m.msg}
		case "23514": // check_violation
			if !known {
				m.msg = "breaks a rule of the register"
			}
			return &fleet.Error{Code: fleet.EUNPROCESSABLE, Field: m.field, Message: m.msg}
		case "22P02", "22007", "22008": // bad text representation, datetime
			return &fleet.Error{Code: fleet.EINVALID, Field: pe.ColumnName, Message: "malformed value"}
		case "22003": // numeric_value_out_of_range
			return &fleet.Error{Code: fleet.EINVALID, Field: pe.ColumnName, Message: "a number is out of range"}
		}
		// 08 connection exceptions, 53 insufficient resources (too many
		// connections, disk full), 57P0x shutdown, crash or cannot connect now.
		if class := pe.Code[:2]; class == "08" || class == "53" || strings.HasPrefix(pe.Code, "57P") {
			return &fleet.Error{Code: fleet.EUNAVAILABLE, Message: "database unavailable"}
		}
		return err
	}
	if connectionLost(err) {
		return &fleet.Error{Code: fleet.EUNAVAILABLE, Message: "database unavailable"}
	}
	return err
}

// connectionLost reports an error of reaching the database rather than of
// the statement: a refused or broken connection, a server process that died
// mid-transaction (EOF), a closed connection or transaction, a timeout.
func connectionLost(err error) bool {
	var ce *pgconn.ConnectError
	var ne net.Error
	return errors.As(err, &ce) || pgconn.SafeToRetry(err) || pgconn.Timeout(err) ||
		errors.Is(err, context.DeadlineExceeded) || errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) ||
		errors.As(err, &ne) || errors.Is(err, net.ErrClosed) || errors.Is(err, pgconn.ErrConnClosed) ||
		errors.Is(err, pgx.ErrTxClosed) || errors.Is(err, syscall.ECONNRESET) || errors.Is(err, syscall.EPIPE)
}

// fieldOfConstraint names the input member behind a constraint the table
// of known ones lacks: PostgreSQL names a single-column foreign key or check
// <table>_<column>_fkey / _check, and reports not-null violations by column.
func fieldOfConstraint(pe *pgconn.PgError) string {
	if pe.ColumnName != "" {
		return pe.ColumnName
	}
	name, ok := strings.CutPrefix(pe.ConstraintName, pe.TableName+"_")
	if !ok {
		return ""
	}
	for _, suffix := range []string{"_fkey", "_check"} {
		if col, ok := strings.CutSuffix(name, suffix); ok {
			return col
		}
	}
	return ""
}

// Page is a keyset page request: items after Cursor, at most Limit.
type Page struct {
	Limit  int
	Cursor string // opaque; the last id of the previous page
}

// MaxPageSize bounds a page.
const MaxPageSize = 500

// afterID decodes a cursor into the id to page after ("" for the first page).
func (p Page) afterID() (*string, error) {
	if p.Cursor == "" {
		return nil, nil
	}
	b, err := base64.RawURLEncoding.DecodeString(p.Cursor)
	if err != nil {
		return nil, fleet.FieldError("cursor", "is not a cursor this service issued")
	}
	id, err := uuid.ParseBytes(b)
	if err != nil {
		return nil, fleet.FieldError("cursor", "is not a cursor this service issued")
	}
	s := id.String()
	return &s, nil
}

// nextCursor returns the cursor after the last of n fetched ids when a
// further page exists (the query fetched limit+1 rows).
func nextCursor(ids []string, limit int) string {
	if len(ids) <= limit {
		return ""
	}
	return base64.RawURLEncoding.EncodeToString([]byte(ids[limit-1]))
}

// ParseID checks s is a UUID and names field when it is not.
func ParseID(field, s string) (string, error) {
	id, err := uuid.Parse(s)
	if err != nil {
		return "", fleet.FieldError(field, "must be a UUID")
	}
	return id.String(), nil
}

func notFound(what string) error {
	return fleet.Errorf(fleet.ENOTFOUND, "%s not found", what)
}

// versionMismatch is returned when an If-Match version is stale.
func versionMismatch() error {
	return fleet.Errorf(fleet.EPRECONDITION, "the record changed since it was read; fetch it again")
}
