package kinds

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"strings"
	"testing"

	"gapbook/notebook"
)

// evalCells evaluates a notebook given as a list of cells {id, kind,
// inputs} and returns the evaluation. Loading problems are ignored here:
// each cell reports its own.
func evalCells(t *testing.T, cells ...string) *notebook.Evaluation {
	t.Helper()
	doc := `{"gapbook":2,"title":"test","cells":[` + strings.Join(cells, ",") + `]}`
	nb, _ := notebook.Load([]byte(doc))
	if nb == nil {
		t.Fatalf("notebook does not load:\n%s", doc)
	}
	ev, err := notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	return ev
}

// kc writes one cell of a notebook.
func kc(id, kind string, inputs map[string]any) string {
	b, _ := json.Marshal(map[string]any{"id": id, "kind": kind, "inputs": inputs})
	return string(b)
}

// okCell returns the results of cell id and fails unless it is ok.
func okCell(t *testing.T, ev *notebook.Evaluation, id string) *notebook.Results {
	t.Helper()
	o := ev.Cell(id)
	if o == nil || o.Status != notebook.StatusOK {
		t.Fatalf("cell %s: %+v", id, o.Err)
	}
	return o.Results
}

func scalar(t *testing.T, r *notebook.Results, name string) notebook.Scalar {
	t.Helper()
	s, ok := r.Scalar(name)
	if !ok {
		var names []string
		for _, s := range r.Scalars {
			names = append(names, s.Name)
		}
		t.Fatalf("no scalar %q; have %v", name, names)
	}
	return s
}

func TestProblemValidation(t *testing.T) {
	cases := []struct {
		name   string
		inputs map[string]any
		want   string // the whole error, or a part after "..."
	}{
		{"unknown name", map[string]any{"f": "2 + sn"}, `cell duct: input f: unknown name "sn" at column 5; allowed variables: x, y`},
		{"t without horizon", map[string]any{"f": "x + t"}, `cell duct: input f: unknown name "t" at column 5; allowed variables: x, y`},
		{"y in 1-D", map[string]any{"domain": "interval", "exact": "x*y"}, `cell duct: input exact: unknown name "y" at column 3; allowed variables: x`},
		{"t with horizon", map[string]any{"f": "x + t", "T": 1, "u0": "sn"}, `cell duct: input u0: unknown name "sn" at column 1; allowed variables: x, y, t`},
		{"alpha range", map[string]any{"p": 1}, "cell duct: input p: want a number > 1 and ≤ 100, got 1"},
		{"rectangle", map[string]any{"domain": "rectangle", "x_min": 2}, "cell duct: input x_max: want x_max > x_min = 2, got 1"},
		{"polygon", map[string]any{"domain": "polygon", "vertices": []float64{0, 0, 1, 0, 1}}, "cell duct: input vertices: want x1, y1, x2, y2, … for at least 3 vertices"},
		{"power sum", map[string]any{"potential": "power sum", "p": 1.5}, "cell duct: input p: want p > 2 for the power sum"},
		{"empty f", map[string]any{"f": ""}, "cell duct: input f: empty; give a source f, or an exact solution"},
		{"formula empty", map[string]any{"potential": "formula"}, "cell duct: input g: empty;"},
		{"not convex", map[string]any{"potential": "formula", "g": "t^3/3 - t^2", "p": 3}, "cell duct: input g: "},
		{"bad constant", map[string]any{"f": "log(0)"}, "cell duct: input f: the constant log(0) is not a finite number"},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			ev := evalCells(t, kc("duct", "problem", tc.inputs))
			o := ev.Cell("duct")
			if o.Status != notebook.StatusError {
				t.Fatalf("accepted: %+v", o.Results)
			}
			if got := o.Err.Error(); !strings.HasPrefix(got, tc.want) {
				t.Errorf("error\n got %q\nwant %q", got, tc.want)
			}
		})
	}
}

// A failing cell takes down only the cells that need it.
func TestFailingCellIsolated(t *testing.T) {
	ev := evalCells(t,
		kc("bad", "problem", map[string]any{"f": "sin("}),
		kc("badmesh", "mesh", map[string]any{"problem": "bad"}),
		kc("good", "problem", map[string]any{"domain": "rectangle", "p": 2}),
		kc("mesh", "mesh", map[string]any{"problem": "good", "cells": 4}),
		kc("solve", "solve", map[string]any{"mesh": "mesh"}),
	)
	if o := ev.Cell("badmesh"); o.Status != notebook.StatusError || o.Err.Error() != "cell badmesh: input problem: needs cell bad, which failed" {
		t.Errorf("badmesh: %v %v", o.Status, o.Err)
	}
	okCell(t, ev, "solve")
}

