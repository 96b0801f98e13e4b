// Package batch is the headless evaluation behind `gapbook run`: load a
// study, evaluate it with one progress line per cell, print the results as
// JSON, write a report and export tables, plots and fields as files.
package batch

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"os"
	"path/filepath"
	"time"

	"gapbook/notebook"
	_ "gapbook/notebook/kinds" // registers the cell kinds
)

// Options steer Run, the headless evaluation behind `gapbook run`.
type Options struct {
	// JSON prints one object with a cells array to Stdout.
	JSON bool
	// Report, when set, is the path of an HTML report to write.
	Report string
	// Workers is how many members of a sweep are computed at once (0: one
	// per core); results do not depend on it.
	Workers int
	// Fields adds to the JSON every cell's tables and fields (mesh nodes,
	// triangles and values).
	Fields bool
	// Export, when set, is a directory that receives every table as CSV,
	// plot as SVG and field as .vtu (see Export).
	Export string
	// Stdout receives the JSON; Stderr one progress line per cell.
	Stdout, Stderr io.Writer
}

// Cell is one cell in the JSON printed by Run.
type Cell struct {
	ID     string           `json:"id"`
	Kind   string           `json:"kind"`
	Status notebook.Status  `json:"status"`
	Error  string           `json:"error"`
	Values map[string]Value `json:"values"`
	// Intervals maps each interval's name to its ends (omitted when the
	// cell has none).
	Intervals map[string]Interval `json:"intervals,omitempty"`
	// Tables and Fields are the cell's tables and fields (with
	// Options.Fields; non-finite numbers as "NaN", "Inf", "-Inf").
	Tables []notebook.Table `json:"tables,omitempty"`
	Fields []notebook.Field `json:"fields,omitempty"`
	Digest string           `json:"digest,omitempty"`
	// Reproduced is "yes" or "no" when the file had results for the same
	// inputs, else empty.
	Reproduced string `json:"reproduced,omitempty"`
}

// Value is one named scalar in the JSON; Value is null when it is
// not a finite number.
type Value struct {
	Value *float64       `json:"value"`
	Label notebook.Label `json:"label"`
	Unit  string         `json:"unit,omitempty"`
}

// Interval is one interval in the JSON: Lower and Upper are null
// when not finite; Ends names the scalars in values that hold them.
type Interval struct {
	Lower *float64       `json:"lower"`
	Upper *float64       `json:"upper"`
	Label notebook.Label `json:"label"`
	Unit  string         `json:"unit,omitempty"`
	Ends  [2]string      `json:"ends"`
}

