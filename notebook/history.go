package notebook

import (
	"encoding/json"
	"maps"
	"math"
	"slices"
	"time"
)

// Run is one entry of the run history: when, under which label, which
// input was overridden (if any), the inputs as evaluated, and the key
// results (scalars, tables and digest) of every cell.
type Run struct {
	At       string                                `json:"at"`
	Label    string                                `json:"label"`
	Override *Override                             `json:"override,omitempty"`
	Inputs   map[string]map[string]json.RawMessage `json:"inputs,omitempty"`
	Cells    map[string]RunCell                    `json:"cells,omitempty"`
	Extra    map[string]json.RawMessage            `json:"-"`
}

// RunCell is the record of one cell in a run.
type RunCell struct {
	Status  Status   `json:"status"`
	Digest  string   `json:"digest,omitempty"`
	Error   string   `json:"error,omitempty"`
	Scalars []Scalar `json:"scalars,omitempty"`
	Tables  []Table  `json:"tables,omitempty"`
}

// Record stores the results of ev in the cells (as saved results) unless
// ev overrode an input, and appends a run labelled label to the history,
// dropping the oldest runs beyond MaxRuns.
func (nb *Notebook) Record(ev *Evaluation, label string, at time.Time) {
	run := Run{At: at.UTC().Format(time.RFC3339), Label: label, Override: ev.Override,
		Inputs: map[string]map[string]json.RawMessage{}, Cells: map[string]RunCell{}}
	for _, o := range ev.Cells {
		c, _ := nb.Cell(o.ID)
		if c == nil {
			continue
		}
		in := maps.Clone(c.Inputs)
		if ov := ev.Override; ov != nil && ov.Cell == c.ID {
			if in == nil {
				in = map[string]json.RawMessage{}
			}
			in[ov.Input] = ov.Value
		}
		run.Inputs[c.ID] = in
		rc := RunCell{Status: o.Status}
		if o.Err != nil {
			rc.Error = o.Err.Error()
		}
		if o.Status == StatusOK {
			rc.Digest = o.Digest
			rc.Scalars = o.Results.Scalars
			rc.Tables = o.Results.Tables
			if ev.Override == nil {
				c.Saved = &Saved{Hash: o.Hash, Digest: o.Digest, Results: o.Results}
			}
		}
		run.Cells[c.ID] = rc
	}
	nb.History = append(nb.History, run)
	if n := len(nb.History) - MaxRuns; n > 0 {
		nb.History = slices.Delete(nb.History, 0, n)
	}
}

// CompareRuns builds a table with one row per run (labelled by the run's
// label): first every numeric input that differs between the runs
// ("cell.input"), then every scalar result ("cell.name"), NaN where a run
// lacks it. Cells are taken in the order of nb.
func CompareRuns(nb *Notebook, runs []Run) Table {
	t := Table{Name: "runs", Title: "runs side by side"}
	type colKey struct {
		cell, name string
		input      bool
	}
	var keys []colKey
	for _, c := range nb.Cells {
		names := map[string]bool{}
		for _, r := range runs {
			for n := range r.Inputs[c.ID] {
				names[n] = true
			}
		}
		for _, n := range slices.Sorted(maps.Keys(names)) {
			first, differ, numeric := "", false, true
			for i, r := range runs {
				v := string(r.Inputs[c.ID][n])
				if _, err := parseNumber(json.RawMessage(v)); err != nil {
					numeric = false
				}
				if i == 0 {
					first = v
				} else if v != first {
					differ = true
				}
			}
			if differ && numeric {
				keys = append(keys, colKey{c.ID, n, true})
			}
		}
	}
	for _, c := range nb.Cells {
		seen := map[string]bool{}
		for _, r := range runs {
			for _, s := range r.Cells[c.ID].Scalars {
				if !seen[s.Name] {
					seen[s.Name] = true
					keys = append(keys, colKey{c.ID, s.Name, false})
				}
			}
		}
	}
	for _, k := range keys {
		t.Columns = append(t.Columns, Column{Name: k.cell + "." + k.name})
	}
	for _, r := range runs {
		t.Labels = append(t.Labels, r.Label)
		row := make([]float64, len(keys))
		for j, k := range keys {
			row[j] = math.NaN()
			if k.input {
				if f, err := parseNumber(r.Inputs[k.cell][k.name]); err == nil {
					row[j] = f
				}
				continue
			}
			for _, s := range r.Cells[k.cell].Scalars {
				if s.Name == k.name {
					row[j] = s.Value
				}
			}
		}
		t.Rows = append(t.Rows, row)
	}
	return t
}

// OverlayRuns draws one series per run from table of cell (columns x and
// y), so runs with different exponents appear in one plot.
func OverlayRuns(runs []Run, cell, table, x, y string) Plot {
	p := Plot{Name: "overlay", Title: cell + ": " + y + " against " + x, XLabel: x, YLabel: y}
	for _, r := range runs {
		rc, ok := r.Cells[cell]
		if !ok {
			continue
		}
		res := Results{Tables: rc.Tables}
		t, ok := res.Table(table)
		if !ok {
			continue
		}
		xs, ys := t.Column(x), t.Column(y)
		if xs == nil || ys == nil {
			continue
		}
		p.Series = append(p.Series, Series{Name: r.Label, X: xs, Y: ys})
	}
	return p
}