// Every scalar of every numerical kind carries one of the three labels,
// and the summary of the problem names its parts.
func TestProblemResults(t *testing.T) {
	ev := evalCells(t,
		kc("p", "problem", map[string]any{"domain": "disk polygon", "sides": 6, "radius": 2, "potential": "regularised power", "p": 1.5, "epsilon": 0.1}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 4, "refinements": 1}),
	)
	r := okCell(t, ev, "p")
	// Area of the regular hexagon of circumradius 2: (n/2) R² sin(2π/n)
	// (mesh.Disk documentation), width 2·R·cos(π/6) between opposite sides.
	if a := scalar(t, r, "measure").Value; math.Abs(a-3*4*math.Sin(math.Pi/3)) > 1e-12 {
		t.Errorf("hexagon area %g", a)
	}
	if w := scalar(t, r, "width").Value; math.Abs(w-4*math.Cos(math.Pi/6)) > 1e-12 {
		t.Errorf("hexagon width %g", w)
	}
	if s := r.Tables[0].Title; !strings.Contains(s, "regular 6-gon") || !strings.Contains(s, "f = 1") {
		t.Errorf("summary %q", s)
	}
	rm := okCell(t, ev, "m")
	if h := scalar(t, rm, "h").Value; h > 2*2/4.0/2+1e-12 {
		t.Errorf("h = %g after one refinement of a mesh with h ≤ 1", h)
	}
	for _, id := range []string{"p", "m"} {
		for _, s := range okCell(t, ev, id).Scalars {
			if !s.Label.Valid() {
				t.Errorf("%s.%s has label %q", id, s.Name, s.Label)
			}
		}
	}
}

// Mesh sizes for the cells input: the rectangle gets n cells across its
// shorter side, the target h is met, the L-shape has 3n² squares.
func TestMeshSizes(t *testing.T) {
	cases := []struct {
		problem, mesh map[string]any
		cells         float64
		maxH          float64
	}{
		{map[string]any{"domain": "rectangle", "x_max": 2}, map[string]any{"cells": 4}, 2 * 8 * 4, math.Sqrt2 / 4},
		{map[string]any{"domain": "L-shape"}, map[string]any{"cells": 4}, 3 * 2 * 16, math.Sqrt2 / 4},
		{map[string]any{"domain": "L-shape"}, map[string]any{"h": 0.1}, 3 * 2 * 15 * 15, 0.1},
		{map[string]any{"domain": "interval"}, map[string]any{"h": 0.1}, 10, 0.1},
		{map[string]any{"domain": "polygon"}, map[string]any{"h": 0.3}, -1, 0.3},
	}
	for i, tc := range cases {
		tc.mesh["problem"] = "p"
		ev := evalCells(t, kc("p", "problem", tc.problem), kc("m", "mesh", tc.mesh))
		r := okCell(t, ev, "m")
		if n := scalar(t, r, "cells").Value; tc.cells > 0 && n != tc.cells {
			t.Errorf("case %d: %g cells, want %g", i, n, tc.cells)
		}
		if h := scalar(t, r, "h").Value; h > tc.maxH*(1+1e-12) {
			t.Errorf("case %d: h = %g > %g", i, h, tc.maxH)
		}
	}
}

// The discrete energy of the solve cell for f = 1 on (0, 1) lies above the
// exact J(u) = −∫u/α' with ∫u = (1/2)^{α'}/(α' + 1) (docs/checks.md item 9; a
// P1 minimiser has J(v) ≥ J(u), and ∫ f v is exact for f = 1), and
// approaches it.
func TestSolveEnergyInterval(t *testing.T) {
	for _, alpha := range []float64{1.5, 2, 4} {
		t.Run(fmt.Sprint(alpha), func(t *testing.T) {
			ev := evalCells(t,
				kc("p", "problem", map[string]any{"domain": "interval", "p": alpha}),
				kc("m", "mesh", map[string]any{"problem": "p", "cells": 64}),
				kc("s", "solve", map[string]any{"mesh": "m"}))
			r := okCell(t, ev, "s")
			ac := alpha / (alpha - 1)
			ju := -math.Pow(0.5, ac) / (ac + 1) / ac
			jv := scalar(t, r, "energy").Value
			if jv < ju-1e-12 || jv-ju > 1e-3*math.Abs(ju) {
				t.Errorf("J(v) = %.12g, J(u) = %.12g", jv, ju)
			}
			if len(r.Tables) == 0 || len(r.Tables[0].Rows) == 0 {
				t.Error("no Newton history")
			}
		})
	}
}

// With an exact solution, the gradient error of P1 falls like h (common
// practice, no source: the a priori rate of P1 for smooth solutions).
func TestSolveGradientErrorRate(t *testing.T) {
	var errs []float64
	for _, n := range []int{8, 16} {
		ev := evalCells(t,
			kc("p", "problem", map[string]any{"domain": "rectangle", "p": 2, "f": "", "exact": "sin(pi*x)*sin(pi*y) + x*y"}),
			kc("m", "mesh", map[string]any{"problem": "p", "cells": n}),
			kc("s", "solve", map[string]any{"mesh": "m"}))
		r := okCell(t, ev, "s")
		s := scalar(t, r, "gradient_error")
		if s.Label != notebook.Reference {
			t.Errorf("label %s", s.Label)
		}
		errs = append(errs, s.Value)
	}
	if rate := math.Log2(errs[0] / errs[1]); rate < 0.9 || rate > 1.2 {
		t.Errorf("rate %.3f from errors %v, want about 1", rate, errs)
	}
}
