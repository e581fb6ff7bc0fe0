package main

import (
	"context"
	"errors"
	"strings"

	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/fleet"
)

// tool makes cmd a command that needs the database: it binds the database
// flags and runs body on an app opened beside any serving instance, closed
// afterwards. body sees the command's context and positional arguments.
// Checks of the command line that need no database go in cmd.PreRunE and
// return usagef errors.
func (c *cli) tool(cmd *cobra.Command, body func(ctx context.Context, app *App, args []string) error) *cobra.Command {
	return c.toolMigrating(cmd, false, body)
}

// toolMigrating is tool; with migrate set it applies pending migrations
// (the migrate command), else it refuses a schema that is behind.
func (c *cli) toolMigrating(cmd *cobra.Command, migrate bool, body func(ctx context.Context, app *App, args []string) error) *cobra.Command {
	c.cfg.bindDatabase(cmd.Flags())
	if migrate {
		c.cfg.bindOwner(cmd.Flags())
	}
	if cmd.Args == nil {
		cmd.Args = noArgs
	}
	cmd.RunE = func(cmd *cobra.Command, args []string) error {
		app := newApp(c.cfg, c.stdout, c.stderr)
		app.command = strings.TrimPrefix(cmd.CommandPath(), "rotorwright ")
		defer app.Close()
		if err := app.openForTool(cmd.Context(), migrate); err != nil {
			return err
		}
		return body(cmd.Context(), app, args)
	}
	return cmd
}

func (c *cli) migrateCmd() *cobra.Command {
	return c.toolMigrating(&cobra.Command{
		Use:   "migrate",
		Short: "Apply database migrations and exit",
		Long: `Apply pending database migrations and exit. serve and demo also migrate when
they start; every other command refuses a schema that is behind.`,
	}, true, func(_ context.Context, app *App, _ []string) error {
		app.log.Info("schema up to date")
		return nil
	})
}

// fieldSuffix names the field a fleet error is about, for one-line messages.
func fieldSuffix(err error) string {
	var fe *fleet.Error
	if errors.As(err, &fe) && fe.Field != "" {
		return " (" + fe.Field + ")"
	}
	return ""
}
