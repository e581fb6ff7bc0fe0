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
	fs := flag.NewFlagSet("import", flag.ContinueOnError)
	cfg.flags(fs)
	code := fs.String("airframe", "", "tail code of the airframe the logs belong to")
	pilot := fs.String("pilot", "not recorded", "pilot to record on each flight")
	override := fs.String("override", "", "record the flights even if the airframe is not ready, for this reason")
	// The folder may come before the flags, as the usage line shows it.
	var dir string
	if len(args) > 0 && !strings.HasPrefix(args[0], "-") {
		dir, args = args[0], args[1:]
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if dir == "" && fs.NArg() == 1 {
		dir = fs.Arg(0)
	} else if fs.NArg() != 0 {
		dir = ""
	}
	if dir == "" || *code == "" {
		return errors.New("usage: rotorwright import DIR --airframe CODE [--pilot NAME]")
	}
	files, err := filepath.Glob(filepath.Join(dir, "*.csv"))
	if err != nil {
		return err
	}
	if len(files) == 0 {
		return fmt.Errorf("no .csv logs in %s", dir)
	}
	sort.Strings(files)
	app := NewApp(cfg)
	defer app.Close()
	if err := app.openForTool(ctx); err != nil {
		return err
	}
	a, err := app.DB.AirframeByCode(ctx, *code)
	if err != nil {
		return fmt.Errorf("airframe %s: %s", *code, fleet.ErrorMessage(err))
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
	if *override != "" {
		reasonPtr = override
	}
	bar := progressbar.NewOptions(len(files), progressbar.OptionSetWriter(os.Stderr),
		progressbar.OptionSetDescription("importing "+*code), progressbar.OptionShowCount(),
		progressbar.OptionSetPredictTime(true), progressbar.OptionClearOnFinish())
	var imported, present int
	var refused []string
	start := time.Now()
	for _, path := range files {
		res, err := importOne(ctx, in, path, a.ID, *pilot, reasonPtr)
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
		*code, imported, present, len(refused), len(files), time.Since(start).Round(time.Millisecond))
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

// cmdReanalyze recomputes every stored log's figures with the current model.
func cmdReanalyze(ctx context.Context, cfg Config, args []string) error {
	fs := flag.NewFlagSet("reanalyze", flag.ContinueOnError)
	cfg.flags(fs)
	if err := fs.Parse(args); err != nil {
		return err
	}
	app := NewApp(cfg)
	defer app.Close()
	if err := app.openForTool(ctx); err != nil {
		return err
	}
	ctx = store.WithActor(ctx, store.Actor{Name: "reanalyze", Method: "CLI", Route: "reanalyze"})
	start := time.Now()
	in := &ingest.Ingester{DB: app.DB}
	n, err := in.Reanalyze(ctx, func(done int) { fmt.Fprintf(os.Stderr, "\rreanalysed %d logs", done) })
	fmt.Fprintln(os.Stderr)
	if err != nil {
		return err
	}
	fmt.Printf("reanalysed %d stored logs with analysis version %d in %s\n", n, ingest.AnalysisVersion,
		time.Since(start).Round(time.Millisecond))
	// Health views rest on the figures just replaced.
	m, err := health.New(app.DB).Recompute(ctx, nil)
	if err != nil {
		return err
	}
	fmt.Printf("recomputed health of %d parts and airframes\n", m)
	return nil
}

// cmdRecompute recomputes the health of every motor, propeller and pack and
// every airframe's trends.
func cmdRecompute(ctx context.Context, cfg Config, args []string) error {
	fs := flag.NewFlagSet("recompute", flag.ContinueOnError)
	cfg.flags(fs)
	if err := fs.Parse(args); err != nil {
		return err
	}
	app := NewApp(cfg)
	defer app.Close()
	if err := app.openForTool(ctx); err != nil {
		return err
	}
	start := time.Now()
	n, err := health.New(app.DB).Recompute(ctx, func(done, total int) {
		fmt.Fprintf(os.Stderr, "\rrecomputed %d/%d", done, total)
	})
	fmt.Fprintln(os.Stderr)
	if err != nil {
		return err
	}
	fmt.Printf("recomputed health of %d parts and airframes in %s\n", n, time.Since(start).Round(time.Millisecond))
	start = time.Now()
	m, err := schedule.NewProgramme(app.DB, health.New(app.DB)).RecomputeFleet(ctx)
	if err != nil {
		return err
	}
	fmt.Printf("recomputed the due list (%d items) in %s\n", m, time.Since(start).Round(time.Millisecond))
	return nil
}

// cmdDue prints the due list (overdue and due soon first) for scripts and
// people at a terminal.
func cmdDue(ctx context.Context, cfg Config, args []string) error {
	fs := flag.NewFlagSet("due", flag.ContinueOnError)
	cfg.flags(fs)
	all := fs.Bool("all", false, "list items that are ok too")
	if err := fs.Parse(args); err != nil {
		return err
	}
	app := NewApp(cfg)
	defer app.Close()
	if err := app.openForTool(ctx); err != nil {
		return err
	}
	prog := schedule.NewProgramme(app.DB, health.New(app.DB))
	if _, err := prog.RecomputeFleet(ctx); err != nil {
		return err
	}
	items, err := app.DB.DueItems(ctx, store.DueFilter{})
	if err != nil {
		return err
	}
	fmt.Printf("%-9s %-10s %-16s %-40s %s\n", "STATUS", "GROUNDING", "SUBJECT", "RULE", "REASON / FORECAST")
	for _, d := range items {
		if d.Status == fleet.DueOK && !*all {
			continue
		}
		fc := ""
		if d.ForecastDate != nil {
			fc = " / " + d.ForecastDate.Format("2006-01-02")
		}
		g := ""
		if d.Grounding {
			g = "grounding"
		}
		fmt.Printf("%-9s %-10s %-16s %-40s %s%s\n", d.Status, g, d.Subject, d.RuleName, d.Reason, fc)
	}
	return nil
}
