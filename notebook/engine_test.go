package notebook

import (
	"context"
	"encoding/json"
	"errors"
	"math"
	"strings"
	"sync"
	"testing"
	"time"
)

// memo is a test-only kind with one text input and no results, for the
// tests of the file format (the real kinds live in notebook/kinds).
type memo struct{}

func (memo) Name() string { return "memo" }
func (memo) Doc() string  { return "test kind" }
func (memo) Inputs() []Input {
	return []Input{{Name: "text", Type: Text, Default: ""}}
}
func (memo) Evaluate(*Context, Values) (*Results, error) { return &Results{}, nil }

// scale is a test-only kind: y = a · (y of the cell named in "from", or 1),
// and a table of k·y for k = 1..n. It counts its evaluations.
type scale struct{}

var (
	evalMu    sync.Mutex
	evalCount = map[string]int{}
)

func evaluations(id string) int {
	evalMu.Lock()
	defer evalMu.Unlock()
	return evalCount[id]
}

func (scale) Name() string { return "scale" }
func (scale) Doc() string  { return "test kind" }
func (scale) Inputs() []Input {
	return []Input{
		{Name: "from", Type: Ref, Optional: true, RefKinds: []string{"scale"}},
		{Name: "a", Type: Number, Default: 1.0, Low: Above(0)},
		{Name: "n", Type: Integer, Default: 3, Low: AtLeast(1), High: AtMost(1000)},
		{Name: "mode", Type: Choice, Default: "plain", Choices: []string{"plain", "fail", "panic", "bad"}},
	}
}

func (scale) Evaluate(c *Context, in Values) (*Results, error) {
	evalMu.Lock()
	evalCount[c.Cell()]++
	evalMu.Unlock()
	base := 1.0
	if from := in.Text("from"); from != "" {
		s, ok := c.Results(from).Scalar("y")
		if !ok {
			return nil, errors.New("dependency has no y")
		}
		base = s.Value
	}
	switch in.Text("mode") {
	case "fail":
		return nil, FieldErr("mode", "asked to fail")
	case "panic":
		var m map[string]int
		m["boom"] = 1
	case "bad":
		return &Results{Scalars: []Scalar{{Name: "y", Value: 1, Label: "certain"}}}, nil
	}
	y := in.Number("a") * base
	t := Table{Name: "multiples", Columns: []Column{{Name: "k"}, {Name: "ky"}}}
	n := in.Int("n")
	for k := 1; k <= n; k++ {
		if err := c.Err(); err != nil {
			return nil, err
		}
		c.Progress(float64(k)/float64(n), "")
		t.Rows = append(t.Rows, []float64{float64(k), float64(k) * y})
	}
	return &Results{Scalars: []Scalar{{Name: "y", Value: y, Label: Estimate, Unit: "1"}}, Tables: []Table{t}}, nil
}

func init() {
	Register(scale{})
	Register(memo{})
}

func cell(id, kind string, inputs map[string]any) *Cell {
	c := &Cell{ID: id, Kind: kind}
	for k, v := range inputs {
		if err := c.SetInput(k, v); err != nil {
			panic(err)
		}
	}
	return c
}

// chain: a (y=2) → b (y=3·2) → c (y=0.5·6); d independent.
func chain() *Notebook {
	return &Notebook{Title: "t", Cells: []*Cell{
		cell("a", "scale", map[string]any{"a": 2}),
		cell("b", "scale", map[string]any{"a": 3, "from": "a"}),
		cell("c", "scale", map[string]any{"a": 0.5, "from": "b"}),
		cell("d", "scale", map[string]any{"a": 7}),
	}}
}

func mustEval(t *testing.T, e *Engine, nb *Notebook, o Options) *Evaluation {
	t.Helper()
	ev, err := e.Evaluate(context.Background(), nb, o)
	if err != nil {
		t.Fatal(err)
	}
	return ev
}

func yOf(t *testing.T, ev *Evaluation, id string) float64 {
	t.Helper()
	o := ev.Cell(id)
	if o == nil || o.Status != StatusOK {
		t.Fatalf("cell %s: %+v", id, o)
	}
	s, _ := o.Results.Scalar("y")
	return s.Value
}

func TestEvaluateDependencies(t *testing.T) {
	ev := mustEval(t, NewEngine(), chain(), Options{})
	for id, want := range map[string]float64{"a": 2, "b": 6, "c": 3, "d": 7} {
		if got := yOf(t, ev, id); got != want {
			t.Errorf("%s: y = %g, want %g", id, got, want)
		}
	}
}

