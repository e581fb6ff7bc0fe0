package main

import (
	"bytes"
	"context"
	"io"
	"strings"
	"testing"

	"github.com/jackc/pgx/v5/pgconn"

	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/migrations"
)

// currentUser is the role the app's pool connects as.
func currentUser(t *testing.T, app *App) string {
	t.Helper()
	var u string
	if err := app.DB.Pool().QueryRow(t.Context(), `SELECT current_user`).Scan(&u); err != nil {
		t.Fatal(err)
	}
	return u
}

// On the embedded cluster the service migrates as the cluster's superuser
// and serves as the least-privilege role; so does a command beside it.
func TestEmbeddedServiceRole(t *testing.T) {
	t.Parallel()
	home := newHome(t)
	app, _, _ := startApp(t, Config{Home: home})
	if u := currentUser(t, app); u != migrations.ServiceRole {
		t.Errorf("the embedded service connects as %s, want %s", u, migrations.ServiceRole)
	}
	if _, privileged, err := app.DB.Privileged(t.Context()); err != nil || privileged {
		t.Errorf("Privileged = %v, %v", privileged, err)
	}
	tool := newApp(Config{Home: home}, io.Discard, io.Discard)
	tool.command = "test"
	if err := tool.openForTool(t.Context(), false); err != nil {
		t.Fatal(err)
	}
	defer tool.Close()
	if u := currentUser(t, tool); u != migrations.ServiceRole {
		t.Errorf("a command beside the service connects as %s", u)
	}
}

// With an external server: DATABASE_URL is the service's role, the owner's
// URL only migrates. Without the owner's URL, migrating as the service's
// role fails and says what to give.
func TestOwnerDatabaseURL(t *testing.T) {
	t.Parallel()
	owner := pgtest.NewEmptyDB(t)
	svc := pgtest.ServiceURL(t, owner)
	_, errOut, code := runCLI(t, "migrate", "--database-url", svc)
	if code != exitFailure || !strings.Contains(errOut, "ROTORWRIGHT_OWNER_DATABASE_URL") {
		t.Fatalf("migrate as the service's role: exit %d, stderr %q", code, errOut)
	}
	var log bytes.Buffer
	app := newApp(Config{DatabaseURL: svc, OwnerDatabaseURL: owner, Addr: "127.0.0.1:0"}, io.Discard, &log)
	if err := app.Open(t.Context()); err != nil {
		t.Fatalf("%v\n%s", err, log.String())
	}
	defer app.Close()
	cfg, err := pgconn.ParseConfig(svc)
	if err != nil {
		t.Fatal(err)
	}
	if u := currentUser(t, app); u != cfg.User || strings.Contains(log.String(), "audit-log rows") {
		t.Errorf("serve connects as %s, want %s; log:\n%s", u, cfg.User, log.String())
	}
	if !strings.Contains(log.String(), "migrating up") {
		t.Errorf("serve did not migrate with the owner's URL:\n%s", log.String())
	}
	if out, errOut, code := runCLI(t, "due", "--database-url", svc); code != exitOK || !strings.HasPrefix(out, "STATUS") {
		t.Errorf("due as the service's role: exit %d\n%s", code, errOut)
	}
}

// A service that connects as the owner still runs, and warns that its role
// could change the audit log.
func TestWarnPrivilegedService(t *testing.T) {
	t.Parallel()
	var log bytes.Buffer
	app := newApp(Config{DatabaseURL: pgtest.OwnerURL(t, pgtest.NewDB(t))}, io.Discard, &log)
	if err := app.Open(context.Background()); err != nil {
		t.Fatal(err)
	}
	defer app.Close()
	if !strings.Contains(log.String(), "level=WARN") || !strings.Contains(log.String(), "can change or remove audit-log rows") {
		t.Errorf("no warning for a privileged service role:\n%s", log.String())
	}
}
