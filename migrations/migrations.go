// Package migrations holds the numbered SQL migrations, embedded, and applies
// them with tern under its advisory lock.
package migrations

import (
	"context"
	"embed"
	"fmt"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/tern/v2/migrate"
)

//go:embed *.sql
var files embed.FS

// VersionTable records the applied schema version.
const VersionTable = "public.schema_version"

// ServiceRole is the role migration 008 grants the service's privileges
// to: row reads and writes, INSERT and SELECT only on the audit log, no
// ownership. The service connects as it (given LOGIN) or as a member of it.
const ServiceRole = "rotorwright_service"

// Migrate applies every pending migration on conn. tern holds a session
// advisory lock while it runs, so replicas starting together migrate once.
func Migrate(ctx context.Context, conn *pgx.Conn, logf func(string, ...any)) error {
	m, err := migrate.NewMigrator(ctx, conn, VersionTable)
	if err != nil {
		return fmt.Errorf("migrator: %w", err)
	}
	if err := m.LoadMigrations(files); err != nil {
		return fmt.Errorf("load migrations: %w", err)
	}
	if logf != nil {
		m.OnStart = func(seq int32, name, direction, _ string) {
			logf("migrating %s %d %s", direction, seq, name)
		}
	}
	return m.Migrate(ctx)
}

// Latest returns the highest migration number this binary knows.
func Latest() (int32, error) {
	names, err := migrate.FindMigrations(files)
	if err != nil {
		return 0, err
	}
	return int32(len(names)), nil
}

// Querier is what Current reads through: a connection or a pool.
type Querier interface {
	QueryRow(ctx context.Context, sql string, args ...any) pgx.Row
}

// Current returns the schema version recorded in the database, 0 when no
// migration ever ran. It only reads: a command that must not migrate can
// ask without creating tern's version table.
func Current(ctx context.Context, q Querier) (int32, error) {
	var exists bool
	if err := q.QueryRow(ctx, `SELECT to_regclass($1) IS NOT NULL`, VersionTable).Scan(&exists); err != nil {
		return 0, err
	}
	if !exists {
		return 0, nil
	}
	var v int32
	err := q.QueryRow(ctx, "SELECT version FROM "+VersionTable).Scan(&v)
	return v, err
}

// Prepare migrates the database at url on a connection of its own: the
// preparation step of a test template database (pgtest.Main).
func Prepare(ctx context.Context, url string) error {
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		return err
	}
	defer conn.Close(ctx)
	return Migrate(ctx, conn, nil)
}
