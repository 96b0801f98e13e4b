package kinds

import (
	"fmt"
	"math"
	"strings"

	"gapbook/notebook"
)

func init() { notebook.Register(plotKind{}) }

// plotKind draws columns of a table from an earlier cell as lines.
type plotKind struct{}

func (plotKind) Name() string { return "plot" }
func (plotKind) Doc() string  { return "A line chart of columns of a table from an earlier cell." }
func (plotKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "from", Doc: "id of the cell whose table is drawn", Type: notebook.Ref},
		{Name: "table", Doc: "name of the table (empty: the first)", Type: notebook.Text, Default: ""},
		{Name: "x", Doc: "column for the horizontal axis (empty: the first)", Type: notebook.Text, Default: ""},
		{Name: "y", Doc: "columns to draw (empty: all others)", Type: notebook.Texts, Default: []string{}},
		{Name: "title", Doc: "title of the chart", Type: notebook.Text, Default: "", MaxLen: 200},
		{Name: "logx", Doc: "logarithmic horizontal axis", Type: notebook.Bool, Default: false},
		{Name: "logy", Doc: "logarithmic vertical axis", Type: notebook.Bool, Default: false},
	}
}

func (plotKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	from := in.Text("from")
	r := c.Results(from)
	t, ok := r.Table(in.Text("table"))
	if !ok {
		if in.Text("table") == "" {
			return nil, notebook.FieldErr("from", "cell %s has no table to draw", from)
		}
		return nil, notebook.FieldErr("table", "cell %s has no table %q; tables: %s", from, in.Text("table"), tableNames(r))
	}
	if len(t.Columns) < 2 {
		return nil, notebook.FieldErr("table", "table %s has %d column(s); a plot needs two", t.Name, len(t.Columns))
	}
	x := in.Text("x")
	if x == "" {
		x = t.Columns[0].Name
	}
	xs := t.Column(x)
	if xs == nil {
		return nil, notebook.FieldErr("x", "table %s has no column %q; columns: %s", t.Name, x, columnNames(t))
	}
	ys := in.Texts("y")
	if len(ys) == 0 {
		for _, col := range t.Columns {
			if col.Name != x {
				ys = append(ys, col.Name)
			}
		}
	}
	p := notebook.Plot{Name: "plot", Title: in.Text("title"), XLabel: x, LogX: in.Bool("logx"), LogY: in.Bool("logy")}
	if p.Title == "" {
		p.Title = t.Title
	}
	if len(ys) == 1 {
		p.YLabel = ys[0]
	}
	for _, y := range ys {
		col := t.Column(y)
		if col == nil {
			return nil, notebook.FieldErr("y", "table %s has no column %q; columns: %s", t.Name, y, columnNames(t))
		}
		p.Series = append(p.Series, notebook.Series{Name: y, X: xs, Y: col})
	}
	for _, axis := range []struct {
		log  bool
		name string
		vals [][]float64
	}{{p.LogX, "logx", [][]float64{xs}}, {p.LogY, "logy", seriesY(p)}} {
		if axis.log && !anyPositive(axis.vals) {
			return nil, notebook.FieldErr(axis.name, "no value is > 0, so a logarithmic axis shows nothing")
		}
	}
	return &notebook.Results{Plots: []notebook.Plot{p}}, nil
}

func seriesY(p notebook.Plot) [][]float64 {
	var out [][]float64
	for _, s := range p.Series {
		out = append(out, s.Y)
	}
	return out
}

func anyPositive(vs [][]float64) bool {
	for _, v := range vs {
		for _, x := range v {
			if x > 0 && !math.IsInf(x, 1) {
				return true
			}
		}
	}
	return false
}

func tableNames(r *notebook.Results) string {
	if r == nil || len(r.Tables) == 0 {
		return "none"
	}
	var n []string
	for _, t := range r.Tables {
		n = append(n, t.Name)
	}
	return strings.Join(n, ", ")
}

func columnNames(t *notebook.Table) string {
	var n []string
	for _, c := range t.Columns {
		n = append(n, fmt.Sprintf("%q", c.Name))
	}
	return strings.Join(n, ", ")
}
