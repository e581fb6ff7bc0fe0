package main

import (
	"time"

	"github.com/spf13/cobra"
)

func (c *cli) serveCmd() *cobra.Command {
	cmd := &cobra.Command{
		Use:   "serve",
		Short: "Serve the API and the board",
		Long: `Serve the API, the board, /metrics and the scheduled jobs until interrupted.

Applies pending migrations first. With no DATABASE_URL it runs the embedded
PostgreSQL cluster in the home folder and stops it on exit.`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error { return c.serve(cmd, false, 0) },
	}
	c.cfg.bindServe(cmd.Flags())
	return cmd
}

func (c *cli) demoCmd() *cobra.Command {
	months := 4
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Load the demo fleet once, print the URL and an admin token, serve",
		Long: `Load the invented demo firm (once per database), make an admin key, print the
board and API addresses with its token, then serve like serve does.`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error { return c.serve(cmd, true, months) },
	}
	c.cfg.bindServe(cmd.Flags())
	cmd.Flags().IntVar(&months, "months", months, "months of simulated flights in the demo fleet (at least 2)")
	return cmd
}

// serve opens the app (migrating), loads the demo when asked and serves
// until the command's context ends.
func (c *cli) serve(cmd *cobra.Command, demo bool, months int) error {
	// The demo's stories need two months of flights (sim.DemoFleet
	// simulates at least two, so a shorter demo would end in the future).
	if demo && months < 2 {
		return usagef("--months must be at least 2, not %d", months)
	}
	ctx := cmd.Context()
	app := newApp(c.cfg, c.stdout, c.stderr)
	app.command = cmd.Name()
	defer app.Close()
	start := time.Now()
	if err := app.Open(ctx); err != nil {
		return err
	}
	if !demo {
		return app.Run(ctx)
	}
	token, err := runDemo(ctx, app, months)
	if err != nil {
		return err
	}
	errc := make(chan error, 1)
	go func() { errc <- app.Run(ctx) }()
	select {
	case addr := <-app.Addr:
		printDemoBanner(app.out, addr, token, time.Since(start))
	case err := <-errc:
		return err
	}
	return <-errc
}
