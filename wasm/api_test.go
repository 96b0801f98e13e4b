package main

import (
	"encoding/json"
	"strings"
	"sync"
	"testing"

	"gapbook/notebook"
	_ "gapbook/web/testkinds"
)

// recorder collects what the server posts, as the page would receive it.
type recorder struct {
	mu   sync.Mutex
	msgs []map[string]any
}

func (r *recorder) post(m map[string]any) {
	b, err := json.Marshal(m) // the worker sends JSON text; decode it as the page does
	if err != nil {
		panic(err)
	}
	var back map[string]any
	json.Unmarshal(b, &back)
	r.mu.Lock()
	r.msgs = append(r.msgs, back)
	r.mu.Unlock()
}

func (r *recorder) last() map[string]any { return r.msgs[len(r.msgs)-1] }

const study = `{"gapbook": 1, "title": "t", "cells": [
 {"id": "intro", "kind": "note", "inputs": {"text": "Hello $x^2$ <script>bad()</script>"}},
 {"id": "base", "kind": "ramp", "inputs": {"a": 1, "k": 2, "n": 4}},
 {"id": "chain", "kind": "ramp", "inputs": {"a": 2, "k": 1, "from": "base"}}]}`

func ask(t *testing.T, s *server, r *recorder, req map[string]any) map[string]any {
	t.Helper()
	b, _ := json.Marshal(req)
	s.handle(b)
	return r.last()
}

func TestProtocol(t *testing.T) {
	r := &recorder{}
	s := newServer(r.post)
	s.ready()
	if m := r.last(); m["type"] != "ready" || !strings.Contains(m["caution"].(string), "licensed engineers") {
		t.Fatalf("ready message: %v", m)
	}
	kinds := r.last()["kinds"].([]any)
	var ramp map[string]any
	for _, k := range kinds {
		if k.(map[string]any)["name"] == "ramp" {
			ramp = k.(map[string]any)
		}
	}
	if ramp == nil {
		t.Fatal("kind ramp not listed")
	}
	in := ramp["inputs"].([]any)[0].(map[string]any)
	if in["name"] != "a" || in["type"] != "number" || in["default"] != 1.0 || in["low"].(map[string]any)["strict"] != true {
		t.Errorf("input a described as %v", in)
	}

	cases := []struct {
		name string
		req  map[string]any
		typ  string
		want string // a substring of the JSON of the answer
	}{
		{"show before running: stale", map[string]any{"id": 1, "op": "show", "doc": study}, "done", `"status":"stale"`},
		{"run: ramp sum 1/4+1/16+1/64+1/256", map[string]any{"id": 2, "op": "run", "doc": study}, "done", `"value":"0.33203125"`},
		{"note rendered safely", map[string]any{"id": 3, "op": "preview", "text": "<script>x()</script> $a$"}, "done", `raw HTML omitted`},
		{"unknown op", map[string]any{"id": 4, "op": "fly", "doc": study}, "error", "unknown operation"},
		{"broken file", map[string]any{"id": 5, "op": "show", "doc": "{"}, "error", "cannot be opened"},
		{"compare without runs", map[string]any{"id": 6, "op": "compare", "doc": study}, "error", "choose at least one run"},
		{"csv of a stale table", map[string]any{"id": 7, "op": "csv", "doc": study, "cell": "base", "table": "conv"}, "error", "run it first"},
		{"bad input named", map[string]any{"id": 8, "op": "run", "doc": strings.Replace(study, `"a": 1,`, `"a": -1,`, 1)}, "done", `"fields":{"a":"want a number > 0`},
	}
	for _, c := range cases {
		m := ask(t, s, r, c.req)
		var buf strings.Builder
		enc := json.NewEncoder(&buf)
		enc.SetEscapeHTML(false)
		enc.Encode(m)
		b := buf.String()
		if m["type"] != c.typ || m["id"] != float64(c.req["id"].(int)) || !strings.Contains(b, c.want) {
			t.Errorf("%s: got %s; want type %s containing %s", c.name, b, c.typ, c.want)
		}
	}
	if s := ask(t, s, r, map[string]any{"id": 9, "op": "preview", "text": "<script>x()</script>"}); strings.Contains(s["html"].(string), "<script") {
		t.Errorf("preview kept a script: %v", s["html"])
	}
}