func finite(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// Output is the object printed with --json.
type Output struct {
	Title string `json:"title"`
	OK    bool   `json:"ok"`
	Cells []Cell `json:"cells"`
}

// Run loads the notebook at path, evaluates it with one progress line
// per cell, prints JSON and writes a report as asked. It returns the
// output and whether every cell is ok; err is for a file that cannot be
// read, loaded or written.
func Run(ctx context.Context, path string, o Options) (*Output, bool, error) {
	if o.Stderr == nil {
		o.Stderr = io.Discard
	}
	if o.Stdout == nil {
		o.Stdout = io.Discard
	}
	data, err := os.ReadFile(path)
	if err != nil {
		return nil, false, err
	}
	nb, err := notebook.Load(data)
	if nb == nil {
		return nil, false, fmt.Errorf("%s:\n%v", path, err)
	}
	if err != nil {
		// Input problems: report them, then evaluate so each cell shows its own.
		fmt.Fprintf(o.Stderr, "%s: problems in cell inputs:\n%v\n", path, err)
	}
	for _, n := range nb.Migration {
		fmt.Fprintf(o.Stderr, "%s: migrated from an older format: %s\n", path, n)
	}
	start := time.Now()
	cellStart := start
	engine := notebook.NewEngine()
	engine.Workers = o.Workers
	ev, err := engine.Evaluate(ctx, nb, notebook.Options{Progress: func(p notebook.Progress) {
		if !p.Done {
			if p.Fraction == 0 {
				cellStart = time.Now()
			}
			return
		}
		line := fmt.Sprintf("[%d/%d] %s (%s): %s", p.Index+1, p.Count, p.ID, p.Kind, p.Outcome.Status)
		if p.Outcome.Err != nil {
			line += ": " + p.Outcome.Err.Error()
		}
		switch p.Outcome.Reproduced {
		case "yes":
			line += ", reproduced"
		case "no":
			line += ", differs from the saved results"
		}
		fmt.Fprintf(o.Stderr, "%s (%.2f s)\n", line, time.Since(cellStart).Seconds())
	}})
	if err != nil {
		return nil, false, err
	}
	if ev.Canceled {
		// Stopped (Ctrl+C): half an evaluation is no result to keep.
		return nil, false, fmt.Errorf("interrupted before every cell was computed; no JSON, report or export written")
	}
	out := output(nb, ev, o.Fields)
	if o.JSON {
		b, err := json.MarshalIndent(out, "", "  ")
		if err != nil {
			return nil, false, err
		}
		if _, err := o.Stdout.Write(append(b, '\n')); err != nil {
			return nil, false, err
		}
	}
	if o.Report != "" {
		if err := WriteFileAtomic(o.Report, notebook.Report(nb, ev)); err != nil {
			return nil, false, err
		}
	}
	if o.Export != "" {
		paths, err := Export(ctx, o.Export, ev)
		if err != nil {
			return nil, false, err
		}
		fmt.Fprintf(o.Stderr, "%d files written to %s\n", len(paths), o.Export)
	}
	fmt.Fprintf(o.Stderr, "%d cells in %.2f s\n", len(ev.Cells), time.Since(start).Seconds())
	return out, out.OK, nil
}

func output(nb *notebook.Notebook, ev *notebook.Evaluation, fields bool) *Output {
	out := &Output{Title: nb.Title, OK: true, Cells: []Cell{}}
	for _, o := range ev.Cells {
		bc := Cell{ID: o.ID, Kind: o.Kind, Status: o.Status, Values: map[string]Value{}, Digest: o.Digest, Reproduced: o.Reproduced}
		if o.Err != nil {
			bc.Error = o.Err.Error()
		}
		if o.Status != notebook.StatusOK {
			out.OK = false
		}
		if o.Results != nil {
			for _, s := range o.Results.Scalars {
				bc.Values[s.Name] = Value{Value: finite(s.Value), Label: s.Label, Unit: s.Unit}
			}
			for _, iv := range o.Results.Intervals {
				if bc.Intervals == nil {
					bc.Intervals = map[string]Interval{}
				}
				bc.Intervals[iv.Name] = Interval{Lower: finite(iv.Lower), Upper: finite(iv.Upper), Label: iv.Label, Unit: iv.Unit, Ends: iv.Ends}
			}
			if fields {
				bc.Tables, bc.Fields = o.Results.Tables, o.Results.Fields
			}
		}
		out.Cells = append(out.Cells, bc)
	}
	return out
}

// WriteFileAtomic writes data to path so that path never holds a part of
// it: a temporary file beside it is written, synced and renamed over path.
// On failure path is as it was and the error names it.
func WriteFileAtomic(path string, data []byte) error {
	dir, base := filepath.Split(path)
	if dir == "" {
		dir = "."
	}
	tmp, err := os.CreateTemp(dir, "."+base+".partial-*")
	if err != nil {
		return fmt.Errorf("cannot write %s: %w", path, unwrapPath(err))
	}
	name := tmp.Name()
	_, err = tmp.Write(data)
	if err == nil {
		err = tmp.Sync()
	}
	if cerr := tmp.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(name, 0o644)
	}
	if err == nil {
		err = os.Rename(name, path)
	}
	if err != nil {
		os.Remove(name)
		return fmt.Errorf("cannot write %s: %w", path, unwrapPath(err))
	}
	return nil
}

// unwrapPath drops the path of an *fs.PathError (the message names the
// file the user asked for, not the temporary one).
func unwrapPath(err error) error {
	var pe *fs.PathError
	if errors.As(err, &pe) {
		return pe.Err
	}
	var le *os.LinkError
	if errors.As(err, &le) {
		return le.Err
	}
	return err
}
