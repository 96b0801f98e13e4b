//go:build !js

package web_test

import (
	"bufio"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/http/httptest"
	"runtime"
	"strings"
	"sync"
	"testing"
	"testing/fstest"
	"time"

	"gapbook/notebook"
	"gapbook/web"
)

// fullPage is the page with a stand-in engine, so that standalone pages
// can be built.
func fullPage(t *testing.T) fstest.MapFS {
	m := pageOnly(t).(fstest.MapFS)
	m["gapbook.wasm"] = &fstest.MapFile{Data: []byte("\x00asm stand-in engine")}
	m["wasm_exec.js"] = &fstest.MapFile{Data: []byte("// runtime")}
	return m
}

func do(t *testing.T, req *http.Request) (int, string, http.Header) {
	t.Helper()
	r, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer r.Body.Close()
	b, _ := io.ReadAll(r.Body)
	return r.StatusCode, string(b), r.Header
}

// The server answers only requests addressed to this machine, refuses
// state-changing requests from other origins and methods a path does not
// serve.
func TestServerRefuses(t *testing.T) {
	srv := httptest.NewServer(web.Handler(web.Options{Notebook: []byte(`{"gapbook": 2, "cells": []}`), Assets: fullPage(t)}))
	defer srv.Close()
	doc := `{"gapbook": 2, "title": "t", "cells": []}`
	req := func(method, path, body string, header ...string) *http.Request {
		r, _ := http.NewRequest(method, srv.URL+path, strings.NewReader(body))
		for i := 0; i+1 < len(header); i += 2 {
			if header[i] == "Host" {
				r.Host = header[i+1]
			} else {
				r.Header.Set(header[i], header[i+1])
			}
		}
		return r
	}
	cases := []struct {
		name   string
		r      *http.Request
		status int
		body   string
	}{
		{"DNS rebinding: another host name", req("GET", "/notebook.gapbook", "", "Host", "evil.example:8787"), 403, "not served"},
		{"localhost by name", req("GET", "/notebook.gapbook", "", "Host", "localhost:8787"), 200, `"gapbook"`},
		{"IPv6 loopback", req("GET", "/", "", "Host", "[::1]:8787"), 200, "<html"},
		{"cross-origin POST", req("POST", "/standalone", doc, "Origin", "http://evil.example"), 403, "may not ask"},
		{"cross-site fetch", req("POST", "/standalone", doc, "Sec-Fetch-Site", "cross-site"), 403, "another site"},
		{"same-origin POST", req("POST", "/standalone", doc, "Origin", srv.URL), 200, `data-mode="standalone"`},
		{"PUT on the page", req("PUT", "/", "x"), 405, "GET"},
		{"DELETE on a file", req("DELETE", "/main.js", ""), 405, "GET"},
		{"POST on a file", req("POST", "/main.js", "x"), 405, "GET"},
		{"GET on the standalone builder", req("GET", "/standalone", ""), 405, "POST"},
		{"not a notebook", req("POST", "/standalone", "[1, 2]"), 400, "want a JSON object"},
		{"BOM before the study", req("POST", "/standalone", "\uFEFF"+doc), 200, `data-mode="standalone"`},
	}
	for _, c := range cases {
		status, body, h := do(t, c.r)
		if status != c.status || !strings.Contains(body, c.body) {
			t.Errorf("%s: %d %.100q; want %d with %q", c.name, status, body, c.status, c.body)
		}
		if status == 405 && h.Get("Allow") == "" {
			t.Errorf("%s: 405 without an Allow header", c.name)
		}
	}
	// A body announced larger than a notebook may be is refused before it
	// is read.
	conn, err := net.Dial("tcp", strings.TrimPrefix(srv.URL, "http://"))
	if err != nil {
		t.Fatal(err)
	}
	defer conn.Close()
	fmt.Fprintf(conn, "POST /standalone HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Length: %d\r\n\r\n", notebook.MaxFileBytes+1)
	resp, err := http.ReadResponse(bufio.NewReader(conn), nil)
	if err != nil {
		t.Fatal(err)
	}
	if b, _ := io.ReadAll(resp.Body); resp.StatusCode != http.StatusRequestEntityTooLarge || !strings.Contains(string(b), "at most") {
		t.Errorf("oversized body: %d %q; want 413", resp.StatusCode, b)
	}
}

// Eight pages built at once from a 20 MB study: at most
// web.MaxStandaloneBuilds run (the others are told to retry, 503), every
// page built is whole, and the server's heap grows by less than 300 MB (the
// study costs about 20 MB of text and, without the caps, 350 MB per
// concurrent request; measured 142 MB, and 553 MB with eight builds at
// once). Loopback only, eight requests, bounded in time.
func TestServerLoadBounded(t *testing.T) {
	if testing.Short() {
		t.Skip("builds pages from large studies")
	}
	var cells []string
	chunk := strings.Repeat("a note of an invented study, ", 36000) // about 1 MB
	for i := range 20 {
		cells = append(cells, fmt.Sprintf(`{"id": "n%d", "kind": "note", "inputs": {"text": %q}}`, i, chunk))
	}
	doc := `{"gapbook": 2, "title": "large", "cells": [` + strings.Join(cells, ",") + `]}`
	srv := httptest.NewServer(web.Handler(web.Options{Notebook: []byte(`{"gapbook": 2, "cells": []}`), Assets: fullPage(t)}))
	defer srv.Close()
	runtime.GC()
	var base runtime.MemStats
	runtime.ReadMemStats(&base)
	peak := base.HeapInuse
	done := make(chan struct{})
	go func() {
		var m runtime.MemStats
		for {
			select {
			case <-done:
				return
			case <-time.After(5 * time.Millisecond):
				runtime.ReadMemStats(&m)
				peak = max(peak, m.HeapInuse)
			}
		}
	}()
	var wg sync.WaitGroup
	var mu sync.Mutex
	codes := map[int]int{}
	client := &http.Client{Timeout: time.Minute}
	for range 8 {
		wg.Add(1)
		go func() {
			defer wg.Done()
			r, err := client.Post(srv.URL+"/standalone", "application/json", strings.NewReader(doc))
			if err != nil {
				t.Error(err)
				return
			}
			b, _ := io.ReadAll(r.Body)
			r.Body.Close()
			mu.Lock()
			codes[r.StatusCode]++
			mu.Unlock()
			if r.StatusCode == 200 && (len(b) < len(doc) || !strings.Contains(string(b[len(b)-200:]), "</html>")) {
				t.Errorf("a page of %d bytes for a study of %d", len(b), len(doc))
			}
			if r.StatusCode == 503 && (r.Header.Get("Retry-After") == "" || !strings.Contains(string(b), "try again")) {
				t.Errorf("503 without Retry-After or advice: %q", b)
			}
		}()
	}
	wg.Wait()
	close(done)
	if codes[200] == 0 || codes[200]+codes[503] != 8 {
		t.Errorf("answers %v; want pages and, beyond %d at once, 503", codes, web.MaxStandaloneBuilds)
	}
	const limit = 300 << 20
	if grown := peak - base.HeapInuse; grown > limit {
		t.Errorf("the heap grew by %d MB while building pages; the bound is %d MB", grown>>20, limit>>20)
	}
	t.Logf("answers %v, heap grew by %d MB at most", codes, (peak-base.HeapInuse)>>20)
}
