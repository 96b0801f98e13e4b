package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"gapbook/notebook"
	_ "gapbook/notebook/kinds" // registers the cell kinds
	"gapbook/notebook/markdown"
)

// request is one message from the page.
type request struct {
	ID int    `json:"id"`
	Op string `json:"op"`
	// Doc is the whole notebook file: sent once per engine, or when a
	// file is opened; it replaces the engine's copy.
	Doc string `json:"doc,omitempty"`
	// Edit carries the changes to the engine's copy since the last
	// request: the cells that changed, whole, and the order of all cells.
	Edit     *edit              `json:"edit,omitempty"`
	Only     []string           `json:"only,omitempty"`
	Override *notebook.Override `json:"override,omitempty"`
	Record   string             `json:"record,omitempty"`
	Text     string             `json:"text,omitempty"`
	Runs     []int              `json:"runs,omitempty"`
	Cell     string             `json:"cell,omitempty"`
	Table    string             `json:"table,omitempty"`
	X        string             `json:"x,omitempty"`
	Y        string             `json:"y,omitempty"`
	// Share, for a run, is [K, N]: compute only the K-th of N shares of
	// the members of multi-member cells and save nothing (a helper
	// worker's part of a run).
	Share []int `json:"share,omitempty"`
	// Members are members the page has already (from helpers, or kept
	// when a run was stopped); a run takes them instead of computing them.
	Members []notebook.Member `json:"members,omitempty"`
}

// edit is a cell-level change of the engine's copy of the notebook.
type edit struct {
	// Cells are cell objects as in the file; a cell replaces the one with
	// its id, or is added.
	Cells []json.RawMessage `json:"cells,omitempty"`
	// Order lists the ids of all cells in order; cells not named are
	// removed. Absent: the order is unchanged (added cells go last).
	Order []string `json:"order,omitempty"`
	// Title and History, when set, replace the notebook's.
	Title   *string         `json:"title,omitempty"`
	History json.RawMessage `json:"history,omitempty"`
}

// kindView describes a kind for the page, which builds its forms from it.
type kindView struct {
	Name   string      `json:"name"`
	Doc    string      `json:"doc"`
	Inputs []inputView `json:"inputs"`
	// Body is true for kinds that render themselves (a note).
	Body bool `json:"body"`
}

type boundView struct {
	Value  float64 `json:"value"`
	Strict bool    `json:"strict"`
}

type inputView struct {
	Name     string     `json:"name"`
	Doc      string     `json:"doc"`
	Type     string     `json:"type"`
	Default  any        `json:"default"`
	Optional bool       `json:"optional,omitempty"`
	Low      *boundView `json:"low,omitempty"`
	High     *boundView `json:"high,omitempty"`
	Choices  []string   `json:"choices,omitempty"`
	RefKinds []string   `json:"refKinds,omitempty"`
	MaxLen   int        `json:"maxLen,omitempty"`
	File     bool       `json:"file,omitempty"`
}

var typeNames = map[notebook.Type]string{
	notebook.Number: "number", notebook.Integer: "integer", notebook.Text: "text",
	notebook.Bool: "bool", notebook.Choice: "choice", notebook.Ref: "ref",
	notebook.Numbers: "numbers", notebook.Texts: "texts",
}

func kindViews() []kindView {
	var out []kindView
	for _, name := range notebook.Kinds() {
		k, _ := notebook.Lookup(name)
		kv := kindView{Name: name, Doc: k.Doc(), Inputs: []inputView{}}
		_, kv.Body = k.(notebook.Renderer)
		for _, in := range k.Inputs() {
			iv := inputView{Name: in.Name, Doc: in.Doc, Type: typeNames[in.Type], Default: in.Default,
				Optional: in.Optional, Choices: in.Choices, RefKinds: in.RefKinds, MaxLen: in.MaxLen, File: in.File}
			if in.Low.Set {
				iv.Low = &boundView{in.Low.Value, in.Low.Strict}
			}
			if in.High.Set {
				iv.High = &boundView{in.High.Value, in.High.Strict}
			}
			kv.Inputs = append(kv.Inputs, iv)
		}
		out = append(out, kv)
	}
	return out
}

// scalarView is a scalar as the page shows it: Shown for people, Value
// with every digit (for copying and for tests), never a bare number
// without its label.
type scalarView struct {
	Name  string `json:"name"`
	Value string `json:"value"`
	Shown string `json:"shown"`
	Label string `json:"label"`
	Unit  string `json:"unit,omitempty"`
}

// intervalView is an interval as the page shows it: its ends are the
// scalars named in Ends, shown in the same row.
type intervalView struct {
	Name  string    `json:"name"`
	Label string    `json:"label"`
	Unit  string    `json:"unit,omitempty"`
	Ends  [2]string `json:"ends"`
}

