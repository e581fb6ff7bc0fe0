package main

import (
	"context"
	"fmt"
	"io"
	"time"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/internal/demo"
	"github.com/rotorwright/rotorwright/internal/sim"
	"github.com/rotorwright/rotorwright/store"
)

// demoSeed fixes the invented firm: the same fleet and stories every time.
const demoSeed = 20261202

// runDemo loads the demo firm (once per database) and makes an admin key.
// It returns the token to print when the server is listening.
func runDemo(ctx context.Context, app *App, months int) (string, error) {
	// The scenario ends today, so its stories are current.
	end := time.Now().UTC().Truncate(24 * time.Hour)
	sc := sim.DemoFleet(demoSeed, end.AddDate(0, -months, 0), months)
	loaded, err := demo.Loaded(ctx, app.DB, &sc)
	if err != nil {
		return "", err
	}
	if loaded {
		app.log.Info("demo fleet already loaded", "home", app.cfg.Home)
	} else {
		app.log.Info("loading demo fleet", "airframes", len(sc.Airframes), "flights", len(sc.Flights))
		sum, err := demo.Load(ctx, app.DB, &sc, func(f string, a ...any) { app.log.Info(fmt.Sprintf(f, a...)) })
		if err != nil {
			return "", err
		}
		app.log.Info("demo fleet loaded", "airframes", sum.Airframes, "parts", sum.Parts, "fits", sum.Fits,
			"jobs", sum.Jobs, "flights", sum.Flights, "events", sum.Events, "took", sum.Took.Round(time.Millisecond))
	}
	ctx = store.WithActor(ctx, store.Actor{Name: "demo", Method: "CLI", Route: "demo"})
	_, token, err := app.DB.CreateKey(ctx, "demo admin "+time.Now().UTC().Format(time.RFC3339), fleet.RoleAdmin)
	return token, err
}

func printDemoBanner(w io.Writer, addr, token string, took time.Duration) {
	fmt.Fprintf(w, `
Rotorwright demo is up (ready in %s).
  Board:    http://%s/  (sign in with the token)
  API:      http://%s/v1/airframes
  OpenAPI:  http://%s/openapi.yaml
  Admin token (shown once): %s

  Try:  curl -H "Authorization: Bearer %s" http://%s/v1/airframes

Decision support only: airworthiness decisions stay with the operator's maintenance staff,
the manufacturer's instructions and local aviation rules. Lithium packs can burn: charge and
store them as their maker says, never charge a swollen or damaged pack.
Press Ctrl-C to stop (the embedded database stops with it).
`, took.Round(100*time.Millisecond), addr, addr, addr, token, token, addr)
}
