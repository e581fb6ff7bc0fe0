package main

import (
	"bytes"
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// `audit verify` prints the head of an intact chain and names the row a
// direct edit changed, exiting non-zero.
func TestAuditVerifyCommand(t *testing.T) {
	t.Parallel()
	db := store.New(pgtest.NewPool(t))
	ctx := store.WithActor(context.Background(), store.Actor{Name: "test", Method: "TEST"})
	for i := 0; i < 3; i++ {
		if _, err := db.CreateAirframe(ctx, &fleet.Airframe{Code: fmt.Sprintf("AV-%d", i), Layout: "quad-x", CellsS: 6, PacksPerFlight: 1}); err != nil {
			t.Fatal(err)
		}
	}
	var out, errw bytes.Buffer
	if err := auditVerify(ctx, db, auditVerifyOptions{}, &out, &errw); err != nil {
		t.Fatalf("intact chain: %v\n%s", err, out.String())
	}
	if !strings.Contains(out.String(), "intact: 3 rows") {
		t.Fatalf("output %q", out.String())
	}
	var id int64
	if err := db.Pool().QueryRow(ctx, `SELECT id FROM audit_log ORDER BY id OFFSET 1 LIMIT 1`).Scan(&id); err != nil {
		t.Fatal(err)
	}
	owner := pgtest.OwnerConn(t, db.Pool().Config().ConnString()) // only the owner can tamper
	for _, q := range []string{`ALTER TABLE audit_log DISABLE TRIGGER audit_log_no_update`,
		fmt.Sprintf(`UPDATE audit_log SET actor_name = 'somebody else' WHERE id = %d`, id),
		`ALTER TABLE audit_log ENABLE TRIGGER audit_log_no_update`} {
		if _, err := owner.Exec(ctx, q); err != nil {
			t.Fatal(err)
		}
	}
	out.Reset()
	err := auditVerify(ctx, db, auditVerifyOptions{}, &out, &errw)
	if !errors.Is(err, errChainBroken) || !strings.Contains(out.String(), fmt.Sprintf("BROKEN at row %d", id)) {
		t.Fatalf("tampered chain: err %v, output %q", err, out.String())
	}
}
