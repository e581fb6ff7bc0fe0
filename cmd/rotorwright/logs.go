package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"time"

	"github.com/schollz/progressbar/v3"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/ingest"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

// cmdImport bulk-imports a folder of flight logs for one airframe, with a
// progress bar and a summary; refused files are listed with the reason.
func cmdImport(ctx context.Context, cfg Config, args []string) error {
	var code, pilot, override string
	// The folder may come before the flags, as the usage line shows it.
	var dir string
	if len(args) > 0 && !strings.HasPrefix(args[0], "-") {
		dir, args = args[0], args[1:]
	}
	if dir == "" {
		return errors.New("usage: rotorwright import DIR --airframe CODE [--pilot NAME] [--override REASON]")
	}
	return runTool(ctx, cfg, "import", args, func(fs *flag.FlagSet) {
		fs.StringVar(&code, "airframe", "", "tail code of the airframe the logs belong to")
		fs.StringVar(&pilot, "pilot", "not recorded", "pilot to record on each flight")
		fs.StringVar(&override, "override", "", "record the flights even if the airframe is not ready, for this reason")
	}, func(app *App) error {
		if code == "" {
			return errors.New("usage: rotorwright import DIR --airframe CODE [--pilot NAME] [--override REASON]")
		}
		return importDir(ctx, app, dir, code, pilot, override)
	})
}

func importDir(ctx context.Context, app *App, dir, code, pilot, override string) error {
	files, err := filepath.Glob(filepath.Join(dir, "*.csv"))
	if err != nil {
		return err
	}
	if len(files) == 0 {
		return fmt.Errorf("no .csv logs in %s", dir)
	}
	sort.Strings(files)
	a, err := app.DB.AirframeByCode(ctx, code)
	if err != nil {
		return fmt.Errorf("airframe %s: %s", code, fleet.ErrorMessage(err))
	}
	ctx = store.WithActor(ctx, store.Actor{Name: "import", Method: "CLI", Route: "import"})
	hs := health.New(app.DB)
	prog := schedule.NewProgramme(app.DB, hs)
	in := &ingest.Ingester{DB: app.DB, Health: hs, Gate: prog.Gate,
		After: func(ctx context.Context, f *fleet.Flight) error {
			_, err := prog.RecomputeAirframe(ctx, f.AirframeID, nil)
			return err
		}}
	var reasonPtr *string
	if override != "" {
		reasonPtr = &override
	}
	bar := progressbar.NewOptions(len(files), progressbar.OptionSetWriter(os.Stderr),
		progressbar.OptionSetDescription("importing "+code), progressbar.OptionShowCount(),
		progressbar.OptionSetPredictTime(true), progressbar.OptionClearOnFinish())
	var imported, present int
	var refused []string
	start := time.Now()
	for _, path := range files {
		res, err := importOne(ctx, in, path, a.ID, pilot, reasonPtr)
		switch {
		case err != nil:
			refused = append(refused, fmt.Sprintf("  %s: %s", filepath.Base(path), reason(err)))
		case res.Created:
			imported++
		default:
			present++
		}
		_ = bar.Add(1)
	}
	_ = bar.Finish()
	fmt.Printf("%s: %d imported, %d already present, %d refused (%d files in %s)\n",
		code, imported, present, len(refused), len(files), time.Since(start).Round(time.Millisecond))
	if len(refused) > 0 {
		fmt.Println("refused:")
		fmt.Println(strings.Join(refused, "\n"))
		return fmt.Errorf("%d of %d logs refused", len(refused), len(files))
	}
	return nil
}

func importOne(ctx context.Context, in *ingest.Ingester, path, airframeID, pilot string, override *string) (ingest.Result, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return ingest.Result{}, err
	}
	return in.Ingest(ctx, ingest.Request{Flight: fleet.Flight{AirframeID: airframeID, Pilot: pilot, OverrideReason: override}, Log: b})
}

// reason is an error as a person reads it: the message, where in the file,
// or which field.
func reason(err error) string {
	var fe *fleet.Error
	if !errors.As(err, &fe) {
		return err.Error()
	}
	switch {
	case fe.Line > 0:
		return fmt.Sprintf("line %d, column %s: %s", fe.Line, fe.Column, fe.Message)
	case fe.Field != "":
		return fmt.Sprintf("%s: %s", fe.Field, fe.Message)
	}
	return fe.Message
}

// cmdReanalyze recomputes every stored log's figures with the current model,
// then the health views and due list that rest on them.
func cmdReanalyze(ctx context.Context, cfg Config, args []string) error {
	return runTool(ctx, cfg, "reanalyze", args, nil, func(app *App) error {
		ctx := store.WithActor(ctx, store.Actor{Name: "reanalyze", Method: "CLI", Route: "reanalyze"})
		start := time.Now()
		in := &ingest.Ingester{DB: app.DB}
		n, err := in.Reanalyze(ctx, func(done int) { fmt.Fprintf(os.Stderr, "\rreanalysed %d logs", done) })
		fmt.Fprintln(os.Stderr)
		if err != nil {
			return err
		}
		fmt.Printf("reanalysed %d stored logs with analysis version %d in %s\n", n, ingest.AnalysisVersion,
			time.Since(start).Round(time.Millisecond))
		return recomputeAll(ctx, app)
	})
}

// cmdRecompute recomputes the health of every motor, propeller and pack,
// every airframe's trends and the due list.
func cmdRecompute(ctx context.Context, cfg Config, args []string) error {
	return runTool(ctx, cfg, "recompute", args, nil, func(app *App) error { return recomputeAll(ctx, app) })
}

func recomputeAll(ctx context.Context, app *App) error {
	r, err := schedule.NewProgramme(app.DB, health.New(app.DB)).RecomputeAll(ctx)
	if err != nil {
		return err
	}
	fmt.Printf("recomputed health of %d parts and airframes in %s\n", r.HealthViews, r.HealthTook.Round(time.Millisecond))
	fmt.Printf("recomputed the due list (%d items) in %s\n", r.DueItems, r.DueTook.Round(time.Millisecond))
	return nil
}

// cmdDue prints the due list (overdue and due soon first) for scripts and
// people at a terminal.
func cmdDue(ctx context.Context, cfg Config, args []string) error {
	var all bool
	return runTool(ctx, cfg, "due", args, func(fs *flag.FlagSet) {
		fs.BoolVar(&all, "all", false, "list items that are ok too")
	}, func(app *App) error {
		if _, err := schedule.NewProgramme(app.DB, health.New(app.DB)).RecomputeFleet(ctx); err != nil {
			return err
		}
		items, err := app.DB.DueItems(ctx, store.DueFilter{})
		if err != nil {
			return err
		}
		fmt.Printf("%-9s %-10s %-16s %-40s %s\n", "STATUS", "GROUNDING", "SUBJECT", "RULE", "REASON / FORECAST")
		for _, d := range items {
			if d.Status == fleet.DueOK && !all {
				continue
			}
			fc, g := "", ""
			if d.ForecastDate != nil {
				fc = " / " + d.ForecastDate.Format("2006-01-02")
			}
			if d.Grounding {
				g = "grounding"
			}
			fmt.Printf("%-9s %-10s %-16s %-40s %s%s\n", d.Status, g, d.Subject, d.RuleName, d.Reason, fc)
		}
		return nil
	})
}
