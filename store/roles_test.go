package store_test

import (
	"context"
	"errors"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgconn"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
	"github.com/rotorwright/rotorwright/store"
)

// The service's role (every store test connects as it) writes the audit log
// through the store, but cannot change, remove or truncate its rows, nor
// disable, drop or replace its triggers, nor alter the table: PostgreSQL
// refuses with insufficient_privilege before any trigger runs.
func TestServiceRolePrivileges(t *testing.T) {
	t.Parallel()
	url := pgtest.NewDB(t)
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test", Method: "TEST"})
	db, err := store.Open(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	if _, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: "LP-1", Layout: "quad-x", CellsS: 6, PacksPerFlight: 1}); err != nil {
		t.Fatalf("the service could not write through the store: %v", err)
	}
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(context.Background())
	var n int
	if err := conn.QueryRow(ctx, `SELECT count(*) FROM audit_log`).Scan(&n); err != nil || n != 1 {
		t.Fatalf("audit rows readable by the service: %d, %v", n, err)
	}
	for _, tc := range []struct{ sql, want string }{
		{`UPDATE audit_log SET actor_name = 'someone else'`, "permission denied for table audit_log"},
		{`DELETE FROM audit_log`, "permission denied for table audit_log"},
		{`TRUNCATE audit_log`, "permission denied for table audit_log"},
		{`ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`, "must be owner of table audit_log"},
		{`ALTER TABLE audit_log DISABLE TRIGGER ALL`, "must be owner of table audit_log"},
		{`DROP TRIGGER audit_log_chain ON audit_log`, "must be owner of relation audit_log"},
		{`ALTER TABLE audit_log ADD COLUMN note text`, "must be owner of table audit_log"},
		{`ALTER TABLE audit_log RENAME TO audit_log_old`, "must be owner of table audit_log"},
		{`DROP TABLE audit_log`, "must be owner of table audit_log"},
		{`CREATE OR REPLACE FUNCTION audit_log_refuse() RETURNS trigger LANGUAGE plpgsql AS $$ BEGIN RETURN NEW; END $$`,
			"permission denied for schema public"},
		{`SET session_replication_role = replica`, "permission denied to set parameter"},
		{`DELETE FROM work_records`, "permission denied for table work_records"},
		{`DELETE FROM discrepancies`, "permission denied for table discrepancies"},
		{`DELETE FROM part_software`, "permission denied for table part_software"},
		{`UPDATE notice_decisions SET reason = 'other'`, "permission denied for table notice_decisions"},
		{`UPDATE schema_version SET version = 1`, "permission denied for table schema_version"},
		{`CREATE TABLE shadow (x int)`, "permission denied for schema public"},
		{`TRUNCATE flights`, "permission denied for table flights"},
		{`ALTER ROLE ` + migrations.ServiceRole + ` SUPERUSER`, "must be superuser to alter superuser roles"},
	} {
		_, err := conn.Exec(ctx, tc.sql)
		var pgErr *pgconn.PgError
		if !errors.As(err, &pgErr) || pgErr.Code != "42501" || !strings.Contains(pgErr.Message, tc.want) {
			t.Errorf("%s: %v, want insufficient_privilege %q", tc.sql, err, tc.want)
		}
	}
	if err := conn.QueryRow(ctx, `SELECT count(*) FROM audit_log`).Scan(&n); err != nil || n != 1 {
		t.Fatalf("audit rows after the attempts: %d, %v", n, err)
	}
	// The role has no attribute that would bypass the grants, owns nothing,
	// and is not a member of the owner.
	var super, createRole, createDB, bypass bool
	var owned int
	if err := conn.QueryRow(ctx, `
		SELECT r.rolsuper, r.rolcreaterole, r.rolcreatedb, r.rolbypassrls,
		       (SELECT count(*) FROM pg_class c WHERE pg_has_role(c.relowner, 'USAGE') AND c.relnamespace = 'public'::regnamespace)
		FROM pg_roles r WHERE r.rolname = current_user`).Scan(&super, &createRole, &createDB, &bypass, &owned); err != nil {
		t.Fatal(err)
	}
	if super || createRole || createDB || bypass || owned != 0 {
		t.Errorf("service role: superuser %v createrole %v createdb %v bypassrls %v, owns %d relations",
			super, createRole, createDB, bypass, owned)
	}
	if role, privileged, err := db.Privileged(ctx); err != nil || privileged {
		t.Errorf("Privileged() = %s, %v, %v; want false", role, privileged, err)
	}
}

// Every table the migrations made is usable by the service, and a table a
// later migration adds (as the owner) gets the same grants by default.
func TestServiceRoleDefaultPrivileges(t *testing.T) {
	t.Parallel()
	url := pgtest.NewDB(t)
	ctx := context.Background()
	conn, err := pgx.Connect(ctx, url)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(ctx)
	rows, err := conn.Query(ctx, `SELECT relname::text FROM pg_class
		WHERE relnamespace = 'public'::regnamespace AND relkind IN ('r', 'p')
		AND NOT (has_table_privilege(oid, 'SELECT') AND has_table_privilege(oid, 'INSERT'))`)
	if err != nil {
		t.Fatal(err)
	}
	missing, err := pgx.CollectRows(rows, pgx.RowTo[string])
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range missing {
		if m != "schema_version" { // read-only to the service, on purpose
			t.Errorf("the service may not read and insert into table %s", m)
		}
	}
	owner := pgtest.OwnerConn(t, url)
	if _, err := owner.Exec(ctx, `CREATE TABLE later_table (id bigserial PRIMARY KEY, v text)`); err != nil {
		t.Fatal(err)
	}
	for _, sql := range []string{
		`INSERT INTO later_table (v) VALUES ('a')`,
		`UPDATE later_table SET v = 'b'`,
		`SELECT v FROM later_table`,
		`DELETE FROM later_table`,
	} {
		if _, err := conn.Exec(ctx, sql); err != nil {
			t.Errorf("%s on a table added later: %v", sql, err)
		}
	}
	if _, err := conn.Exec(ctx, `TRUNCATE later_table`); err == nil {
		t.Error("the service may truncate a table added later")
	}
	// As the owner, the store reports itself privileged (serve warns).
	odb, err := store.Open(ctx, pgtest.OwnerURL(t, url))
	if err != nil {
		t.Fatal(err)
	}
	defer odb.Close()
	if _, privileged, err := odb.Privileged(ctx); err != nil || !privileged {
		t.Errorf("Privileged() as the owner = %v, %v; want true", privileged, err)
	}
}
