// Package web holds the browser notebook (the page, its script and style,
// and the worker that runs the engine compiled to WebAssembly), serves it
// with a strict Content Security Policy, and writes the single-file page
// that opens from disk and recomputes offline.
//
// The engine itself, static/gapbook.wasm, and the Go runtime support script
// static/wasm_exec.js are built files, git-ignored: `make wasm` builds them.
// Without them the page is served but says how to build the engine.
package web

import (
	"bytes"
	"compress/gzip"
	"context"
	"crypto/sha256"
	"embed"
	"encoding/base64"
	"encoding/hex"
	"fmt"
	"io"
	"io/fs"
	"net"
	"net/http"
	"path"
	"strings"
	"sync"

	"gapbook/notebook"
	_ "gapbook/notebook/kinds" // registers the cell kinds
)

//go:embed static
var embedded embed.FS

// Assets returns the page's files embedded in the binary.
func Assets() fs.FS {
	sub, err := fs.Sub(embedded, "static")
	if err != nil {
		panic(err) // the directory is part of the source tree
	}
	return sub
}

// Build names the command that builds the engine, for messages.
const Build = "make wasm  (or: GOOS=js GOARCH=wasm go build -trimpath -ldflags='-s -w' -o web/static/gapbook.wasm ./wasm && cp \"$(go env GOROOT)/lib/wasm/wasm_exec.js\" web/static/)"

// Missing reports which built files are absent from assets, with how to
// build them, or nil when the page is complete.
func Missing(assets fs.FS) error {
	var miss []string
	for _, f := range []string{"gapbook.wasm", "wasm_exec.js"} {
		if _, err := fs.Stat(assets, f); err != nil {
			miss = append(miss, f)
		}
	}
	if len(miss) == 0 {
		return nil
	}
	return fmt.Errorf("the page's engine is not built (%s missing); build it with:\n  %s", strings.Join(miss, ", "), Build)
}

// Policy is the Content Security Policy of the served page: scripts only
// from the page's own files (and WebAssembly compilation), no network
// beyond its own origin, no plugins, frames, forms or base changes.
// Inline styles are allowed because the printable report opens from a blob
// and carries its own style sheet; notebook content is escaped regardless.
const Policy = "default-src 'none'; script-src 'self' 'wasm-unsafe-eval'; connect-src 'self'; " +
	"worker-src 'self' blob:; img-src 'self' data: blob:; style-src 'self' 'unsafe-inline'; font-src 'self'; " +
	"frame-ancestors 'none'; base-uri 'none'; form-action 'none'; object-src 'none'"

// Options configure Handler.
type Options struct {
	// Notebook is the file served as the page's notebook.
	Notebook []byte
	// Assets are the page's files; nil means the embedded ones.
	Assets fs.FS
	// Hosts are host names accepted besides the loopback ones (127.0.0.1,
	// localhost, ::1): the address the server was asked to listen on when
	// that is not a loopback address.
	Hosts []string
}

// MaxStandaloneBuilds is how many standalone pages the server builds at
// once; more requests are answered 503 (each build holds the study, the
// engine and the page in memory).
const MaxStandaloneBuilds = 2

// Loopback reports whether host (without port) names this machine's
// loopback interface.
func Loopback(host string) bool {
	if host == "localhost" {
		return true
	}
	ip := net.ParseIP(strings.Trim(host, "[]"))
	return ip != nil && ip.IsLoopback()
}

