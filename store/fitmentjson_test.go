package store_test

import (
	"bytes"
	"context"
	"encoding/json"
	"reflect"
	"testing"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/pgtest"
	"github.com/rotorwright/rotorwright/store"
)

// FitmentJSON reads its row raw: the fitted kinds and places as binary
// text[] (the extended protocol's choice) and as text (the simple
// protocol's, handed to pgx). Both give the same bytes, and those say what
// the decoded Fitment says (Fitment's JSON, EmptyPlaces), on an airframe
// bare, partly and fully fitted.
func TestFitmentJSONBothFormats(t *testing.T) {
	t.Parallel()
	u := pgtest.NewDB(t)
	ctx := context.Background()
	open := func(mode pgx.QueryExecMode) *store.DB {
		cfg, err := pgxpool.ParseConfig(u)
		if err != nil {
			t.Fatal(err)
		}
		cfg.ConnConfig.DefaultQueryExecMode = mode
		pool, err := pgxpool.NewWithConfig(ctx, cfg)
		if err != nil {
			t.Fatal(err)
		}
		t.Cleanup(pool.Close)
		return store.New(pool)
	}
	bin, text := open(pgx.QueryExecModeCacheStatement), open(pgx.QueryExecModeSimpleProtocol)
	f := &fixture{t: t, ctx: store.WithActor(ctx, store.Actor{Name: "test", Method: "TEST"}), db: bin}
	bare, full := f.airframe("FJ-01", "quad-x"), f.airframe("FJ-02", "quad-x")
	t0 := time.Now().Add(-time.Hour).UTC().Truncate(time.Second)
	f.quadMotors(full, "L1", t0)
	f.fit(full, f.prop(fleet.CCW), "m1", t0.Add(time.Minute))
	for _, a := range []*fleet.Airframe{bare, full} {
		for _, at := range []time.Time{t0.Add(-time.Minute), t0.Add(30 * time.Second), time.Now()} {
			parts, empty, err := bin.FitmentJSON(ctx, a.ID, at)
			if err != nil {
				t.Fatal(err)
			}
			tparts, tempty, err := text.FitmentJSON(ctx, a.ID, at)
			if err != nil {
				t.Fatal(err)
			}
			if !bytes.Equal(parts, tparts) || !bytes.Equal(empty, tempty) {
				t.Fatalf("%s at %s: binary %s %s, text %s %s", a.Code, at, parts, empty, tparts, tempty)
			}
			want, err := bin.Fitment(ctx, a.ID, at)
			if err != nil {
				t.Fatal(err)
			}
			var gotParts []fleet.FittedPart
			var gotEmpty []store.EmptyPlace
			if err := json.Unmarshal(parts, &gotParts); err != nil {
				t.Fatal(err)
			}
			if err := json.Unmarshal(empty, &gotEmpty); err != nil {
				t.Fatal(err)
			}
			for i := range gotParts {
				if !gotParts[i].FittedAt.Equal(want.Parts[i].FittedAt) {
					t.Fatalf("part %d fitted at %s, decoded %s", i, gotParts[i].FittedAt, want.Parts[i].FittedAt)
				}
				gotParts[i].FittedAt = want.Parts[i].FittedAt
			}
			if len(gotParts) != len(want.Parts) || (len(want.Parts) > 0 && !reflect.DeepEqual(gotParts, want.Parts)) ||
				!reflect.DeepEqual(gotEmpty, want.Empty) {
				t.Fatalf("%s at %s: %s %s, decoded %+v %+v", a.Code, at, parts, empty, want.Parts, want.Empty)
			}
		}
	}
	if _, _, err := bin.FitmentJSON(ctx, "01900000-0000-7000-8000-000000000000", time.Now()); fleet.ErrorCode(err) != fleet.ENOTFOUND {
		t.Fatalf("unknown airframe: %v", err)
	}
}
