// Package web is the read-only board: server-rendered pages (html/template),
// charts drawn on the server with gonum/plot as inline SVG, and the embedded
// stylesheet and script. The api package loads each page's data from the
// store, schedule and health packages and hands it here to render; nothing
// here does I/O beyond writing the page.
package web

import (
	"bytes"
	"crypto/sha256"
	"embed"
	"encoding/hex"
	"fmt"
	"html/template"
	"io"
	"io/fs"
	"path"
	"strings"
	"time"
)

//go:embed templates/*.html
var templateFS embed.FS

//go:embed assets/*
var assetFS embed.FS

// ContentSecurityPolicy is sent with every board page: scripts and styles
// only from the service itself (no inline script, no inline style), no
// framing by any site, forms post only here.
const ContentSecurityPolicy = "default-src 'none'; script-src 'self'; style-src 'self'; img-src 'self' data:; " +
	"connect-src 'self'; form-action 'self'; frame-ancestors 'none'; base-uri 'none'"

// Board renders the board's pages.
type Board struct {
	pages map[string]*template.Template
}

// New parses the templates: the layout with each page.
func New() (*Board, error) {
	fm := template.FuncMap{"asset": assetURL}
	layout, err := template.New("layout.html").Funcs(funcs).Funcs(fm).ParseFS(templateFS, "templates/layout.html", "templates/partials.html")
	if err != nil {
		return nil, err
	}
	names, err := fs.Glob(templateFS, "templates/*.html")
	if err != nil {
		return nil, err
	}
	b := &Board{pages: map[string]*template.Template{}}
	for _, n := range names {
		name := strings.TrimSuffix(path.Base(n), ".html")
		if name == "layout" || name == "partials" {
			continue
		}
		t, err := template.Must(layout.Clone()).ParseFS(templateFS, n)
		if err != nil {
			return nil, fmt.Errorf("template %s: %w", name, err)
		}
		b.pages[name] = t
	}
	return b, nil
}

// Page is what every page shows around its own content.
type Page struct {
	Name  string // template name, also the active navigation entry
	Title string
	Who   string // the signed-in key's name and role; empty on the sign-in page
	Now   time.Time
	Data  any
}

// Render writes a page. It renders into a buffer first, so a template error
// never leaves half a page.
func (b *Board) Render(w io.Writer, p Page) error {
	t, ok := b.pages[p.Name]
	if !ok {
		return fmt.Errorf("no board page %q", p.Name)
	}
	var buf bytes.Buffer
	if err := t.ExecuteTemplate(&buf, "layout", p); err != nil {
		return err
	}
	_, err := buf.WriteTo(w)
	return err
}

// assetURL names an asset with a hash of its content, so browsers may cache
// it for long and still see a new build's at once.
func assetURL(name string) string {
	b, err := assetFS.ReadFile("assets/" + name)
	if err != nil {
		return "/assets/" + name
	}
	sum := sha256.Sum256(b)
	return "/assets/" + name + "?v=" + hex.EncodeToString(sum[:6])
}

// Asset returns an embedded asset and its content type.
func Asset(name string) ([]byte, string, bool) {
	if strings.Contains(name, "/") {
		return nil, "", false
	}
	b, err := assetFS.ReadFile("assets/" + name)
	if err != nil {
		return nil, "", false
	}
	switch path.Ext(name) {
	case ".css":
		return b, "text/css; charset=utf-8", true
	case ".js":
		return b, "text/javascript; charset=utf-8", true
	case ".svg":
		return b, "image/svg+xml", true
	}
	return b, "application/octet-stream", true
}