// guard answers the requests a local server without authentication must
// refuse: a Host that is not this machine (a page elsewhere reaching
// 127.0.0.1 through DNS rebinding), a state-changing request from another
// origin, and methods a path does not serve (docs/architecture.md, "The
// local server").
func guard(o Options, next http.Handler) http.Handler {
	allowed := map[string]bool{}
	for _, h := range o.Hosts {
		allowed[strings.ToLower(h)] = true
	}
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("Content-Security-Policy", Policy)
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("Referrer-Policy", "no-referrer")
		h.Set("Cache-Control", "no-cache")
		host := r.Host
		if h, _, err := net.SplitHostPort(host); err == nil {
			host = h
		}
		if !Loopback(host) && !allowed[strings.ToLower(host)] {
			http.Error(w, fmt.Sprintf("host %q is not served: this server answers only requests addressed to this machine (127.0.0.1, localhost)", r.Host), http.StatusForbidden)
			return
		}
		post := r.URL.Path == "/standalone"
		switch {
		case post && r.Method != http.MethodPost:
			w.Header().Set("Allow", "POST")
			http.Error(w, "POST a notebook to get its standalone page", http.StatusMethodNotAllowed)
			return
		case !post && r.Method != http.MethodGet && r.Method != http.MethodHead:
			w.Header().Set("Allow", "GET, HEAD")
			http.Error(w, r.Method+" is not served here; the page's files are read with GET", http.StatusMethodNotAllowed)
			return
		}
		if post {
			if origin := r.Header.Get("Origin"); origin != "" && origin != "http://"+r.Host {
				http.Error(w, fmt.Sprintf("a request from %q may not ask this server for a page; open the notebook at http://%s/", origin, r.Host), http.StatusForbidden)
				return
			}
			if r.Header.Get("Sec-Fetch-Site") == "cross-site" {
				http.Error(w, "a request from another site may not ask this server for a page", http.StatusForbidden)
				return
			}
		}
		next.ServeHTTP(w, r)
	})
}

// Handler serves the page, its files, the notebook at /notebook.gapbook
// and, for POST /standalone with a notebook as the body, the single-file
// page of it.
func Handler(o Options) http.Handler {
	assets := o.Assets
	if assets == nil {
		assets = Assets()
	}
	files := http.FileServerFS(assets)
	tags := &etags{fsys: assets, tag: map[string]string{}}
	builds := make(chan struct{}, MaxStandaloneBuilds)
	engine := &gzipped{fsys: assets}
	return guard(o, http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header() // the security headers are set by guard
		switch r.URL.Path {
		case "/notebook.gapbook":
			h.Set("Content-Type", "application/json")
			w.Write(o.Notebook)
			return
		case "/standalone":
			if r.ContentLength > notebook.MaxFileBytes {
				http.Error(w, fmt.Sprintf("the notebook is %d bytes; at most %d are accepted", r.ContentLength, notebook.MaxFileBytes), http.StatusRequestEntityTooLarge)
				return
			}
			select {
			case builds <- struct{}{}:
				defer func() { <-builds }()
			default:
				h.Set("Retry-After", "2")
				http.Error(w, fmt.Sprintf("the server is building %d standalone pages already; try again in a moment", MaxStandaloneBuilds), http.StatusServiceUnavailable)
				return
			}
			doc, err := io.ReadAll(io.LimitReader(r.Body, notebook.MaxFileBytes+1))
			if err == nil && len(doc) > notebook.MaxFileBytes {
				http.Error(w, fmt.Sprintf("the notebook is larger than %d bytes, the most accepted", notebook.MaxFileBytes), http.StatusRequestEntityTooLarge)
				return
			}
			var page []byte
			if err == nil {
				// The page checks the notebook when it opens it; here only
				// that it is one (notebook.Sniff holds no tree in memory).
				if err = notebook.Sniff(doc); err == nil {
					page, err = standalone(doc, assets, engine)
				}
			}
			if err != nil {
				http.Error(w, err.Error(), http.StatusBadRequest)
				return
			}
			h.Set("Content-Type", "text/html; charset=utf-8")
			w.Write(page)
			return
		case "/gapbook.wasm", "/wasm_exec.js":
			if _, err := fs.Stat(assets, path.Base(r.URL.Path)); err != nil {
				http.Error(w, Missing(assets).Error(), http.StatusNotFound)
				return
			}
		}
		// A content tag lets the browser revalidate instead of downloading
		// again, and keep its compiled code of the engine between visits.
		if tag := tags.of(r.URL.Path); tag != "" {
			h.Set("ETag", tag)
		}
		files.ServeHTTP(w, r)
	}))
}

