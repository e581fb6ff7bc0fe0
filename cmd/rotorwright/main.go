// Command rotorwright runs the fleet airworthiness service and its tools.
//
// Each command group has its own file (serve.go, key.go, due.go, logs.go,
// ...) with a constructor method on cli; newRoot lists them. A new command
// is a new constructor and one line in newRoot.
package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"os"
	"os/signal"
	"strings"
	"syscall"

	"github.com/rotorwright/rotorwright/internal/logging"
	"github.com/spf13/cobra"
)

// Exit statuses: 2 for a command line that could not be understood (unknown
// command or flag, missing argument), as the shells and most tools do.
const (
	exitOK      = 0
	exitFailure = 1
	exitUsage   = 2
)

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	// Standard error in batches of whole lines (one write per batch, not
	// per access line), flushed within logging.FlushEvery, at once after a
	// warning or error, and before the process exits.
	stderr := logging.NewWriter(os.Stderr, logging.FlushEvery)
	code := execute(ctx, os.Args[1:], os.Stdout, stderr)
	stop()
	_ = stderr.Stop()
	os.Exit(code)
}

// cli is what every command shares: the configuration from the environment,
// which the command's flags override, and where output goes.
type cli struct {
	cfg    Config
	cfgErr error // a bad environment variable, reported when a command runs
	stdout io.Writer
	stderr io.Writer
}

// usageError is a command line that cannot be run as given; it exits 2.
type usageError struct{ msg string }

func (e *usageError) Error() string { return e.msg }

func usagef(format string, args ...any) error {
	return &usageError{msg: fmt.Sprintf(format, args...)}
}

// execute runs the command line args and returns the exit status. Errors
// are printed once, on stderr, without the usage text.
func execute(ctx context.Context, args []string, stdout, stderr io.Writer) int {
	c := &cli{stdout: stdout, stderr: stderr}
	c.cfg, c.cfgErr = ConfigFromEnv()
	root := c.newRoot()
	// Everything cobra refuses (unknown command or flag, wrong number of
	// arguments) happens before the root's pre-run hook: an error before
	// it is a usage error.
	started := false
	root.PersistentPreRunE = func(*cobra.Command, []string) error {
		started = true
		if c.cfgErr != nil {
			return &usageError{msg: c.cfgErr.Error()}
		}
		return nil
	}
	root.SetArgs(args)
	cmd, err := root.ExecuteContextC(ctx)
	if err == nil {
		return exitOK
	}
	var ue *usageError
	if !started || errors.As(err, &ue) {
		fmt.Fprintf(stderr, "%s: %v (see '%s --help')\n", cmd.CommandPath(), err, cmd.CommandPath())
		return exitUsage
	}
	fmt.Fprintf(stderr, "%s: %v\n", cmd.CommandPath(), err)
	return exitFailure
}

func (c *cli) newRoot() *cobra.Command {
	root := &cobra.Command{
		Use:   "rotorwright",
		Short: "Multirotor fleet register, flight logs and maintenance programme",
		Long: `rotorwright: multirotor fleet register, flight logs and maintenance programme.

With no DATABASE_URL every command uses the embedded PostgreSQL cluster in the
home folder (ROTORWRIGHT_HOME, default ./.rotorwright). Flags override the
environment variables of the same name.

Decision support only: airworthiness decisions stay with the operator's
maintenance personnel, the manufacturer's instructions and local aviation rules.`,
		Version:       version(),
		SilenceErrors: true,
		SilenceUsage:  true,
		Args:          cobra.ArbitraryArgs,
		RunE:          needSubcommand,
	}
	root.SetOut(c.stdout)
	root.SetErr(c.stderr)
	root.SetVersionTemplate("{{.Name}} {{.Version}}\n")
	root.CompletionOptions.DisableDefaultCmd = true
	root.AddCommand(
		c.serveCmd(),
		c.demoCmd(),
		c.migrateCmd(),
		c.keyCmd(),
		c.importCmd(),
		c.columnMapCmd(),
		c.reanalyzeCmd(),
		c.recomputeCmd(),
		c.dueCmd(),
		c.auditCmd(),
		c.packCmd(),
		c.recordsCmd(),
	)
	return root
}

// group makes a command that only holds subcommands: run alone or with an
// unknown subcommand it is a usage error.
func group(use, short string, subs ...*cobra.Command) *cobra.Command {
	g := &cobra.Command{Use: use, Short: short, Args: cobra.ArbitraryArgs, RunE: needSubcommand}
	g.AddCommand(subs...)
	return g
}

// needSubcommand is the run function of commands that only hold others.
func needSubcommand(cmd *cobra.Command, args []string) error {
	if len(args) == 0 {
		return usagef("a command is needed")
	}
	cmd.SuggestionsMinimumDistance = 2 // cobra's own default, set only on its own path
	if s := cmd.SuggestionsFor(args[0]); len(s) > 0 {
		return usagef("unknown command %q (did you mean %s?)", args[0], strings.Join(s, " or "))
	}
	return usagef("unknown command %q", args[0])
}

// noArgs refuses positional arguments on commands that take none.
func noArgs(_ *cobra.Command, args []string) error {
	if len(args) > 0 {
		return usagef("unexpected argument %q", args[0])
	}
	return nil
}
