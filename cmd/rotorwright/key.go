package main

import (
	"context"
	"errors"
	"fmt"

	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/fleet"
	"github.com/rotorwright/rotorwright/store"
)

func (c *cli) keyCmd() *cobra.Command {
	return group("key", "Manage API keys", c.keyCreateCmd())
}

func (c *cli) keyCreateCmd() *cobra.Command {
	var name, person, role string
	cmd := &cobra.Command{
		Use:   "create --name N --role R",
		Short: "Create an API key and print its token alone on stdout",
		Long: `Create an API key and print its token alone on stdout, for scripts. The token
is shown once; only its SHA-256 is stored.

Roles: viewer (reads), pilot (+ flights, events, pack checks), technician
(+ parts, fits, jobs, layouts, work records), admin (+ keys, audit log).`,
		PreRunE: func(*cobra.Command, []string) error {
			if name == "" || role == "" {
				return usagef("--name and --role are required")
			}
			return nil
		},
	}
	cmd.Flags().StringVar(&name, "name", "", "what the key is called")
	cmd.Flags().StringVar(&person, "person", "", "the person who holds it (a flight's pilot defaults to them; default: the name)")
	cmd.Flags().StringVar(&role, "role", "", "viewer, pilot, technician or admin")
	return c.tool(cmd, func(ctx context.Context, app *App, _ []string) error {
		ctx = store.WithActor(ctx, store.Actor{Name: "command line", Method: "CLI", Route: "key create"})
		if person == "" {
			person = name
		}
		_, token, err := app.DB.CreatePersonKey(ctx, name, person, fleet.Role(role))
		if err != nil {
			return errors.New(fleet.ErrorMessage(err) + fieldSuffix(err))
		}
		fmt.Fprintln(app.out, token)
		return nil
	})
}
