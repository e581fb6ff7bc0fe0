package main

import (
	"context"
	"strings"
	"testing"
	"time"

	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/schedule"
)

// Health views and trends stored by an older health model (as after an
// upgrade that changed it) are recomputed when the service starts, not left
// on the board until the nightly job; with every view current, nothing is
// run at start.
func TestServiceStartRecomputesViewsOfAnOlderModel(t *testing.T) {
	t.Parallel()
	url, db := testStore(t)
	ctx := context.Background()
	a, p := quadWithPack(t, ctx, db, "OLD-01", "OLD-P1")
	if _, err := schedule.NewProgramme(db, health.New(db)).RecomputeAll(ctx); err != nil {
		t.Fatal(err)
	}
	// The views as an older model left them: marked, and numbered 0.
	if _, err := db.Pool().Exec(ctx, `UPDATE part_health SET model_version = 0, view = view || '{"older_model": true}'`); err != nil {
		t.Fatal(err)
	}
	if _, err := db.Pool().Exec(ctx, `UPDATE airframe_trends SET model_version = 0, view = view || '{"older_model": true}'`); err != nil {
		t.Fatal(err)
	}

	logs := &lockedBuffer{}
	app, _, stop := runApp(t, Config{DatabaseURL: url}, logs)
	current := func() bool {
		var n int
		if err := db.Pool().QueryRow(ctx, `
			SELECT (SELECT count(*) FROM part_health WHERE part_id = $1 AND model_version = $3 AND NOT view ? 'older_model')
				+ (SELECT count(*) FROM airframe_trends WHERE airframe_id = $2 AND model_version = $3 AND NOT view ? 'older_model')`,
			p.ID, a.ID, health.ModelVersion).Scan(&n); err != nil {
			t.Fatal(err)
		}
		return n == 2
	}
	for deadline := time.Now().Add(60 * time.Second); !current(); time.Sleep(100 * time.Millisecond) {
		if time.Now().After(deadline) {
			t.Fatalf("the older model's views are still stored a minute after the service started:\n%s", logs.String())
		}
	}
	stop()
	for _, want := range []string{"stored figures come from an older model", "health_views=1", "airframe_trends=1",
		"stored figures brought up to date"} {
		if !strings.Contains(logs.String(), want) {
			t.Errorf("the log lacks %q:\n%s", want, logs.String())
		}
	}
	if stale, err := app.staleFigures(ctx); err != nil || stale {
		t.Fatalf("after the start-up run: stale %v, %v", stale, err)
	}
}
