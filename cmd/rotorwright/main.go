// Command rotorwright runs the fleet airworthiness service and its tools.
package main

import (
	"context"
	"fmt"
	"os"
	"os/signal"
	"syscall"
)

const usage = `rotorwright: multirotor fleet register, flight logs and maintenance programme

Usage:
  rotorwright serve [--addr A] [--home DIR]   run the API (embedded PostgreSQL unless DATABASE_URL is set)
  rotorwright demo  [--addr A] [--home DIR]   load the demo fleet, print the URL and an admin token, then serve
  rotorwright migrate                          apply database migrations and exit
  rotorwright key create --name N --role R     create an API key; prints the token alone on stdout
      roles: viewer, pilot, technician, admin
  rotorwright import DIR --airframe CODE       ingest every *.csv flight log in DIR, with a summary
  rotorwright reanalyze                        recompute every stored log's figures with the current model
  rotorwright recompute                        recompute the health of every part and airframe, and the due list
  rotorwright due [--all]                      print the due list (overdue and due soon first)
  rotorwright audit verify [--anchor HEAD]     check the audit log's hash chain; names the first bad row

Environment: DATABASE_URL, ROTORWRIGHT_HOME (default ./.rotorwright), ROTORWRIGHT_ADDR
(default 127.0.0.1:8080), ROTORWRIGHT_LOG_LEVEL (debug, info, warn, error).
`

func main() {
	ctx, stop := signal.NotifyContext(context.Background(), os.Interrupt, syscall.SIGTERM)
	err := run(ctx, os.Args[1:])
	stop()
	if err != nil {
		fmt.Fprintln(os.Stderr, "rotorwright:", err)
		os.Exit(1)
	}
}

func run(ctx context.Context, args []string) error {
	if len(args) == 0 {
		fmt.Fprint(os.Stderr, usage)
		return fmt.Errorf("no command given")
	}
	cfg, err := ConfigFromEnv()
	if err != nil {
		return err
	}
	switch args[0] {
	case "serve":
		return cmdServe(ctx, cfg, args[1:], false)
	case "demo":
		return cmdServe(ctx, cfg, args[1:], true)
	case "migrate":
		return cmdMigrate(ctx, cfg, args[1:])
	case "key":
		return cmdKey(ctx, cfg, args[1:])
	case "import":
		return cmdImport(ctx, cfg, args[1:])
	case "reanalyze":
		return cmdReanalyze(ctx, cfg, args[1:])
	case "recompute":
		return cmdRecompute(ctx, cfg, args[1:])
	case "due":
		return cmdDue(ctx, cfg, args[1:])
	case "audit":
		return cmdAudit(ctx, cfg, args[1:])
	case "help", "-h", "--help":
		fmt.Print(usage)
		return nil
	}
	fmt.Fprint(os.Stderr, usage)
	return fmt.Errorf("unknown command %q", args[0])
}
