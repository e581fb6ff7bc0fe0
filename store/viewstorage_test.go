package store_test

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/store"
)

// Health views and airframe trends, rewritten after every ingest, are
// compressed with lz4 rather than pglz (migration 026: about half the cost
// of rewriting them) when the server was built with lz4; they read back as
// stored either way.
func TestHealthViewsCompressedWithLZ4(t *testing.T) {
	f := newFixture(t)
	var lz4 bool
	if err := f.db.Pool().QueryRow(f.ctx, `SELECT 'lz4' = ANY (enumvals) FROM pg_settings
		WHERE name = 'default_toast_compression'`).Scan(&lz4); err != nil {
		t.Fatal(err)
	}
	if !lz4 {
		t.Skip("this PostgreSQL was built without lz4: the migration keeps pglz")
	}
	a := f.airframe("LZ-1", "quad-x")
	m := f.motor("cw", "LOT-LZ")
	// A long, compressible series, as a motor's view at hundreds of flights.
	var series []string
	at := time.Date(2026, 1, 1, 0, 0, 0, 0, time.UTC)
	for i := range 3000 {
		series = append(series, fmt.Sprintf(`{"at":%q,"value":%g}`, at.Add(time.Duration(i)*time.Hour).Format(time.RFC3339), float64(i)*1e-6))
	}
	view := `{"series":[` + strings.Join(series, ",") + `]}`
	if err := f.db.SavePartHealths(f.ctx, []store.HealthRow{{ID: m.ID, Status: "ok", View: map[string]any{}, JSON: []byte(view)}}, 1, at); err != nil {
		t.Fatal(err)
	}
	if err := f.db.SaveAirframeTrendsMany(f.ctx, []store.HealthRow{{ID: a.ID, View: map[string]any{"series": series}}}, 1, at); err != nil {
		t.Fatal(err)
	}
	for _, q := range []string{
		`SELECT pg_column_compression(view) FROM part_health WHERE part_id = $1`,
		`SELECT pg_column_compression(view) FROM airframe_trends WHERE airframe_id = $1`,
	} {
		id := m.ID
		if strings.Contains(q, "airframe") {
			id = a.ID
		}
		var method *string
		if err := f.db.Pool().QueryRow(f.ctx, q, id).Scan(&method); err != nil {
			t.Fatal(err)
		}
		if got := "none"; method == nil || *method != "lz4" {
			if method != nil {
				got = *method
			}
			t.Errorf("%s: compressed with %s, want lz4", q, got)
		}
	}
	raw, err := f.db.PartHealth(f.ctx, m.ID)
	if err != nil || !strings.Contains(string(raw), `"value": 0.002999`) {
		t.Fatalf("view read back: %.200s, %v", raw, err)
	}
}
