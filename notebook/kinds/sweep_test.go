package kinds

import (
	"context"
	"math"
	"strings"
	"testing"

	"gapbook/notebook"
)

// A sweep over the exponent gives one row per value with the chosen
// results; each row equals a separate evaluation at that value.
func TestSweepExponent(t *testing.T) {
	chain := []string{
		kc("p", "problem", map[string]any{"domain": "interval", "p": 2}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 16}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
		kc("b", "bound", map[string]any{"solution": "s", "minorant": false}),
	}
	ev := evalCells(t, append(chain, kc("sw", "sweep", map[string]any{"cell": "p", "values": []float64{1.5, 3}, "through": "b",
		"columns": []string{"b.majorant", "s.energy"}}))...)
	r := okCell(t, ev, "sw")
	tb := r.Tables[0]
	if len(tb.Rows) != 2 || len(tb.Columns) != 3 || tb.Columns[1].Name != "b.majorant" {
		t.Fatalf("table %+v", tb)
	}
	if len(r.Plots) != 1 || len(r.Plots[0].Series) != 2 {
		t.Errorf("plot %+v", r.Plots)
	}
	// Row 2 against a plain evaluation with α = 3.
	chain[0] = kc("p", "problem", map[string]any{"domain": "interval", "p": 3})
	direct := okCell(t, evalCells(t, chain...), "b")
	if got, want := tb.Rows[1][1], scalar(t, direct, "majorant").Value; got != want {
		t.Errorf("swept majorant %g, direct %g", got, want)
	}
}

func TestSweepErrors(t *testing.T) {
	base := []string{
		kc("p", "problem", map[string]any{"domain": "interval"}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 8}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
		kc("q", "problem", map[string]any{"domain": "interval"}),
	}
	cases := []struct {
		inputs map[string]any
		want   string
	}{
		{map[string]any{"cell": "p", "input": "alhpa", "values": []float64{2}, "through": "s"}, `cell sw: input input: cell p (problem) has no numeric input "alhpa"; numeric inputs: x_min`},
		{map[string]any{"cell": "p", "values": []float64{2, 0.5}, "through": "s"}, "cell sw: input values: element 1: p.p wants a number > 1 and ≤ 100, got 0.5"},
		{map[string]any{"cell": "m", "input": "cells", "values": []float64{2.5}, "through": "s"}, "cell sw: input values: element 0: m.cells wants a whole number"},
		{map[string]any{"cell": "q", "values": []float64{2}, "through": "s"}, "cell sw: input through: cell s does not depend on cell q"},
		{map[string]any{"cell": "p", "values": []float64{2}, "through": "s", "columns": []string{"s.nothing"}}, `cell sw: input columns: no result "s.nothing" in the chain p → m → s; results:`},
	}
	for _, tc := range cases {
		ev := evalCells(t, append(base, kc("sw", "sweep", tc.inputs))...)
		o := ev.Cell("sw")
		if o.Status != notebook.StatusError || !strings.HasPrefix(o.Err.Error(), tc.want) {
			t.Errorf("got %v\nwant prefix %q", o.Err, tc.want)
		}
	}
	// A run that fails leaves NaN in its row and says why.
	ev := evalCells(t, append(base, kc("sw", "sweep", map[string]any{"cell": "m", "input": "h", "values": []float64{0.25, 1e-9}, "through": "s", "columns": []string{"s.energy"}}))...)
	r := okCell(t, ev, "sw")
	if tb := r.Tables[0]; !math.IsNaN(tb.Rows[1][1]) || !strings.HasPrefix(tb.Labels[1], "failed: ") || tb.Labels[0] != "ok" {
		t.Errorf("failed run: %+v", tb)
	}
	if f := scalar(t, r, "failed").Value; f != 1 {
		t.Errorf("failed = %g", f)
	}
}