// TestRunRecordsAndCompares runs a series of exponents as the runs panel
// does and compares them: the rate column must equal each run's k.
func TestRunRecordsAndCompares(t *testing.T) {
	r := &recorder{}
	s := newServer(r.post)
	var history []any
	for i, k := range []float64{1, 2, 3} {
		q := map[string]any{"id": 10 + i, "op": "run", "record": "k", "override": map[string]any{"cell": "base", "input": "k", "value": k}}
		if i == 0 {
			q["doc"] = study // once; the engine keeps its copy
		}
		m := ask(t, s, r, q)
		if m["type"] != "done" {
			t.Fatalf("run %v: %v", k, m)
		}
		history, _ = m["history"].([]any)
		if res, _ := m["results"].(map[string]any); len(res) != 0 {
			t.Errorf("an overridden run saved results as the cells' own: %v", res)
		}
	}
	if len(history) != 3 {
		t.Fatalf("after three recorded runs the answer has %d runs", len(history))
	}
	nb, err := notebook.Load(s.doc)
	if err != nil || len(nb.History) != 3 {
		t.Fatalf("the engine's copy after three recorded runs: %v, %d runs", err, len(nb.History))
	}
	if nb.Cells[1].Saved != nil {
		t.Error("an overridden run saved its results as the cell's own")
	}
	m := ask(t, s, r, map[string]any{"id": 20, "op": "compare", "runs": []int{0, 1, 2}, "cell": "base", "table": "conv", "x": "h", "y": "e"})
	csv, _ := m["csv"].(string)
	lines := strings.Split(strings.TrimSpace(csv), "\n")
	if len(lines) != 4 || !strings.Contains(lines[0], "base.k") || !strings.Contains(lines[0], "base.rate") {
		t.Fatalf("comparison CSV:\n%s", csv)
	}
	head := strings.Split(lines[0], ",")
	for _, line := range lines[1:] {
		f := strings.Split(line, ",")
		var k, rate string
		for j, h := range head {
			switch h {
			case "base.k":
				k = f[j]
			case "base.rate":
				rate = f[j]
			}
		}
		if k != rate {
			t.Errorf("run %s: rate %s, want k = %s (the observed rate of a·h^k is k)", f[0], rate, k)
		}
	}
	if p, _ := m["plot"].(string); strings.Count(p, "<polyline")+strings.Count(p, "<path") < 3 {
		t.Errorf("overlay plot lacks three lines: %.200s", p)
	}
	// Progress and per-cell messages precede the answer.
	types := map[string]int{}
	for _, msg := range r.msgs {
		types[msg["type"].(string)]++
	}
	if types["progress"] == 0 || types["cell"] == 0 {
		t.Errorf("messages by type: %v", types)
	}
}

// The page sends the notebook once and then cell-level edits: the engine's
// copy follows them (a changed input, a new cell, a new order, a removed
// cell), and a run's answer carries the saved results of the cells it
// computed, not the whole document.
func TestEditsChangeTheEnginesCopy(t *testing.T) {
	r := &recorder{}
	s := newServer(r.post)
	if m := ask(t, s, r, map[string]any{"id": 1, "op": "show", "edit": map[string]any{"order": []string{}}}); m["type"] != "error" ||
		!strings.Contains(m["error"].(string), "send the whole document first") {
		t.Fatalf("an edit before any document: %v", m)
	}
	m := ask(t, s, r, map[string]any{"id": 2, "op": "run", "doc": study})
	res, _ := m["results"].(map[string]any)
	if m["type"] != "done" || len(res) == 0 || m["doc"] != nil {
		t.Fatalf("run: %v", m)
	}
	nb, _ := notebook.Load([]byte(study))
	ids := []string{}
	for _, c := range nb.Cells {
		ids = append(ids, c.ID)
	}
	base, _ := nb.Cell("base")
	var cell map[string]any
	b, _ := json.Marshal(map[string]any{"id": base.ID, "kind": base.Kind, "inputs": base.Inputs})
	json.Unmarshal(b, &cell)
	cell["inputs"].(map[string]any)["a"] = 2
	extra := map[string]any{"id": "extra", "kind": "note", "inputs": map[string]any{"text": "hi"}}
	order := append([]string{"extra"}, ids[:len(ids)-1]...)
	m = ask(t, s, r, map[string]any{"id": 3, "op": "show", "edit": map[string]any{"cells": []any{cell, extra}, "order": order, "title": "edited"}})
	if m["type"] != "done" || m["title"] != "edited" {
		t.Fatalf("show after an edit: %v", m)
	}
	views := m["cells"].([]any)
	if len(views) != len(order) || views[0].(map[string]any)["id"] != "extra" {
		t.Fatalf("cells after the edit: %v", views)
	}
	if v := views[2].(map[string]any); v["id"] != "base" || v["status"] != "stale" {
		t.Errorf("the edited cell is %v %v, want base stale (its input changed)", v["id"], v["status"])
	}
	for _, v := range views {
		if v.(map[string]any)["id"] == ids[len(ids)-1] {
			t.Errorf("cell %s was left out of the order but is still there", ids[len(ids)-1])
		}
	}
	if m := ask(t, s, r, map[string]any{"id": 4, "op": "show", "edit": map[string]any{"order": []string{"nope"}}}); m["type"] != "error" {
		t.Errorf("an order naming an unknown cell: %v", m)
	}
}
