package fleet

import "strings"

// formulaStart lists the characters that make a spreadsheet cell a formula
// ('=', '+', '-', '@'; tab and carriage return can smuggle one past a trim).
const formulaStart = "=+-@\t\r"

// SpreadsheetSafe neutralises a CSV text cell against formula injection: a
// cell that begins like a formula gets a leading single quote (the common
// guidance). Numbers the service formats itself need no quoting.
func SpreadsheetSafe(s string) string {
	if s != "" && strings.ContainsRune(formulaStart, rune(s[0])) {
		return "'" + s
	}
	return s
}
