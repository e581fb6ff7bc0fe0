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

// Current returns the schema version recorded in the database (0 when none).
func Current(ctx context.Context, conn *pgx.Conn) (int32, error) {
	m, err := migrate.NewMigrator(ctx, conn, VersionTable)
	if err != nil {
		return 0, err
	}
	return m.GetCurrentVersion(ctx)
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
