package api

import (
	"encoding/csv"
	"io"
	"strconv"

	"github.com/rotorwright/rotorwright/fleet"
)

// CSV formula injection: a spreadsheet runs a cell that begins with '=',
// '+', '-' or '@' as a formula (tab and carriage return can smuggle one
// past a trim), so text from people — codes, serials, names, notes — is
// written with a leading single quote when it begins so (the common
// guidance). Numbers the service formats itself (num) stay raw: they
// carry no formula, and a negative number must stay a number.

// safeText neutralises a text cell (the rule is fleet.SpreadsheetSafe, shared
// with the records bundle's CSV copies).
func safeText(s string) string { return fleet.SpreadsheetSafe(s) }

// csvWriter writes rows of text and number cells.
type csvWriter struct{ w *csv.Writer }

func newCSV(out io.Writer) *csvWriter { return &csvWriter{w: csv.NewWriter(out)} }

// cell is one CSV cell: text from a record, or a number formatted here.
type cell struct {
	s      string
	number bool
}

func text(s string) cell { return cell{s: s} }

func num(v float64, prec int) cell {
	return cell{s: strconv.FormatFloat(v, 'f', prec, 64), number: true}
}

// row writes a row; text cells are neutralised.
func (c *csvWriter) row(cells ...cell) error {
	rec := make([]string, len(cells))
	for i, x := range cells {
		if x.number {
			rec[i] = x.s
		} else {
			rec[i] = safeText(x.s)
		}
	}
	return c.w.Write(rec)
}

func (c *csvWriter) flush() error {
	c.w.Flush()
	return c.w.Error()
}