func TestFailureStaysInItsCell(t *testing.T) {
	tests := []struct {
		name, mode string
		field, msg string
	}{
		{"error", "fail", "mode", "asked to fail"},
		{"panic", "panic", "", "internal error in the scale kind"},
		{"bad results", "bad", "", "want guaranteed, estimate or reference"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			nb := chain()
			nb.Cells[1].SetInput("mode", tt.mode)
			ev := mustEval(t, NewEngine(), nb, Options{})
			b := ev.Cell("b")
			if b.Status != StatusError || b.Err.Field != tt.field || !strings.Contains(b.Err.Msg, tt.msg) {
				t.Fatalf("b: %+v %v", b, b.Err)
			}
			c := ev.Cell("c")
			if c.Status != StatusError || c.Err.Msg != "needs cell b, which failed" || c.Err.Needs != "b" || c.Err.Field != "from" {
				t.Errorf("c: %v", c.Err)
			}
			if yOf(t, ev, "a") != 2 || yOf(t, ev, "d") != 7 {
				t.Error("independent cells must still compute")
			}
			if !ev.Failed() {
				t.Error("Failed() = false")
			}
		})
	}
}

func TestInputErrorsNameTheField(t *testing.T) {
	tests := []struct {
		in    map[string]any
		field string
		msg   string
	}{
		{map[string]any{"a": "abc"}, "a", `want a number > 0, got "abc"`},
		{map[string]any{"a": 0}, "a", "want a number > 0, got 0"},
		{map[string]any{"n": 2.5}, "n", "want a whole number ≥ 1 and ≤ 1000, got 2.5"},
		{map[string]any{"mode": "loud"}, "mode", `want one of plain, fail, panic, bad, got "loud"`},
		{map[string]any{"from": "zz"}, "from", `no cell "zz" in this notebook`},
		{map[string]any{"from": "d"}, "from", `cell "d" comes after this one`},
		{map[string]any{"from": "b!"}, "from", "ids use letters, digits, - and _"},
	}
	for _, tt := range tests {
		nb := chain()
		for k, v := range tt.in {
			nb.Cells[2].SetInput(k, v)
		}
		ev := mustEval(t, NewEngine(), nb, Options{})
		o := ev.Cell("c")
		if o.Status != StatusError || o.Err.Field != tt.field || !strings.Contains(o.Err.Msg, tt.msg) {
			t.Errorf("%v: got %v, want field %s and %q", tt.in, o.Err, tt.field, tt.msg)
		}
	}
}

func TestCacheAndStaleness(t *testing.T) {
	e := NewEngine()
	nb := chain()
	ev := mustEval(t, e, nb, Options{})
	nb.Record(ev, "first", time.Unix(0, 0))
	before := map[string]int{}
	for _, id := range []string{"a", "b", "c", "d"} {
		before[id] = evaluations(id)
	}
	// Nothing changed: all from the cache, all ok against the saved results.
	ev2 := mustEval(t, e, nb, Options{})
	for _, o := range ev2.Cells {
		if !o.Cached || evaluations(o.ID) != before[o.ID] {
			t.Errorf("%s: cached=%v, evaluations %d → %d", o.ID, o.Cached, before[o.ID], evaluations(o.ID))
		}
		if o.Reproduced != "yes" {
			t.Errorf("%s: reproduced = %q", o.ID, o.Reproduced)
		}
	}
	// 3 and 3.0 are the same input.
	nb.Cells[1].Inputs["a"] = json.RawMessage("3.0")
	for _, s := range nb.States() {
		if s.Status != StatusOK {
			t.Errorf("after 3 → 3.0, %s is %s", s.ID, s.Status)
		}
	}
	// Changing b makes b and c stale, not a or d.
	nb.Cells[1].SetInput("a", 4)
	want := map[string]Status{"a": StatusOK, "b": StatusStale, "c": StatusStale, "d": StatusOK}
	for _, s := range nb.States() {
		if s.Status != want[s.ID] {
			t.Errorf("state of %s = %s, want %s", s.ID, s.Status, want[s.ID])
		}
	}
	ev3 := mustEval(t, e, nb, Options{})
	for id, n := range map[string]int{"a": 0, "b": 1, "c": 1, "d": 0} {
		if got := evaluations(id) - before[id]; got != n {
			t.Errorf("%s evaluated %d times, want %d", id, got, n)
		}
	}
	if yOf(t, ev3, "c") != 4 {
		t.Errorf("c = %g, want 0.5·4·2 = 4", yOf(t, ev3, "c"))
	}
	if o := ev3.Cell("c"); o.Reproduced != "" {
		t.Errorf("inputs changed, so no reproduction claim; got %q", o.Reproduced)
	}
}

func TestReproductionDetectsChange(t *testing.T) {
	nb := chain()
	ev := mustEval(t, NewEngine(), nb, Options{})
	nb.Record(ev, "", time.Unix(0, 0))
	// Tamper with the saved value of b as if computed elsewhere differently.
	nb.Cells[1].Saved.Results = &Results{Scalars: []Scalar{{Name: "y", Value: 6.000001, Label: Estimate, Unit: "1"}}, Tables: nb.Cells[1].Saved.Results.Tables}
	nb.Cells[1].Saved.Digest = nb.Cells[1].Saved.Results.Digest()
	ev2 := mustEval(t, NewEngine(), nb, Options{})
	o := ev2.Cell("b")
	if o.Reproduced != "no" || len(o.Differences) != 1 || !strings.Contains(o.Differences[0], "scalar y: saved estimate 6.00000100000e+00, now estimate 6.00000000000e+00") {
		t.Errorf("got %q %q", o.Reproduced, o.Differences)
	}
}