// Adaptive refinement on the L-shape restores the optimal rate N^{-1} of
// μ ~ ‖∇e‖² that the corner singularity r^{2/3} spoils on uniform meshes
// (docs/checks.md item 11), and the majorant stays above the exact error.
func TestAdapt(t *testing.T) {
	ev := evalCells(t,
		kc("p", "problem", map[string]any{"domain": "L-shape", "p": 2, "f": "1"}),
		kc("a", "adapt", map[string]any{"problem": "p", "max_cells": 3000}),
		kc("q", "problem", map[string]any{"domain": "rectangle", "p": 3, "f": "", "exact": "x + 0.5*y + 0.25*sin(pi*x)*sin(pi*y)"}),
		kc("aq", "adapt", map[string]any{"problem": "q", "max_steps": 4}),
		kc("i", "problem", map[string]any{"domain": "interval"}),
		kc("ai", "adapt", map[string]any{"problem": "i"}),
	)
	r := okCell(t, ev, "a")
	if rate := scalar(t, r, "rate").Value; rate < 0.85 || rate > 1.3 {
		t.Errorf("rate %g, want about 1", rate)
	}
	maj := r.Tables[0].Column("majorant")
	if len(maj) < 4 || !(maj[len(maj)-1] < maj[0]/10) {
		t.Errorf("majorants %v do not fall", maj)
	}
	rq := okCell(t, ev, "aq")
	for _, e := range rq.Tables[0].Column("efficiency") {
		if !(e >= 1) {
			t.Errorf("efficiency %g < 1", e)
		}
	}
	if o := ev.Cell("ai"); o.Status != notebook.StatusError || !strings.Contains(o.Err.Error(), "needs a 2-D domain") {
		t.Errorf("1-D adapt: %v", o.Err)
	}
}

// Input errors of the numerical kinds name the cell and the input.
func TestKindInputErrors(t *testing.T) {
	base := []string{
		kc("p", "problem", map[string]any{"domain": "rectangle"}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 4}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
	}
	cases := []struct {
		cell string
		want string
	}{
		{kc("x", "mesh", map[string]any{"problem": "p", "h": 1e-9}), "cell x: input h: "},
		{kc("x", "mesh", map[string]any{"problem": "s"}), "cell x: input problem: "},
		{kc("x", "constant", map[string]any{"mesh": "m", "p": 0.5}), "cell x: input p: want a number > 1 and ≤ 100, got 0.5"},
		{kc("x", "bound", map[string]any{"solution": "s", "order": 2}), "cell x: input order: want a whole number ≥ 0 and ≤ 1, got 2"},
		{kc("x", "bound", map[string]any{"solution": "s", "flux": "smoothed"}), "cell x: input flux: want one of equilibrated, minimised, averaged, got \"smoothed\""},
		{kc("x", "solve", map[string]any{"mesh": "m", "max_newton": 1}), "cell x: input max_newton: newton: "},
		{kc("x", "adapt", map[string]any{"problem": "p", "share": 0}), "cell x: input share: want a number > 0 and ≤ 1, got 0"},
		{kc("x", "sweep", map[string]any{"cell": "p", "values": []float64{}, "through": "s"}), "cell x: input values: empty; give at least one value"},
		{kc("x", "evolve", map[string]any{"mesh": "m", "in_time": "cubic"}), "cell x: input in_time: want one of linear in time, constant in time"},
	}
	for _, tc := range cases {
		ev := evalCells(t, append(base, tc.cell)...)
		o := ev.Cell("x")
		if o.Status != notebook.StatusError || !strings.HasPrefix(o.Err.Error(), tc.want) {
			t.Errorf("got %v\nwant prefix %q", o.Err, tc.want)
		}
	}
}

