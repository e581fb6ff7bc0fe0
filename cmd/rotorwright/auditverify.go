package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/store"
)

// auditVerifyOptions are the options of `rotorwright audit verify`.
type auditVerifyOptions struct {
	Anchor string // a head hash recorded earlier; it must still be in the chain
	JSON   bool   // print the result as JSON
}

// errChainBroken makes the command exit non-zero after it has said why.
var errChainBroken = fmt.Errorf("audit chain broken")

// auditVerify walks the audit chain and prints the result on out (progress on
// errw); a broken chain names its first bad row and returns errChainBroken.
func auditVerify(ctx context.Context, db *store.DB, o auditVerifyOptions, out, errw io.Writer) error {
	res, err := db.VerifyAudit(ctx, store.VerifyOptions{Anchor: o.Anchor, Progress: func(n int64) {
		fmt.Fprintf(errw, "checked %d rows\n", n)
	}})
	if err != nil {
		return err
	}
	if o.JSON {
		enc := json.NewEncoder(out)
		enc.SetIndent("", "  ")
		if err := enc.Encode(res); err != nil {
			return err
		}
	} else if res.Fault == nil {
		fmt.Fprintf(out, "audit chain intact: %d rows, head %s\n", res.Rows, res.Head)
		fmt.Fprintln(out, "keep the head elsewhere; `audit verify --anchor HEAD` later proves no row after it was removed")
	} else if res.Fault.ID == 0 {
		fmt.Fprintf(out, "audit chain BROKEN: %s\n", res.Fault.Reason)
	} else {
		fmt.Fprintf(out, "audit chain BROKEN at row %d (after %d good rows): %s\n", res.Fault.ID, res.Rows-1, res.Fault.Reason)
	}
	if res.Fault != nil {
		return errChainBroken
	}
	return nil
}

func (c *cli) auditCmd() *cobra.Command {
	var o auditVerifyOptions
	verify := &cobra.Command{
		Use:   "verify",
		Short: "Check the audit log's hash chain; names the first bad row",
	}
	verify.Flags().StringVar(&o.Anchor, "anchor", "", "a head hash printed by an earlier verify; fail unless it is still in the chain")
	verify.Flags().BoolVar(&o.JSON, "json", false, "print the result as JSON")
	return group("audit", "Check the audit log", c.tool(verify, func(ctx context.Context, app *App, _ []string) error {
		return auditVerify(ctx, app.DB, o, app.out, app.errOut)
	}))
}