// gzipped holds the engine compressed for standalone pages, made once.
type gzipped struct {
	fsys fs.FS
	once sync.Once
	b64  string
	err  error
}

func (g *gzipped) get() (string, error) {
	g.once.Do(func() {
		wasm, err := fs.ReadFile(g.fsys, "gapbook.wasm")
		if err != nil {
			g.err = err
			return
		}
		var gz bytes.Buffer
		zw, _ := gzip.NewWriterLevel(&gz, gzip.BestCompression)
		zw.Write(wasm)
		zw.Close()
		g.b64 = base64.StdEncoding.EncodeToString(gz.Bytes())
	})
	return g.b64, g.err
}

// etags computes, once per file, a tag from the file's contents.
type etags struct {
	fsys fs.FS
	mu   sync.Mutex
	tag  map[string]string
}

func (e *etags) of(urlPath string) string {
	name := strings.TrimPrefix(path.Clean(urlPath), "/")
	if name == "" {
		name = "index.html"
	}
	e.mu.Lock()
	defer e.mu.Unlock()
	if t, ok := e.tag[name]; ok {
		return t
	}
	b, err := fs.ReadFile(e.fsys, name)
	if err != nil {
		return ""
	}
	sum := sha256.Sum256(b)
	t := `"` + hex.EncodeToString(sum[:12]) + `"`
	e.tag[name] = t
	return t
}

// Export evaluates the notebook natively, saves the results in it (so the
// page can check that it reproduces them) and returns its standalone page.
// Cells that fail keep no results; the page shows their errors.
func Export(ctx context.Context, doc []byte, assets fs.FS) ([]byte, error) {
	nb, err := notebook.Load(doc)
	if nb == nil {
		return nil, err
	}
	ev, err := notebook.NewEngine().Evaluate(ctx, nb, notebook.Options{})
	if err != nil {
		return nil, err
	}
	if ev.Canceled {
		return nil, ctx.Err()
	}
	for _, o := range ev.Cells {
		if o.Status == notebook.StatusOK {
			c, _ := nb.Cell(o.ID)
			c.Saved = &notebook.Saved{Hash: o.Hash, Digest: o.Digest, Results: o.Results}
		}
	}
	saved, err := notebook.Save(nb)
	if err != nil {
		return nil, err
	}
	return Standalone(saved, assets)
}

// Standalone returns one HTML file that holds the page, its scripts as
// inert text blocks, the engine (gzip, base64) and the notebook; a single
// bootstrap script, allowed by its hash in the page's policy, starts it.
// It works opened from disk (file://) and needs no network.
func Standalone(doc []byte, assets fs.FS) ([]byte, error) {
	if assets == nil {
		assets = Assets()
	}
	// Problems in cell inputs are the page's to show; a file that cannot
	// be opened at all is refused here.
	if nb, err := notebook.Load(doc); nb == nil {
		return nil, err
	}
	return standalone(doc, assets, &gzipped{fsys: assets})
}

