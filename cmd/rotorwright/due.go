package main

import (
	"context"
	"fmt"
	"strings"

	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/health"
	"github.com/rotorwright/rotorwright/schedule"
	"github.com/rotorwright/rotorwright/store"
)

func (c *cli) dueCmd() *cobra.Command {
	var all bool
	cmd := &cobra.Command{
		Use:   "due",
		Short: "Print the due list (overdue and due soon first)",
	}
	cmd.Flags().BoolVar(&all, "all", false, "list items that are ok too")
	return c.tool(cmd, func(ctx context.Context, app *App, _ []string) error {
		if _, err := schedule.NewProgramme(app.DB, health.New(app.DB)).RecomputeFleet(ctx); err != nil {
			return err
		}
		items, err := app.DB.DueItems(ctx, store.DueFilter{})
		if err != nil {
			return err
		}
		fmt.Fprintf(app.out, "%-9s %-10s %-16s %-40s %s\n", "STATUS", "GROUNDING", "SUBJECT", "RULE", "REASON / FORECAST")
		for _, d := range items {
			if d.Status == fleet.DueOK && !all {
				continue
			}
			fc, g := "", ""
			switch {
			case d.ForecastDate != nil:
				fc = " / " + d.ForecastDate.Format("2006-01-02")
			case d.ForecastReason != nil: // beyond horizon, no recent use
				fc = " / " + strings.ReplaceAll(*d.ForecastReason, "_", " ")
			}
			if d.Grounding {
				g = "grounding"
			}
			fmt.Fprintf(app.out, "%-9s %-10s %-16s %-40s %s%s\n", d.Status, g, d.Subject, d.RuleName, d.Reason, fc)
		}
		return nil
	})
}
