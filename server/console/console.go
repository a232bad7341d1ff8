// Package console is veneer's built-in query page: an HTML page with an
// editor for SPARQL, example queries, and a view of the answer as a table or
// as the bytes of any result format. Its script and style sheet are embedded
// in the binary; the page loads nothing from elsewhere.
package console

import (
	"bytes"
	"embed"
	"fmt"
	"html/template"
	"io/fs"
	"net/http"
	"strconv"
)

//go:embed static
var static embed.FS

// Example is an example query the page offers.
type Example struct {
	// Name labels the example in the page's list.
	Name string `json:"name"`
	// Query is the SPARQL text.
	Query string `json:"query"`
}

// Options configure the page.
type Options struct {
	// Title heads the page; "veneer" when empty.
	Title string
	// Endpoint and Explain are the URLs the page sends queries and explain
	// requests to, relative to the page. The page is served at the root and
	// at the endpoint, so "sparql" and "explain" fit both.
	Endpoint, Explain string
	// Examples are offered in a list; the first fills the editor.
	Examples []Example
}

// Console serves the page and its assets.
type Console struct {
	page   []byte
	assets map[string]asset
}

// asset is an embedded file with its media type.
type asset struct {
	ctype string
	data  []byte
}

// AssetPrefix is the path, relative to the page, under which the page loads
// its assets; serve them there with ServeAsset.
const AssetPrefix = "console/"

// New renders the page once for the given options.
func New(o Options) (*Console, error) {
	if o.Title == "" {
		o.Title = "veneer"
	}
	if len(o.Examples) == 0 {
		o.Examples = []Example{{Name: "Any ten triples", Query: "SELECT ?s ?p ?o WHERE { ?s ?p ?o } LIMIT 10\n"}}
	}
	tmpl, err := template.ParseFS(static, "static/index.html")
	if err != nil {
		return nil, fmt.Errorf("console: %w", err)
	}
	var b bytes.Buffer
	err = tmpl.Execute(&b, map[string]any{
		"Title":    o.Title,
		"Endpoint": o.Endpoint,
		"Explain":  o.Explain,
		"Assets":   AssetPrefix,
		"Examples": o.Examples, // the script context writes them as JSON
	})
	if err != nil {
		return nil, fmt.Errorf("console: %w", err)
	}
	c := &Console{page: b.Bytes(), assets: map[string]asset{}}
	for name, ctype := range map[string]string{"app.js": "text/javascript; charset=utf-8", "app.css": "text/css; charset=utf-8"} {
		data, err := fs.ReadFile(static, "static/"+name)
		if err != nil {
			return nil, fmt.Errorf("console: %w", err)
		}
		c.assets[name] = asset{ctype, data}
	}
	return c, nil
}

// ServePage writes the page.
func (c *Console) ServePage(w http.ResponseWriter, r *http.Request) {
	h := w.Header()
	h.Set("Content-Type", "text/html; charset=utf-8")
	h.Set("Content-Length", strconv.Itoa(len(c.page)))
	// The page runs only its own script and style sheet, and may not be framed.
	h.Set("Content-Security-Policy", "default-src 'self'; script-src 'self'; style-src 'self'; img-src 'self' data:; frame-ancestors 'none'")
	h.Set("X-Content-Type-Options", "nosniff")
	if r.Method != http.MethodHead {
		w.Write(c.page)
	}
}

// ServeAsset writes the asset name ("app.js" or "app.css"): the part of the
// request path after AssetPrefix.
func (c *Console) ServeAsset(w http.ResponseWriter, r *http.Request, name string) {
	a, ok := c.assets[name]
	if !ok {
		http.NotFound(w, r)
		return
	}
	h := w.Header()
	h.Set("Content-Type", a.ctype)
	h.Set("Content-Length", strconv.Itoa(len(a.data)))
	h.Set("Cache-Control", "no-cache")
	h.Set("X-Content-Type-Options", "nosniff")
	if r.Method != http.MethodHead {
		w.Write(a.data)
	}
}
