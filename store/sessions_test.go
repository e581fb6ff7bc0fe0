package store_test

import (
	"context"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// Sessions that can no longer be used (expired, ended, of a revoked key)
// are deleted in bounded batches, each with an audit row; live ones stay.
func TestPurgeSessions(t *testing.T) {
	t.Parallel()
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test"})
	db := store.New(pgtest.NewPool(t))
	key, _, err := db.CreateKey(ctx, "board user", fleet.RoleViewer)
	if err != nil {
		t.Fatal(err)
	}
	gone, _, err := db.CreateKey(ctx, "leaver", fleet.RoleViewer)
	if err != nil {
		t.Fatal(err)
	}
	session := func(keyID string, ttl time.Duration) string {
		t.Helper()
		token, _, err := db.CreateSession(ctx, keyID, ttl)
		if err != nil {
			t.Fatal(err)
		}
		return token
	}
	live := session(key.ID, time.Hour)
	session(key.ID, -time.Minute) // expired
	if err := db.EndSession(ctx, session(key.ID, time.Hour)); err != nil {
		t.Fatal(err)
	}
	session(gone.ID, time.Hour)
	if _, err := db.RevokeKey(ctx, gone.ID); err != nil {
		t.Fatal(err)
	}
	count := func(q string) int {
		t.Helper()
		var n int
		if err := db.Pool().QueryRow(ctx, q).Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n
	}
	const deletions = `SELECT count(*) FROM audit_log WHERE entity = 'board_session' AND after IS NULL`
	audited := count(deletions)           // the sign-out's
	for _, want := range []int{2, 1, 0} { // three dead sessions, two a run
		n, err := db.PurgeSessions(ctx, 2)
		if err != nil || n != want {
			t.Fatalf("purge: %d, %v; want %d", n, err, want)
		}
	}
	if n := count(`SELECT count(*) FROM board_sessions`); n != 1 {
		t.Fatalf("%d sessions left, want the live one", n)
	}
	if _, _, err := db.SessionKey(ctx, live); err != nil {
		t.Fatalf("the live session after the purge: %v", err)
	}
	if n := count(deletions) - audited; n != 3 {
		t.Fatalf("%d deletion audit rows, want 3", n)
	}
}
