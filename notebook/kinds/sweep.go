package kinds

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"gapbook/notebook"
)

func init() { notebook.Register(sweepKind{}) }

// sweepKind reruns a chain of earlier cells over a list of values of one
// input and tabulates chosen results.
type sweepKind struct{}

func (sweepKind) Name() string { return "sweep" }
func (sweepKind) Doc() string {
	return "Rerun a chain of earlier cells for each value of one input (the exponent p, a mesh size, ε) and compare chosen results in one table and one plot."
}
func (sweepKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "cell", Type: notebook.Ref, Doc: "id of the cell whose input varies (for example the problem)"},
		{Name: "input", Type: notebook.Text, Default: "p", MaxLen: 64, Doc: "the numeric input of that cell that varies (p, epsilon, cells, h, …)"},
		{Name: "values", Type: notebook.Numbers, Doc: "the values it takes, in order"},
		{Name: "through", Type: notebook.Ref, Doc: "id of the last cell of the chain (for example the bound cell); the cells between the two are rerun, and editing any of them reruns the sweep"},
		{Name: "columns", Type: notebook.Texts, Default: []string{},
			Doc: "results to tabulate as cell.result (for example bound.majorant, solve.newton_steps); empty: every scalar of the chain except echoed inputs"},
		{Name: "logx", Type: notebook.Bool, Default: false, Doc: "logarithmic horizontal axis in the plot"},
		{Name: "logy", Type: notebook.Bool, Default: true, Doc: "logarithmic vertical axis in the plot"},
	}
}

// Members is the number of values swept: each is a member of its own.
func (sweepKind) Members(in notebook.Values) int { return len(in.Numbers("values")) }

func (sweepKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	from, through, input := in.Text("cell"), in.Text("through"), in.Text("input")
	vals := in.Numbers("values")
	if len(vals) == 0 {
		return nil, notebook.FieldErr("values", "empty; give at least one value")
	}
	if len(vals) > 200 {
		return nil, notebook.FieldErr("values", "%d values; at most 200 per sweep", len(vals))
	}
	fc, _ := c.Notebook().Cell(from)
	k, _ := notebook.Lookup(fc.Kind)
	var spec *notebook.Input
	for _, x := range k.Inputs() {
		if x.Name == input {
			spec = &x
		}
	}
	if spec == nil || (spec.Type != notebook.Number && spec.Type != notebook.Integer) {
		var names []string
		for _, x := range k.Inputs() {
			if x.Type == notebook.Number || x.Type == notebook.Integer {
				names = append(names, x.Name)
			}
		}
		return nil, notebook.FieldErr("input", "cell %s (%s) has no numeric input %q; numeric inputs: %s", from, fc.Kind, input, strings.Join(names, ", "))
	}
	for i, v := range vals {
		if !spec.InRange(v) || spec.Type == notebook.Integer && v != math.Trunc(v) {
			return nil, notebook.FieldErr("values", "element %d: %s.%s wants %s, got %g", i, from, input, spec.Want(), v)
		}
	}
	// The chain: cells downstream of from that through needs, in order.
	down := c.Notebook().Downstream(from)
	need := c.Notebook().Closure([]string{through})
	var chain []string
	for _, id := range down {
		if need[id] {
			chain = append(chain, id)
		}
	}
	if !slices.Contains(chain, through) {
		return nil, notebook.FieldErr("through", "cell %s does not depend on cell %s, so the sweep would not change it", through, from)
	}
	sr, err := c.Sweep(notebook.Sweep{Cell: from, Input: input, Values: vals, Cells: chain})
	if err != nil {
		if e := c.Err(); e != nil {
			return nil, e
		}
		return nil, err
	}
	t := sr.Table
	cols := in.Texts("columns")
	if len(cols) == 0 {
		for _, col := range t.Columns[1:] {
			if !echoed(col.Name, from, input) {
				cols = append(cols, col.Name)
			}
		}
	}
	out := notebook.Table{Name: "sweep", Title: fmt.Sprintf("%s.%s from %g to %g through %s", from, input, vals[0], vals[len(vals)-1], through), Columns: []notebook.Column{t.Columns[0]}}
	var idx []int
	for _, name := range cols {
		j := t.ColumnIndex(name)
		if j < 0 {
			if !strings.Contains(name, ".") {
				return nil, notebook.FieldErr("columns", "%q: write cell.result, for example %s.majorant", name, through)
			}
			return nil, notebook.FieldErr("columns", "no result %q in the chain %s; results: %s", name, strings.Join(chain, " → "), columnNames(&t))
		}
		idx = append(idx, j)
		out.Columns = append(out.Columns, t.Columns[j])
	}
	failed := 0
	for i, row := range t.Rows {
		r := []float64{row[0]}
		for _, j := range idx {
			r = append(r, row[j])
		}
		out.Rows = append(out.Rows, r)
		if sr.Errors[i] != "" {
			failed++
			out.Labels = append(out.Labels, "failed: "+notebook.Clip(sr.Errors[i], 200))
		} else {
			out.Labels = append(out.Labels, "ok")
		}
	}
	if failed == len(vals) {
		return nil, fmt.Errorf("every run failed; the first: %s", sr.Errors[0])
	}
	res := &notebook.Results{
		Scalars: []notebook.Scalar{{Name: "runs", Value: float64(len(vals)), Label: notebook.Reference, Unit: "values swept"},
			{Name: "failed", Value: float64(failed), Label: notebook.Reference, Unit: "runs with an error (NaN in the table)"}},
		Tables: []notebook.Table{out},
	}
	p := notebook.Plot{Name: "sweep", Title: out.Title, XLabel: out.Columns[0].Name, LogX: in.Bool("logx"), LogY: in.Bool("logy")}
	for j, col := range out.Columns[1:] {
		s := notebook.Series{Name: col.Name}
		for _, row := range out.Rows {
			s.X = append(s.X, row[0])
			s.Y = append(s.Y, row[j+1])
		}
		p.Series = append(p.Series, s)
	}
	if p.LogY && !anyPositive(seriesY(p)) {
		p.LogY = false
	}
	if p.LogX && !anyPositive([][]float64{out.Column(out.Columns[0].Name)}) {
		p.LogX = false
	}
	if len(p.Series) > 0 {
		res.Plots = []notebook.Plot{p}
	}
	return res, nil
}

// echoed reports whether a sweep column only repeats an input or an exact
// property that the sweep does not make interesting.
func echoed(col, from, input string) bool {
	return col == from+"."+input || strings.HasSuffix(col, ".measure") || strings.HasSuffix(col, ".width")
}
