package main

import (
	"errors"
	"fmt"
	"io"
	"os"

	"github.com/spf13/cobra"

	"github.com/rotorwright/rotorwright/records"
)

// errBundleBroken makes `records verify` exit non-zero after saying why.
var errBundleBroken = errors.New("records bundle does not verify")

// recordsVerify checks a records bundle file against its manifest and says
// what it found on out; a bundle that fails returns errBundleBroken.
func recordsVerify(path string, out io.Writer) error {
	f, err := os.Open(path)
	if err != nil {
		return err
	}
	defer f.Close()
	st, err := f.Stat()
	if err != nil {
		return err
	}
	rep, err := records.Verify(f, st.Size())
	if err != nil {
		return err
	}
	if rep.Fault != "" {
		fmt.Fprintf(out, "%s: BROKEN: %s\n", path, rep.Fault)
		return errBundleBroken
	}
	m := rep.Manifest
	fmt.Fprintf(out, "%s: intact: %d files match the manifest (airframe %s, written %s, audit head %s)\n",
		path, rep.Checked, m.Airframe, m.GeneratedAt.Format("2006-01-02 15:04:05Z07:00"), m.AuditHead)
	return nil
}

func (c *cli) recordsCmd() *cobra.Command {
	verify := &cobra.Command{
		Use:   "verify FILE",
		Short: "Check a records bundle (GET /v1/airframes/{id}/records) against its manifest",
		Long: `Check a records bundle: every file is listed in manifest.json with its size and SHA-256,
nothing is missing or added, and the zip reads back cleanly. Needs no database.`,
		Args: func(_ *cobra.Command, args []string) error {
			if len(args) != 1 {
				return usagef("give the bundle file")
			}
			return nil
		},
		RunE: func(_ *cobra.Command, args []string) error { return recordsVerify(args[0], c.stdout) },
	}
	return group("records", "Check a records bundle", verify)
}
