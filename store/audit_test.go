package store_test

import (
	"encoding/json"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

func storeFlightFilter(airframeID string) store.FlightFilter {
	return store.FlightFilter{AirframeID: airframeID}
}

func storePage(n int) store.Page { return store.Page{Limit: n} }

func TestAuditLogRowPerWriteAndAppendOnly(t *testing.T) {
	f := newFixture(t)
	a := f.airframe("RW-71", "quad-x")
	reason := "awaiting arm inspection"
	upd, err := f.db.UpdateAirframe(f.ctx, a.ID, a.Version, func(x *fleet.Airframe) error {
		x.HoldReason = &reason
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if upd.Status != fleet.AirframeGrounded {
		t.Fatalf("held airframe status %s, want grounded", upd.Status)
	}
	// A stale version is refused and leaves no audit row.
	_, err = f.db.UpdateAirframe(f.ctx, a.ID, a.Version, func(*fleet.Airframe) error { return nil })
	wantCode(t, err, fleet.EPRECONDITION, "")

	rows, _, err := f.db.Audit(f.ctx, store.AuditFilter{Entity: "airframe", EntityID: a.ID}, storePage(50))
	if err != nil {
		t.Fatal(err)
	}
	if len(rows) != 2 {
		t.Fatalf("%d audit rows, want 2 (create, update)", len(rows))
	}
	if rows[0].Before != nil || rows[0].After == nil {
		t.Fatalf("create row: before %s, after %s", rows[0].Before, rows[0].After)
	}
	var before, after fleet.Airframe
	if err := json.Unmarshal(rows[1].Before, &before); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(rows[1].After, &after); err != nil {
		t.Fatal(err)
	}
	if before.HoldReason != nil || after.HoldReason == nil || *after.HoldReason != reason {
		t.Fatalf("update row before %+v after %+v", before.HoldReason, after.HoldReason)
	}
	if rows[1].ActorName != "test" {
		t.Fatalf("actor %q, want test", rows[1].ActorName)
	}

	// The trigger refuses UPDATE, DELETE and TRUNCATE on the audit log even
	// to its owner (the service's role has no such privilege at all:
	// TestServiceRolePrivileges).
	owner := pgtest.OwnerConn(t, f.db.Pool().Config().ConnString())
	for _, sql := range []string{
		`UPDATE audit_log SET actor_name = 'someone else'`,
		`DELETE FROM audit_log`,
		`TRUNCATE audit_log`,
	} {
		if _, err := owner.Exec(f.ctx, sql); err == nil || !strings.Contains(err.Error(), "append-only") {
			t.Fatalf("%s as the owner: %v, want the append-only trigger's refusal", sql, err)
		}
	}
	after2, _, _ := f.db.Audit(f.ctx, store.AuditFilter{}, storePage(500))
	if len(after2) < 2 {
		t.Fatalf("audit rows vanished: %d left", len(after2))
	}
}
