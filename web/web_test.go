//go:build !js

package web_test

import (
	"io"
	"io/fs"
	"net/http"
	"net/http/httptest"
	"regexp"
	"strings"
	"testing"
	"testing/fstest"

	"gapbook/web"
)

// pageOnly is the page without a built engine, as in a fresh clone.
func pageOnly(t *testing.T) fs.FS {
	m := fstest.MapFS{}
	for _, name := range append([]string{"index.html", "worker.js", "style.css"}, web.Modules...) {
		b, err := fs.ReadFile(web.Assets(), name)
		if err != nil {
			t.Fatal(err)
		}
		m[name] = &fstest.MapFile{Data: b}
	}
	return m
}

func TestHandler(t *testing.T) {
	doc := `{"gapbook": 1, "title": "x", "cells": []}`
	srv := httptest.NewServer(web.Handler(web.Options{Notebook: []byte(doc), Assets: pageOnly(t)}))
	defer srv.Close()
	cases := []struct {
		path   string
		status int
		body   string // substring
		ctype  string
	}{
		{"/", 200, `<script type="module" src="main.js"></script>`, "text/html"},
		{"/main.js", 200, "import {", "javascript"},
		{"/bridge.js", 200, "export async function ask", "javascript"},
		{"/notebook.gapbook", 200, `"title": "x"`, "application/json"},
		{"/gapbook.wasm", 404, "make wasm", "text/plain"},
		{"/standalone", 405, "POST", "text/plain"},
	}
	for _, c := range cases {
		r, err := http.Get(srv.URL + c.path)
		if err != nil {
			t.Fatal(err)
		}
		b, _ := io.ReadAll(r.Body)
		r.Body.Close()
		if r.StatusCode != c.status || !strings.Contains(string(b), c.body) || !strings.Contains(r.Header.Get("Content-Type"), c.ctype) {
			t.Errorf("GET %s: %d %s %.80q; want %d %s containing %q", c.path, r.StatusCode, r.Header.Get("Content-Type"), b, c.status, c.ctype, c.body)
		}
		csp := r.Header.Get("Content-Security-Policy")
		for _, d := range []string{"script-src 'self' 'wasm-unsafe-eval'", "connect-src 'self'", "frame-ancestors 'none'", "base-uri 'none'", "form-action 'none'", "default-src 'none'"} {
			if !strings.Contains(csp, d) {
				t.Errorf("GET %s: policy %q lacks %q", c.path, csp, d)
			}
		}
		if strings.Contains(csp, "unsafe-eval'") && !strings.Contains(csp, "wasm-unsafe-eval") || strings.Contains(csp, "script-src 'self' 'unsafe-inline'") {
			t.Errorf("policy allows script evaluation: %q", csp)
		}
	}
	// A second request with the tag of the first is answered "not modified".
	r, _ := http.Get(srv.URL + "/main.js")
	r.Body.Close()
	req, _ := http.NewRequest("GET", srv.URL+"/main.js", nil)
	req.Header.Set("If-None-Match", r.Header.Get("ETag"))
	if r2, err := http.DefaultClient.Do(req); err != nil || r2.StatusCode != http.StatusNotModified || r.Header.Get("ETag") == "" {
		t.Errorf("revalidation with ETag %q: %v %v", r.Header.Get("ETag"), r2.StatusCode, err)
	}
	if err := web.Missing(pageOnly(t)); err == nil || !strings.Contains(err.Error(), "make wasm") {
		t.Errorf("Missing without an engine: %v", err)
	}
	if _, err := web.Standalone([]byte(doc), pageOnly(t)); err == nil || !strings.Contains(err.Error(), "gapbook.wasm") {
		t.Errorf("Standalone without an engine: %v", err)
	}
}

func TestStandalonePage(t *testing.T) {
	m := pageOnly(t).(fstest.MapFS)
	m["gapbook.wasm"] = &fstest.MapFile{Data: []byte("\x00asm fake")}
	m["wasm_exec.js"] = &fstest.MapFile{Data: []byte("// runtime")}
	doc := `{"gapbook": 1, "title": "</script><script>alert(1)</script>", "cells": []}`
	page, err := web.Standalone([]byte(doc), m)
	if err != nil {
		t.Fatal(err)
	}
	s := string(page)
	// Exactly one script runs: the bootstrap, allowed by its hash.
	if n := strings.Count(s, "<script>"); n != 1 {
		t.Errorf("%d executable script blocks, want 1", n)
	}
	if n := strings.Count(s, "</script"); n != 6 {
		t.Errorf("%d ends of script blocks, want 6: four sources, the notebook, the bootstrap", n)
	}
	if strings.Contains(s, "alert(1)</script>") {
		t.Error("a script block is not closed where it should be: the notebook escaped its block")
	}
	for _, want := range []string{`data-mode="standalone"`, "'sha256-", `id="src-wasm"`, `id="src-notebook"`, `\u003c/script>`, "<style>"} {
		if !strings.Contains(s, want) {
			t.Errorf("standalone page lacks %q", want)
		}
	}
	for _, bad := range []string{`src="main.js"`, `href="style.css"`, "<!--BODY-->", "\nimport {", "\nexport "} {
		if strings.Contains(s, bad) {
			t.Errorf("standalone page still has %q", bad)
		}
	}
	if _, err := web.Standalone([]byte(`{"gapbook": 1, "cells": [{"id": "x"`), m); err == nil {
		t.Error("a broken notebook was embedded")
	}
}

// The page's modules can be joined into the one script of the standalone
// page: every script module is listed, each imports only listed modules
// and names they export, and no two modules declare the same top-level
// name.
func TestModulesJoin(t *testing.T) {
	listed := map[string]bool{}
	for _, m := range web.Modules {
		listed[m] = true
	}
	entries, err := fs.ReadDir(web.Assets(), ".")
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if n := e.Name(); strings.HasSuffix(n, ".js") && n != "worker.js" && n != "wasm_exec.js" && !listed[n] {
			t.Errorf("%s is not in web.Modules: the standalone page would lack it", n)
		}
	}
	decl := regexp.MustCompile(`(?m)^(export )?(async function|function|const|let) ([A-Za-z_$][\w$]*)`)
	imp := regexp.MustCompile(`(?m)^import \{ ([^}]*) \} from '\./([a-z]+\.js)';$`)
	exported := map[string]map[string]bool{}
	owner := map[string]string{}
	srcs := map[string]string{}
	for _, m := range web.Modules {
		b, err := fs.ReadFile(web.Assets(), m)
		if err != nil {
			t.Fatal(err)
		}
		srcs[m] = string(b)
		exported[m] = map[string]bool{}
		for _, d := range decl.FindAllStringSubmatch(string(b), -1) {
			if o, dup := owner[d[3]]; dup {
				t.Errorf("%s and %s both declare %s", o, m, d[3])
			}
			owner[d[3]] = m
			if d[1] != "" {
				exported[m][d[3]] = true
			}
		}
	}
	for _, m := range web.Modules {
		for _, line := range strings.Split(srcs[m], "\n") {
			if !strings.HasPrefix(line, "import ") {
				continue
			}
			g := imp.FindStringSubmatch(line)
			if g == nil || !listed[g[2]] {
				t.Errorf("%s: %q is not an import of a listed module on one line", m, line)
				continue
			}
			for _, name := range strings.Split(g[1], ", ") {
				if !exported[g[2]][name] {
					t.Errorf("%s imports %s from %s, which does not export it", m, name, g[2])
				}
			}
		}
	}
}