func TestCancellation(t *testing.T) {
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	nb := chain()
	ev, err := NewEngine().Evaluate(ctx, nb, Options{Progress: func(p Progress) {
		if p.ID == "b" && p.Fraction >= 0.5 {
			cancel()
		}
	}})
	if err != nil {
		t.Fatal(err)
	}
	nb.Cells[1].SetInput("n", 10)
	got := map[string]Status{}
	for _, o := range ev.Cells {
		got[o.ID] = o.Status
	}
	want := map[string]Status{"a": StatusOK, "b": StatusStale, "c": StatusStale, "d": StatusStale}
	for id := range want {
		if got[id] != want[id] {
			t.Errorf("%s: %s, want %s", id, got[id], want[id])
		}
	}
	if !ev.Canceled {
		t.Error("Canceled not set")
	}
}

func TestOverrideLeavesDocument(t *testing.T) {
	nb := chain()
	before, _ := Save(nb)
	ev := mustEval(t, NewEngine(), nb, Options{Override: &Override{"a", "a", json.RawMessage("10")}})
	if yOf(t, ev, "c") != 15 {
		t.Errorf("c = %g, want 0.5·3·10", yOf(t, ev, "c"))
	}
	after, _ := Save(nb)
	if string(before) != string(after) {
		t.Error("override changed the document")
	}
	if _, err := NewEngine().Evaluate(context.Background(), nb, Options{Override: &Override{"a", "q", json.RawMessage("1")}}); err == nil || !strings.Contains(err.Error(), "inputs: from, a, n, mode") {
		t.Errorf("override of unknown input: %v", err)
	}
}

func TestSweep(t *testing.T) {
	e := NewEngine()
	nb := chain()
	dBefore := evaluations("d")
	res, err := e.Sweep(context.Background(), nb, Sweep{Cell: "b", Input: "a", Values: []float64{1, 2, -1, 4}}, nil)
	if err != nil {
		t.Fatal(err)
	}
	tab := res.Table
	names := []string{}
	for _, c := range tab.Columns {
		names = append(names, c.Name)
	}
	if strings.Join(names, ",") != "a,b.y,c.y" {
		t.Fatalf("columns %v", names)
	}
	// c.y = 0.5 · a · 2 = a; the row for a = -1 fails validation → NaN.
	for i, a := range []float64{1, 2, -1, 4} {
		row := tab.Rows[i]
		if a < 0 {
			if !math.IsNaN(row[1]) || !math.IsNaN(row[2]) || !strings.Contains(res.Errors[i], "want a number > 0, got -1") {
				t.Errorf("row %d: %v %q", i, row, res.Errors[i])
			}
			continue
		}
		if row[0] != a || row[1] != 2*a || row[2] != a || res.Errors[i] != "" {
			t.Errorf("row %d: %v, want [%g %g %g]", i, row, a, 2*a, a)
		}
	}
	if evaluations("d") != dBefore {
		t.Error("a sweep of b must not evaluate d")
	}
	if s, _ := Save(nb); strings.Contains(string(s), "history") {
		t.Error("a sweep must not touch the document")
	}
}

func TestHistoryCompareAndOverlay(t *testing.T) {
	e := NewEngine()
	nb := chain()
	for _, a := range []float64{2, 5} {
		ev := mustEval(t, e, nb, Options{Override: &Override{"a", "a", json.RawMessage(fmtNum(a))}})
		nb.Record(ev, "a = "+fmtNum(a), time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC))
	}
	if nb.Cells[0].Saved != nil {
		t.Error("an overridden run must not replace the saved results")
	}
	tab := CompareRuns(nb, nb.History)
	var names []string
	for _, c := range tab.Columns {
		names = append(names, c.Name)
	}
	if strings.Join(names, ",") != "a.a,a.y,b.y,c.y,d.y" {
		t.Fatalf("columns %v", names)
	}
	want := [][]float64{{2, 2, 6, 3, 7}, {5, 5, 15, 7.5, 7}}
	for i := range want {
		for j := range want[i] {
			if tab.Rows[i][j] != want[i][j] {
				t.Errorf("row %d = %v, want %v", i, tab.Rows[i], want[i])
				break
			}
		}
	}
	if tab.Labels[1] != "a = 5" {
		t.Errorf("labels %v", tab.Labels)
	}
	p := OverlayRuns(nb.History, "c", "multiples", "k", "ky")
	if len(p.Series) != 2 || p.Series[1].Name != "a = 5" || p.Series[1].Y[2] != 3*7.5 {
		t.Errorf("overlay %+v", p.Series)
	}
	// History survives a save and load.
	b, err := Save(nb)
	if err != nil {
		t.Fatal(err)
	}
	nb2, err := Load(b)
	if err != nil {
		t.Fatal(err)
	}
	if len(nb2.History) != 2 || nb2.History[1].At != "2026-01-02T03:04:05Z" || nb2.History[1].Override.Cell != "a" {
		t.Errorf("history after load: %+v", nb2.History)
	}
}
