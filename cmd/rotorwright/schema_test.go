package main

import (
	"context"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
)

// Only migrate, serve and demo apply migrations: every other command on a
// database that is behind says to run migrate and leaves it untouched.
func TestToolsRefuseSchemaBehind(t *testing.T) {
	t.Parallel()
	url := pgtest.NewEmptyDB(t)
	tables := func() int {
		t.Helper()
		conn, err := pgx.Connect(t.Context(), url)
		if err != nil {
			t.Fatal(err)
		}
		defer conn.Close(context.Background())
		var n int
		if err := conn.QueryRow(t.Context(), `SELECT count(*) FROM pg_tables WHERE schemaname = 'public'`).Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	for _, args := range [][]string{
		{"due"},
		{"key", "create", "--name", "ops", "--role", "admin"},
		{"import", t.TempDir(), "--airframe", "RW-07"},
		{"reanalyze"},
		{"recompute"},
		{"audit", "verify"},
	} {
		out, errOut, code := runCLI(t, append(args, "--database-url", url)...)
		if code != exitFailure || !strings.Contains(errOut, "run rotorwright migrate") || out != "" {
			t.Errorf("%v on an empty database: exit %d, stdout %q, stderr %q", args, code, out, errOut)
		}
		if n := tables(); n != 0 {
			t.Fatalf("%v created %d tables", args, n)
		}
	}
	if _, errOut, code := runCLI(t, "migrate", "--database-url", url); code != exitOK {
		t.Fatalf("migrate: exit %d: %s", code, errOut)
	}
	conn, err := pgx.Connect(t.Context(), url)
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close(context.Background())
	cur, err := migrations.Current(t.Context(), conn)
	latest, _ := migrations.Latest()
	if err != nil || cur != latest {
		t.Fatalf("after migrate: version %d (%v), want %d", cur, err, latest)
	}
	if out, errOut, code := runCLI(t, "due", "--database-url", url); code != exitOK || !strings.HasPrefix(out, "STATUS") {
		t.Errorf("due after migrate: exit %d\n%s\n%s", code, out, errOut)
	}
}
