package store_test

import (
	"context"
	"fmt"
	"sync"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// Eight writers append at once (each write is its own transaction with its
// audit row): the chain has no fork, ids follow the chain, and verify passes.
func TestAuditChainUnderConcurrentWriters(t *testing.T) {
	f := newFixture(t)
	const writers, each = 8, 25
	var wg sync.WaitGroup
	errs := make(chan error, writers*each)
	for w := 0; w < writers; w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			ctx := store.WithActor(context.Background(), store.Actor{Name: fmt.Sprintf("writer %d", w), Method: "TEST"})
			for i := 0; i < each; i++ {
				a, err := f.db.CreateAirframe(ctx, &fleet.Airframe{Code: fmt.Sprintf("W%d-%02d", w, i), Layout: "quad-x",
					CellsS: 6, PacksPerFlight: 1, Notes: "naïve ünïcode ✈"})
				if err != nil {
					errs <- err
					return
				}
				// A second row in the same transaction family: an event.
				if _, err := f.db.CreateEvent(ctx, &fleet.Event{At: a.CreatedAt, Kind: "note", AirframeID: &a.ID}); err != nil {
					errs <- err
					return
				}
			}
		}(w)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Fatal(err)
	}
	res, err := f.db.VerifyAudit(f.ctx, store.VerifyOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if res.Fault != nil {
		t.Fatalf("verify after concurrent writers: row %d: %s", res.Fault.ID, res.Fault.Reason)
	}
	if res.Rows != writers*each*2 {
		t.Fatalf("%d rows verified, want %d", res.Rows, writers*each*2)
	}
	// No fork: every row's prev_hash is the hash of the row with the next
	// lower id, so chain order is id order.
	var forks int
	if err := f.db.Pool().QueryRow(f.ctx, `
		SELECT count(*) FROM (SELECT prev_hash, lag(hash) OVER (ORDER BY id) AS before FROM audit_log) x
		WHERE before IS NOT NULL AND before <> prev_hash`).Scan(&forks); err != nil {
		t.Fatal(err)
	}
	if forks != 0 {
		t.Fatalf("%d rows do not chain to the row before them", forks)
	}
	// The head anchors a later check.
	res2, err := f.db.VerifyAudit(f.ctx, store.VerifyOptions{Anchor: res.Head})
	if err != nil || res2.Fault != nil {
		t.Fatalf("anchored verify: %v %+v", err, res2.Fault)
	}
}

// A row changed directly in the database by its owner, with the append-only
// trigger disabled, is named by verify; so is a row removed.
func TestAuditChainDetectsTampering(t *testing.T) {
	f := newFixture(t)
	var ids []string
	for i := 0; i < 5; i++ {
		ids = append(ids, f.airframe(fmt.Sprintf("T-%d", i), "quad-x").ID)
	}
	res, err := f.db.VerifyAudit(f.ctx, store.VerifyOptions{})
	if err != nil || res.Fault != nil || res.Rows != 5 {
		t.Fatalf("clean chain: %v %+v rows %d", err, res.Fault, res.Rows)
	}
	var target int64
	if err := f.db.Pool().QueryRow(f.ctx, `SELECT id FROM audit_log WHERE entity_id = $1`, ids[2]).Scan(&target); err != nil {
		t.Fatal(err)
	}
	tamper := func(sql string, args ...any) {
		t.Helper()
		// Only the owner can: the service's role may not disable triggers.
		tx, err := pgtest.OwnerConn(t, f.db.Pool().Config().ConnString()).Begin(f.ctx)
		if err != nil {
			t.Fatal(err)
		}
		defer tx.Rollback(f.ctx)
		for _, q := range []string{`ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`, sql,
			`ALTER TABLE audit_log ENABLE TRIGGER audit_log_no_update`} {
			a := args
			if q != sql {
				a = nil
			}
			if _, err := tx.Exec(f.ctx, q, a...); err != nil {
				t.Fatalf("%s: %v", q, err)
			}
		}
		if err := tx.Commit(f.ctx); err != nil {
			t.Fatal(err)
		}
	}
	// One character of the recorded after-image changes.
	tamper(`UPDATE audit_log SET after = jsonb_set(after, '{code}', '"T-X"') WHERE id = $1`, target)
	res, err = f.db.VerifyAudit(f.ctx, store.VerifyOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if res.Fault == nil || res.Fault.ID != target {
		t.Fatalf("changed row %d: verify says %+v", target, res.Fault)
	}
	// The forger also rewrites that row's hash: the next row then breaks.
	tamper(`UPDATE audit_log SET hash = sha256(prev_hash || convert_to(audit_canonical(audit_log), 'UTF8')) WHERE id = $1`, target)
	res, _ = f.db.VerifyAudit(f.ctx, store.VerifyOptions{})
	var next int64
	if err := f.db.Pool().QueryRow(f.ctx, `SELECT min(id) FROM audit_log WHERE id > $1`, target).Scan(&next); err != nil {
		t.Fatal(err)
	}
	if res.Fault == nil || res.Fault.ID != next {
		t.Fatalf("rehashed row %d: verify says %+v, want row %d named", target, res.Fault, next)
	}
}

// deleteAuditRow removes a row as the database owner, trigger disabled.
func deleteAuditRow(t *testing.T, f *fixture, where string) {
	t.Helper()
	tx, err := pgtest.OwnerConn(t, f.db.Pool().Config().ConnString()).Begin(f.ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer tx.Rollback(f.ctx)
	for _, q := range []string{`ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`,
		`DELETE FROM audit_log WHERE ` + where, `ALTER TABLE audit_log ENABLE TRIGGER audit_log_no_update`} {
		if _, err := tx.Exec(f.ctx, q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
	}
	if err := tx.Commit(f.ctx); err != nil {
		t.Fatal(err)
	}
}

// Removing the last row leaves a valid shorter chain; an anchor recorded
// earlier catches it.
func TestAuditChainAnchorCatchesRemovedHead(t *testing.T) {
	f2 := newFixture(t)
	for i := 0; i < 3; i++ {
		f2.airframe(fmt.Sprintf("U-%d", i), "quad-x")
	}
	res, _ := f2.db.VerifyAudit(f2.ctx, store.VerifyOptions{})
	head := res.Head
	deleteAuditRow(t, f2, `id = (SELECT max(id) FROM audit_log)`)
	if res, _ := f2.db.VerifyAudit(f2.ctx, store.VerifyOptions{}); res.Fault != nil {
		t.Fatalf("shortened chain without anchor: %+v", res.Fault)
	}
	if res, _ := f2.db.VerifyAudit(f2.ctx, store.VerifyOptions{Anchor: head}); res.Fault == nil {
		t.Fatal("a removed head row passed verify with its anchor")
	}
}

// Removing a middle row breaks the row after it.
func TestAuditChainDetectsRemovedRow(t *testing.T) {
	f3 := newFixture(t)
	for i := 0; i < 3; i++ {
		f3.airframe(fmt.Sprintf("V-%d", i), "quad-x")
	}
	var mid, last int64
	if err := f3.db.Pool().QueryRow(f3.ctx, `SELECT (SELECT id FROM audit_log ORDER BY id OFFSET 1 LIMIT 1), max(id) FROM audit_log`).Scan(&mid, &last); err != nil {
		t.Fatal(err)
	}
	deleteAuditRow(t, f3, fmt.Sprintf(`id = %d`, mid))
	if res, _ := f3.db.VerifyAudit(f3.ctx, store.VerifyOptions{}); res.Fault == nil || res.Fault.ID != last {
		t.Fatalf("middle row removed: verify says %+v, want row %d", res.Fault, last)
	}
}
