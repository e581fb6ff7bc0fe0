// Package web embeds the read-only board: one page that reads the API with
// the viewer's token (kept in the browser tab only) and shows airframe
// readiness, the due list, open events and spares, with the safety cautions.
package web

import _ "embed"

// Board is the board page served at /.
//
//go:embed board.html
var Board []byte