type errView struct {
	Field string `json:"field,omitempty"`
	Msg   string `json:"msg"`
	Needs string `json:"needs,omitempty"`
}

// cellView is one cell's state and rendered results.
type cellView struct {
	ID        string         `json:"id"`
	Kind      string         `json:"kind"`
	Status    string         `json:"status"`
	Error     *errView       `json:"error,omitempty"`
	Body      string         `json:"body,omitempty"`
	Scalars   []scalarView   `json:"scalars"`
	Intervals []intervalView `json:"intervals,omitempty"`
	// HTML renders tables, plots and fields (safe: everything escaped).
	HTML        string   `json:"html"`
	Tables      []string `json:"tables"`
	Digest      string   `json:"digest,omitempty"`
	Reproduced  string   `json:"reproduced,omitempty"`
	Differences []string `json:"differences,omitempty"`
	Cached      bool     `json:"cached,omitempty"`
	// Fields maps an input to its own message when that input is to blame.
	Fields map[string]string `json:"fields,omitempty"`
}

func fullNumber(v float64) string {
	switch {
	case math.IsNaN(v):
		return "NaN"
	case math.IsInf(v, 1):
		return "Inf"
	case math.IsInf(v, -1):
		return "-Inf"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func view(c *notebook.Cell, o *notebook.Outcome) cellView {
	v := cellView{ID: c.ID, Kind: c.Kind, Status: string(notebook.StatusStale), Scalars: []scalarView{}, Tables: []string{}}
	if k, ok := notebook.Lookup(c.Kind); ok {
		if rd, ok := k.(notebook.Renderer); ok {
			vals, _ := notebook.ParseInputs(k, c.Inputs)
			var res *notebook.Results
			if o != nil {
				res = o.Results
			}
			v.Body = rd.RenderHTML(vals, res)
		}
		if _, errs := notebook.ParseInputs(k, c.Inputs); len(errs) > 0 {
			v.Fields = map[string]string{}
			for _, fe := range errs {
				v.Fields[fe.Field] = fe.Msg
			}
		}
	}
	if o == nil {
		return v
	}
	v.Status, v.Digest, v.Reproduced, v.Differences, v.Cached = string(o.Status), o.Digest, o.Reproduced, o.Differences, o.Cached
	if o.Err != nil {
		v.Error = &errView{Field: o.Err.Field, Msg: o.Err.Msg, Needs: o.Err.Needs}
		if o.Err.Field != "" {
			if v.Fields == nil {
				v.Fields = map[string]string{}
			}
			if _, ok := v.Fields[o.Err.Field]; !ok {
				v.Fields[o.Err.Field] = o.Err.Msg
			}
		}
	}
	if r := o.Results; r != nil {
		for _, s := range r.Scalars {
			v.Scalars = append(v.Scalars, scalarView{s.Name, fullNumber(s.Value), notebook.FormatNumber(s.Value), string(s.Label), s.Unit})
		}
		for _, iv := range r.Intervals {
			v.Intervals = append(v.Intervals, intervalView{iv.Name, string(iv.Label), iv.Unit, iv.Ends})
		}
		rest := &notebook.Results{Tables: r.Tables, Plots: r.Plots, Fields: r.Fields}
		v.HTML = notebook.RenderResults(rest)
		for _, t := range r.Tables {
			v.Tables = append(v.Tables, t.Name)
		}
	}
	return v
}

// runView is a run of the history as listed in the runs panel.
type runView struct {
	At       string             `json:"at"`
	Label    string             `json:"label"`
	Override *notebook.Override `json:"override,omitempty"`
	OK       int                `json:"ok"`
	Failed   int                `json:"failed"`
	// Tables lists "cell/table" names present in the run, for overlays.
	Tables []string `json:"tables"`
}

func runViews(nb *notebook.Notebook) []runView {
	out := []runView{}
	for _, r := range nb.History {
		rv := runView{At: r.At, Label: r.Label, Override: r.Override, Tables: []string{}}
		for _, c := range nb.Cells {
			rc, ok := r.Cells[c.ID]
			if !ok {
				continue
			}
			switch rc.Status {
			case notebook.StatusOK:
				rv.OK++
			case notebook.StatusError:
				rv.Failed++
			}
			for _, t := range rc.Tables {
				rv.Tables = append(rv.Tables, c.ID+"/"+t.Name)
			}
		}
		out = append(out, rv)
	}
	return out
}

// server answers requests; it keeps one engine so unchanged cells are
// not computed twice, and its own copy of the notebook, which the page
// changes cell by cell (edit) instead of sending the whole study each time.
type server struct {
	engine *notebook.Engine
	post   func(msg map[string]any)
	now    func() time.Time
	// doc is the engine's copy of the notebook file (nil before the page
	// sent one).
	doc []byte
}

func newServer(post func(map[string]any)) *server {
	return &server{engine: notebook.NewEngine(), post: post, now: time.Now}
}

func (s *server) ready() {
	s.post(map[string]any{"type": "ready", "kinds": kindViews(), "caution": notebook.Caution, "version": notebook.FormatVersion})
}

// handle serves one request; it never panics on bad input.
func (s *server) handle(data []byte) {
	var q request
	if err := json.Unmarshal(data, &q); err != nil {
		s.post(map[string]any{"type": "error", "error": "request: " + err.Error()})
		return
	}
	defer func() {
		if p := recover(); p != nil {
			s.post(map[string]any{"id": q.ID, "type": "error", "error": fmt.Sprintf("internal error (please report it): %v", p)})
		}
	}()
	reply, err := s.answer(&q)
	if err != nil {
		s.post(map[string]any{"id": q.ID, "type": "error", "error": err.Error()})
		return
	}
	reply["id"], reply["type"] = q.ID, "done"
	s.post(reply)
}

// update applies the request's document or edit to the engine's copy.
func (s *server) update(q *request) error {
	if q.Doc != "" {
		s.doc = []byte(q.Doc)
	}
	if q.Edit == nil {
		return nil
	}
	if s.doc == nil {
		return fmt.Errorf("edit: the engine has no notebook yet; send the whole document first")
	}
	var top map[string]json.RawMessage
	if err := json.Unmarshal(s.doc, &top); err != nil {
		return fmt.Errorf("edit: the engine's copy is not a JSON object (%v); send the whole document", err)
	}
	var cells []json.RawMessage
	if raw, ok := top["cells"]; ok {
		if err := json.Unmarshal(raw, &cells); err != nil {
			return fmt.Errorf("edit: the engine's copy has no list of cells (%v); send the whole document", err)
		}
	}
	idOf := func(c json.RawMessage) string {
		var h struct {
			ID string `json:"id"`
		}
		json.Unmarshal(c, &h)
		return h.ID
	}
	byID := map[string]int{}
	for i, c := range cells {
		byID[idOf(c)] = i
	}
	for _, c := range q.Edit.Cells {
		id := idOf(c)
		if i, ok := byID[id]; ok {
			cells[i] = c
		} else {
			byID[id] = len(cells)
			cells = append(cells, c)
		}
	}
	if q.Edit.Order != nil {
		ordered := make([]json.RawMessage, 0, len(q.Edit.Order))
		for _, id := range q.Edit.Order {
			i, ok := byID[id]
			if !ok {
				return fmt.Errorf("edit: the order names cell %q, which the engine does not have; send the whole document", notebook.Clip(id, 64))
			}
			ordered = append(ordered, cells[i])
		}
		cells = ordered
	}
	raw, err := json.Marshal(cells)
	if err != nil {
		return err
	}
	top["cells"] = raw
	if q.Edit.Title != nil {
		top["title"], _ = json.Marshal(*q.Edit.Title)
	}
	if q.Edit.History != nil {
		top["history"] = q.Edit.History
	}
	s.doc, err = json.Marshal(top)
	return err
}

func (s *server) load() (*notebook.Notebook, []string, error) {
	if s.doc == nil {
		return nil, nil, fmt.Errorf("the engine has no notebook yet; send the whole document first")
	}
	nb, err := notebook.Load(s.doc)
	if nb == nil {
		return nil, nil, fmt.Errorf("the notebook cannot be opened:\n%v", err)
	}
	problems := []string{}
	if le, ok := err.(*notebook.LoadError); ok {
		for _, p := range le.Problems {
			problems = append(problems, p.String())
		}
	}
	return nb, problems, nil
}

func (s *server) answer(q *request) (map[string]any, error) {
	switch q.Op {
	case "kinds":
		return map[string]any{"kinds": kindViews()}, nil
	case "preview":
		return map[string]any{"html": markdown.Render(q.Text)}, nil
	}
	if err := s.update(q); err != nil {
		return nil, err
	}
	nb, problems, err := s.load()
	if err != nil {
		return nil, err
	}
	switch q.Op {
	case "show":
		states := nb.States()
		return s.views(nb, states, problems), nil
	case "plan":
		return map[string]any{"pending": s.engine.Pending(nb, q.Only)}, nil
	case "run":
		return s.run(q, nb, problems)
	case "report":
		return map[string]any{"html": string(notebook.Report(nb, &notebook.Evaluation{Cells: nb.States()}))}, nil
	case "csv":
		for _, o := range nb.States() {
			if o.ID == q.Cell && o.Results != nil {
				if t, ok := o.Results.Table(q.Table); ok {
					var b bytes.Buffer
					if err := notebook.WriteCSV(&b, *t); err != nil {
						return nil, err
					}
					return map[string]any{"csv": b.String()}, nil
				}
			}
		}
		return nil, fmt.Errorf("cell %s has no current table %q; run it first", q.Cell, q.Table)
	case "compare":
		var runs []notebook.Run
		for _, i := range q.Runs {
			if i < 0 || i >= len(nb.History) {
				return nil, fmt.Errorf("compare: no run %d; the history has %d runs", i, len(nb.History))
			}
			runs = append(runs, nb.History[i])
		}
		if len(runs) == 0 {
			return nil, fmt.Errorf("compare: choose at least one run")
		}
		t := notebook.CompareRuns(nb, runs)
		var b bytes.Buffer
		if err := notebook.WriteCSV(&b, t); err != nil {
			return nil, err
		}
		out := map[string]any{"html": notebook.RenderTable(t), "csv": b.String()}
		if q.Cell != "" && q.X != "" && q.Y != "" {
			p := notebook.OverlayRuns(runs, q.Cell, q.Table, q.X, q.Y)
			if len(p.Series) > 0 {
				out["plot"] = notebook.PlotSVG(p)
			} else {
				out["plotError"] = fmt.Sprintf("no chosen run has columns %q and %q in table %q of cell %s", q.X, q.Y, q.Table, q.Cell)
			}
		}
		return out, nil
	}
	return nil, fmt.Errorf("unknown operation %q; known: show, plan, run, preview, compare, report, csv, kinds", q.Op)
}

func (s *server) views(nb *notebook.Notebook, outs []*notebook.Outcome, problems []string) map[string]any {
	cells := make([]cellView, 0, len(nb.Cells))
	for i, c := range nb.Cells {
		var o *notebook.Outcome
		if i < len(outs) {
			o = outs[i]
		}
		cells = append(cells, view(c, o))
	}
	return map[string]any{"title": nb.Title, "cells": cells, "problems": problems, "runs": runViews(nb)}
}

func (s *server) run(q *request, nb *notebook.Notebook, problems []string) (map[string]any, error) {
	last := time.Time{}
	store, err := newPageStore(q.Members, q.Share, func(m *notebook.Member) {
		s.post(map[string]any{"id": q.ID, "type": "member", "member": m})
	})
	if err != nil {
		return nil, err
	}
	ev, err := s.engine.Evaluate(context.Background(), nb, notebook.Options{
		Only: q.Only, Override: q.Override, Members: store,
		Progress: func(p notebook.Progress) {
			if p.Done {
				c, _ := nb.Cell(p.ID)
				s.post(map[string]any{"id": q.ID, "type": "cell", "view": view(c, p.Outcome)})
				return
			}
			// At most about 20 progress messages a second reach the page.
			if t := s.now(); p.Fraction == 0 || t.Sub(last) > 50*time.Millisecond {
				last = t
				s.post(map[string]any{"id": q.ID, "type": "progress", "cell": p.ID, "fraction": p.Fraction, "message": p.Message})
			}
		},
	})
	if err != nil {
		return nil, err
	}
	if q.Share != nil {
		// A helper's share: the page wanted only the members.
		return map[string]any{"computed": store.computed(), "canceled": ev.Canceled}, nil
	}
	if q.Record != "" {
		nb.Record(ev, strings.TrimSpace(q.Record), s.now())
	} else if q.Override == nil {
		for _, o := range ev.Cells {
			if o.Status == notebook.StatusOK && !o.Partial {
				c, _ := nb.Cell(o.ID)
				c.Saved = &notebook.Saved{Hash: o.Hash, Digest: o.Digest, Results: o.Results}
			}
		}
	}
	doc, err := notebook.Save(nb)
	if err != nil {
		return nil, err
	}
	s.doc = doc
	// Cells left out of an "only" run keep what the file says about them.
	states := nb.States()
	for i, o := range ev.Cells {
		if o.Status == notebook.StatusStale && i < len(states) && !ev.Canceled {
			ev.Cells[i] = states[i]
		}
	}
	out := s.views(nb, ev.Cells, problems)
	// The page merges what changed into its own copy: each cell's saved
	// results and, after a recorded run, the history.
	results := map[string]json.RawMessage{}
	var saved struct {
		Cells []struct {
			ID      string          `json:"id"`
			Results json.RawMessage `json:"results"`
		} `json:"cells"`
		History json.RawMessage `json:"history"`
	}
	if err := json.Unmarshal(doc, &saved); err != nil {
		return nil, err
	}
	fresh := map[string]bool{}
	for _, o := range ev.Cells {
		// An overridden run (one value of a series) saves no results.
		fresh[o.ID] = o.Status == notebook.StatusOK && q.Override == nil
	}
	for _, c := range saved.Cells {
		if c.Results != nil && fresh[c.ID] {
			results[c.ID] = c.Results
		}
	}
	out["results"] = results
	if q.Record != "" {
		out["history"] = saved.History
	}
	out["canceled"] = ev.Canceled
	out["computed"] = store.computed()
	return out, nil
}