// A sweep's members run on several goroutines; the table is the same bit
// for bit with one worker and with two, for a catalogue and a formula
// potential (whose formula keeps scratch space of its own per member).
func TestSweepWorkersIdentical(t *testing.T) {
	for _, pot := range []map[string]any{
		{"domain": "L-shape", "p": 3},
		{"domain": "rectangle", "potential": "formula", "g": "t^3/3 + t^2/2", "p": 3},
	} {
		doc := `{"gapbook": 2, "cells": [` + strings.Join([]string{
			kc("p", "problem", pot),
			kc("m", "mesh", map[string]any{"problem": "p", "cells": 4}),
			kc("s", "solve", map[string]any{"mesh": "m"}),
			kc("sw", "sweep", map[string]any{"cell": "m", "input": "cells", "values": []float64{2, 3, 4, 5, 6, 7}, "through": "s"}),
		}, ",") + `]}`
		var tables [2]*notebook.Table
		for w := 1; w <= 2; w++ {
			nb, err := notebook.Load([]byte(doc))
			if err != nil {
				t.Fatal(err)
			}
			e := notebook.NewEngine()
			e.Workers = w
			ev, err := e.Evaluate(context.Background(), nb, notebook.Options{})
			if err != nil {
				t.Fatal(err)
			}
			tb, ok := okCell(t, ev, "sw").Table("sweep")
			if !ok {
				t.Fatal("no sweep table")
			}
			tables[w-1] = tb
		}
		a, b := tables[0], tables[1]
		if len(a.Rows) != 6 || len(a.Rows) != len(b.Rows) {
			t.Fatalf("%v: %d and %d rows", pot, len(a.Rows), len(b.Rows))
		}
		for i := range a.Rows {
			for j := range a.Rows[i] {
				if math.Float64bits(a.Rows[i][j]) != math.Float64bits(b.Rows[i][j]) {
					t.Errorf("%v: row %d column %s: %v with one worker, %v with two", pot, i, a.Columns[j].Name, a.Rows[i][j], b.Rows[i][j])
				}
			}
		}
	}
}

// oddRows is a MemberStore that computes the odd rows and leaves the
// others to another share.
type oddRows struct{ done []notebook.Member }

func (*oddRows) Lookup(notebook.MemberKey) (*notebook.Member, bool) { return nil, false }
func (*oddRows) Mine(k notebook.MemberKey) bool                     { return k.Row%2 == 1 }
func (s *oddRows) Done(m *notebook.Member)                          { s.done = append(s.done, *m) }

// A sweep that left members to another share is partial: its outcome says
// so and the engine does not cache it, so a later evaluation of the same
// cell on the same engine computes every member.
func TestPartialSweepNotCached(t *testing.T) {
	doc := `{"gapbook": 2, "cells": [` + strings.Join([]string{
		kc("p", "problem", map[string]any{"domain": "interval", "p": 3}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 4}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
		kc("sw", "sweep", map[string]any{"cell": "m", "input": "cells", "values": []float64{2, 3, 4, 5}, "through": "s"}),
	}, ",") + `]}`
	nb, err := notebook.Load([]byte(doc))
	if err != nil {
		t.Fatal(err)
	}
	e := notebook.NewEngine()
	st := &oddRows{}
	ev, err := e.Evaluate(context.Background(), nb, notebook.Options{Members: st})
	if err != nil {
		t.Fatal(err)
	}
	if o := ev.Cell("sw"); o.Status != notebook.StatusOK || !o.Partial {
		t.Fatalf("share run: status %s, partial %v; want ok and partial", o.Status, o.Partial)
	}
	if len(st.done) != 2 || st.done[0].Row != 1 || st.done[1].Row != 3 {
		t.Fatalf("the share computed %+v, want rows 1 and 3", st.done)
	}
	if o := ev.Cell("s"); o.Partial {
		t.Error("a cell without members is marked partial")
	}
	ev, err = e.Evaluate(context.Background(), nb, notebook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	o := ev.Cell("sw")
	if o.Cached || o.Partial {
		t.Fatalf("full run: cached %v, partial %v; want a fresh, whole evaluation", o.Cached, o.Partial)
	}
	tb, _ := o.Results.Table("sweep")
	for i, r := range tb.Rows {
		if math.IsNaN(r[len(r)-1]) {
			t.Errorf("row %d is NaN after the full run: %v", i, r)
		}
	}
}
