package main

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

func (c *cli) importCmd() *cobra.Command {
	var code, pilot, override, mapRef string
	cmd := &cobra.Command{
		Use:   "import DIR --airframe CODE",
		Short: "Ingest every *.csv (and *.csv.gz) flight log in a folder, with a progress bar and a summary",
		Long: `Ingest every *.csv and *.csv.gz flight log in DIR for one airframe, with a
progress bar and a summary. A log already stored is reported as present, not
duplicated; a bad file is listed with its line and column and the others are
still imported. Logs in another layout are read through the column map named by
--column-map, else through the map their header selects, else as the native
layout (check a file first with 'rotorwright column-map check').`,
		Args: func(_ *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("import takes one folder of logs, got %d arguments", len(args))
			}
			return nil
		},
		PreRunE: func(*cobra.Command, []string) error {
			if code == "" {
				return usagef("--airframe is required")
			}
			return nil
		},
	}
	cmd.Flags().StringVar(&code, "airframe", "", "tail code of the airframe the logs belong to")
	cmd.Flags().StringVar(&pilot, "pilot", "not recorded", "pilot to record on each flight")
	cmd.Flags().StringVar(&override, "override", "", "why the flights went ahead if the airframe was not ready (kept with each flight)")
	cmd.Flags().StringVar(&mapRef, "column-map", "", "read every log through this column map (name or id; native for the service's own layout)")
	return c.tool(cmd, func(ctx context.Context, app *App, args []string) error {
		return importDir(ctx, app, args[0], code, pilot, override, mapRef)
	})
}

func importDir(ctx context.Context, app *App, dir, code, pilot, override, mapRef string) error {
	files, err := logFiles(dir)
	if err != nil {
		return err
	}
	if len(files) == 0 {
		return fmt.Errorf("no .csv or .csv.gz logs in %s", dir)
	}
	if mapRef != "" && !strings.EqualFold(mapRef, fleet.NativeLayout) {
		if _, err := app.DB.ColumnMapByRef(ctx, mapRef); err != nil {
			return fmt.Errorf("column map %s: %s", mapRef, fleet.ErrorMessage(err))
		}
	}
	sort.Strings(files)
	a, err := app.DB.AirframeByCode(ctx, code)
	if err != nil {
		return fmt.Errorf("airframe %s: %s", code, fleet.ErrorMessage(err))
	}
	ctx = store.WithActor(ctx, store.Actor{Name: "import", Method: "CLI", Route: "import"})
	hs := health.New(app.DB)
	prog := schedule.NewProgramme(app.DB, hs)
	in := &ingest.Ingester{DB: app.DB, Health: hs, Judge: prog.JudgeTakeoff, After: prog.AfterFlight}
	var reasonPtr *string
	if override != "" {
		reasonPtr = &override
	}
	bar := progressbar.NewOptions(len(files), progressbar.OptionSetWriter(app.errOut),
		progressbar.OptionSetDescription("importing "+code), progressbar.OptionShowCount(),
		progressbar.OptionSetPredictTime(true), progressbar.OptionClearOnFinish())
	var imported, present, notReady int
	var refused []string
	start := time.Now()
	for _, path := range files {
		res, err := importOne(ctx, in, path, ingest.Request{ColumnMap: mapRef,
			Flight: fleet.Flight{AirframeID: a.ID, Pilot: pilot, OverrideReason: reasonPtr}})
		switch {
		case err != nil:
			refused = append(refused, fmt.Sprintf("  %s: %s", filepath.Base(path), reason(err)))
		case res.Created:
			imported++
			if res.Verdict != nil && !res.Verdict.Ready {
				notReady++
			}
		default:
			present++
		}
		_ = bar.Add(1)
	}
	_ = bar.Finish()
	fmt.Fprintf(app.out, "%s: %d imported (%d flown not ready), %d already present, %d refused (%d files in %s)\n",
		code, imported, notReady, present, len(refused), len(files), time.Since(start).Round(time.Millisecond))
	if len(refused) > 0 {
		fmt.Fprintln(app.out, "refused:")
		fmt.Fprintln(app.out, strings.Join(refused, "\n"))
		return fmt.Errorf("%d of %d logs refused", len(refused), len(files))
	}
	return nil
}

// importOne ingests one file; a .gz name marks it gzip-compressed (as does
// its content).
func importOne(ctx context.Context, in *ingest.Ingester, path string, req ingest.Request) (ingest.Result, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return ingest.Result{}, err
	}
	req.Log, req.Gzip = b, strings.HasSuffix(strings.ToLower(path), ".gz")
	return in.Ingest(ctx, req)
}

// reason is an error as a person reads it: where in the file (line and
// column, with the column's target when read through a map) or which field,
// then the message.
func reason(err error) string {
	var fe *fleet.Error
	if !errors.As(err, &fe) {
		return err.Error()
	}
	switch {
	case fe.Field != "":
		return fmt.Sprintf("%s: %s", fe.Field, fe.Message)
	}
	return fe.Message
}

func (c *cli) reanalyzeCmd() *cobra.Command {
	var stale bool
	cmd := &cobra.Command{
		Use:   "reanalyze",
		Short: "Recompute stored logs' figures with the current model, then health and the due list",
		Long: `Recompute the figures of every stored log with the current model (each log
records the analysis_version it was analysed with), or with --stale only of
those analysed with an older one, then the health views and the due list that
rest on them. The nightly job reanalyses the stale ones after an upgrade.`,
	}
	cmd.Flags().BoolVar(&stale, "stale", false, "only the logs analysed with an older model")
	return c.tool(cmd, func(ctx context.Context, app *App, _ []string) error {
		ctx = store.WithActor(ctx, store.Actor{Name: "reanalyze", Method: "CLI", Route: "reanalyze"})
		start := time.Now()
		in := &ingest.Ingester{DB: app.DB}
		n, err := in.Reanalyze(ctx, !stale, func(done int) { fmt.Fprintf(app.errOut, "\rreanalysed %d logs", done) })
		fmt.Fprintln(app.errOut)
		if err != nil {
			return err
		}
		fmt.Fprintf(app.out, "reanalysed %d stored logs with analysis version %d in %s\n", n, ingest.AnalysisVersion,
			time.Since(start).Round(time.Millisecond))
		return recomputeAll(ctx, app)
	})
}

func (c *cli) recomputeCmd() *cobra.Command {
	return c.tool(&cobra.Command{
		Use:   "recompute",
		Short: "Recompute the health of every part and airframe, and the due list",
	}, func(ctx context.Context, app *App, _ []string) error { return recomputeAll(ctx, app) })
}

func recomputeAll(ctx context.Context, app *App) error {
	r, err := schedule.NewProgramme(app.DB, health.New(app.DB)).RecomputeAll(ctx)
	if err != nil {
		return err
	}
	fmt.Fprintf(app.out, "recomputed health of %d parts and airframes in %s\n", r.HealthViews, r.HealthTook.Round(time.Millisecond))
	fmt.Fprintf(app.out, "judged readiness at take-off of %d flights recorded without it in %s\n", r.Judged, r.JudgeTook.Round(time.Millisecond))
	fmt.Fprintf(app.out, "recomputed the due list (%d items) in %s\n", r.DueItems, r.DueTook.Round(time.Millisecond))
	return nil
}