func standalone(doc []byte, assets fs.FS, engine *gzipped) ([]byte, error) {
	if err := Missing(assets); err != nil {
		return nil, err
	}
	read := func(name string) (string, error) {
		b, err := fs.ReadFile(assets, name)
		if err != nil {
			return "", err
		}
		s := string(b)
		if low := strings.ToLower(s); strings.Contains(low, "</script") || strings.Contains(low, "<!--") {
			return "", fmt.Errorf("%s contains </script or <!-- and cannot be inlined", name)
		}
		return s, nil
	}
	page, err := readPage(assets)
	if err != nil {
		return nil, err
	}
	var parts [4]string
	if parts[0], err = joinModules(read); err != nil {
		return nil, err
	}
	for i, name := range []string{"worker.js", "wasm_exec.js", "style.css"} {
		if parts[i+1], err = read(name); err != nil {
			return nil, err
		}
	}
	wasm, err := engine.get()
	if err != nil {
		return nil, err
	}

	// JSON allows \u003c for "<" inside strings, and "<" occurs nowhere else,
	// so the notebook cannot close its block.
	docText := strings.ReplaceAll(string(doc), "<", `\u003c`)
	const boot = `(()=>{const s=document.createElement('script');s.type='module';s.src=URL.createObjectURL(new Blob([document.getElementById('src-app').textContent],{type:'text/javascript'}));document.head.append(s);})();`
	sum := sha256.Sum256([]byte(boot))
	csp := "default-src 'none'; script-src 'sha256-" + base64.StdEncoding.EncodeToString(sum[:]) + "' blob: 'wasm-unsafe-eval'; " +
		"worker-src blob:; style-src 'unsafe-inline'; img-src data: blob:; connect-src 'none'; base-uri 'none'; form-action 'none'; object-src 'none'"

	var b strings.Builder
	b.WriteString("<script type=\"text/plain\" id=\"src-app\">" + parts[0] + "</script>\n")
	b.WriteString("<script type=\"text/plain\" id=\"src-worker\">" + parts[1] + "</script>\n")
	b.WriteString("<script type=\"text/plain\" id=\"src-wasm-exec\">" + parts[2] + "</script>\n")
	b.WriteString("<script type=\"text/plain\" id=\"src-wasm\">" + wasm + "</script>\n")
	b.WriteString("<script type=\"application/json\" id=\"src-notebook\">" + docText + "</script>\n")
	b.WriteString("<script>" + boot + "</script>\n")

	r := strings.NewReplacer(
		`<html lang="en" data-mode="served">`, `<html lang="en" data-mode="standalone">`,
		`<meta charset="utf-8">`, `<meta charset="utf-8">`+"\n"+`<meta http-equiv="Content-Security-Policy" content="`+csp+`">`,
		`<link rel="stylesheet" href="style.css">`, "<style>\n"+parts[3]+"</style>",
		`<script type="module" src="main.js"></script>`, "",
		"<!--/BODY-->", b.String(),
		"<!--BODY-->", "",
	)
	return []byte(r.Replace(page)), nil
}

func readPage(assets fs.FS) (string, error) {
	b, err := fs.ReadFile(assets, "index.html")
	if err != nil {
		return "", err
	}
	s := string(b)
	for _, marker := range []string{`data-mode="served"`, `<link rel="stylesheet" href="style.css">`, `<script type="module" src="main.js"></script>`, "<!--/BODY-->"} {
		if !strings.Contains(s, marker) {
			return "", fmt.Errorf("index.html: marker %q not found; the standalone page cannot be assembled", marker)
		}
	}
	return s, nil
}

// Modules are the page's script modules in an order in which each one's
// top-level names are defined before the last one (main.js) runs.
var Modules = []string{"state.js", "bridge.js", "pool.js", "plots.js", "cells.js", "compute.js", "runs.js", "files.js", "main.js"}

// joinModules makes one module of the page's modules for the standalone
// page, whose script comes from a blob and cannot import its neighbours:
// the import lines are dropped and "export " taken off the declarations.
// The modules import only each other and share one top-level name space,
// which TestModulesJoin checks.
func joinModules(read func(string) (string, error)) (string, error) {
	var b strings.Builder
	for _, name := range Modules {
		src, err := read(name)
		if err != nil {
			return "", err
		}
		for _, line := range strings.SplitAfter(src, "\n") {
			switch {
			case strings.HasPrefix(line, "import "):
				continue
			case strings.HasPrefix(line, "export "):
				line = strings.TrimPrefix(line, "export ")
			}
			b.WriteString(line)
		}
		b.WriteString("\n")
	}
	return b.String(), nil
}
