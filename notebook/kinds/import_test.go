package kinds

import (
	"bytes"
	"math"
	"os"
	"strings"
	"testing"

	"gapbook/notebook"
)

// vtuOf writes the field of a solve cell as gapbook's own .vtu export does.
func vtuOf(t *testing.T, sol *Solution, perturb func(i int, v float64) float64) []byte {
	t.Helper()
	v := append([]float64(nil), sol.V...)
	for i := range v {
		if perturb != nil && !sol.Mesh.Boundary[i] {
			v[i] = perturb(i, v[i])
		}
	}
	var b bytes.Buffer
	if err := notebook.WriteVTU(&b, meshField(sol.Mesh, "u_h", "", v, false)); err != nil {
		t.Fatal(err)
	}
	return b.Bytes()
}

func solutionOf(t *testing.T, ev *notebook.Evaluation, id string) *Solution {
	t.Helper()
	sol, ok := okCell(t, ev, id).Objects["solution"].(*Solution)
	if !ok {
		t.Fatalf("cell %s hands on no solution", id)
	}
	return sol
}

// A P1 field solved here, exported as .vtu and imported again, has the same
// bounds as the solve cell's field: the same function on the same mesh.
// The energies and the data are equal bit for bit; the flux reconstruction
// solves its mixed problem iteratively with multigrid over the mesh's
// refinement history, which a file does not carry, so the flux-dependent
// numbers agree to that solver's tolerance (docs/math.md §9).
func TestImportOwnExportBitForBit(t *testing.T) {
	for _, prob := range []map[string]any{
		{"domain": "L-shape", "p": 3},
		{"domain": "rectangle", "p": 1.5, "f": "", "exact": "sin(pi*x)*sin(pi*y)"},
		{"domain": "rectangle", "p": 2, "u_D": "x*y", "f": "1"},
	} {
		base := []string{
			kc("p", "problem", prob),
			kc("m", "mesh", map[string]any{"problem": "p", "cells": 8}),
			kc("s", "solve", map[string]any{"mesh": "m"}),
			kc("b", "bound", map[string]any{"solution": "s", "minorant": false}),
		}
		ev := evalCells(t, base...)
		data := encodeData(vtuOf(t, solutionOf(t, ev, "s"), nil))
		ev2 := evalCells(t, append(base,
			kc("i", "import", map[string]any{"problem": "p", "file": "u.vtu", "data": data}),
			kc("bi", "bound", map[string]any{"solution": "i", "minorant": false}))...)
		a, b := okCell(t, ev2, "b"), okCell(t, ev2, "bi")
		if len(a.Scalars) != len(b.Scalars) {
			t.Fatalf("%v: %d and %d scalars", prob, len(a.Scalars), len(b.Scalars))
		}
		exact := map[string]bool{"discrete_energy": true, "friedrichs": true, "primal_error": true}
		for j, s := range a.Scalars {
			got := b.Scalars[j].Value
			if exact[s.Name] && math.Float64bits(s.Value) != math.Float64bits(got) {
				t.Errorf("%v: %s is %v for the solve, %v for the imported field; want them equal bit for bit", prob, s.Name, s.Value, got)
			}
			if d := math.Abs(s.Value - got); d > 1e-8*math.Abs(s.Value) && d > 1e-14 {
				t.Errorf("%v: %s is %v for the solve, %v for the imported field", prob, s.Name, s.Value, got)
			}
		}
		if n := scalar(t, okCell(t, ev2, "i"), "boundary_mismatch").Value; n != 0 {
			t.Errorf("%v: boundary mismatch %g of an exact export", prob, n)
		}
	}
}

// The guarantee holds for fields that are not the discrete solution: a
// solve's field with its interior values disturbed, imported and bounded,
// has a majorant above its true error (computed from the exact solution).
func TestImportedFieldGuarantee(t *testing.T) {
	for _, prob := range []map[string]any{
		{"domain": "rectangle", "p": 2, "f": "", "exact": "sin(pi*x)*sin(pi*y)"},
		{"domain": "rectangle", "p": 3, "f": "", "exact": "x*(1-x)*y*(1-y)*exp(x)"},
		{"domain": "rectangle", "p": 1.5, "f": "", "exact": "x*(1-x)*y*(1-y)"},
	} {
		base := []string{
			kc("p", "problem", prob),
			kc("m", "mesh", map[string]any{"problem": "p", "cells": 8}),
			kc("s", "solve", map[string]any{"mesh": "m"}),
		}
		sol := solutionOf(t, evalCells(t, base...), "s")
		for _, amp := range []float64{0.01, 0.1} {
			data := encodeData(vtuOf(t, sol, func(i int, v float64) float64 { return v + amp*math.Sin(7*float64(i))*math.Abs(v) }))
			ev := evalCells(t, append(base,
				kc("i", "import", map[string]any{"problem": "p", "data": data}),
				kc("b", "bound", map[string]any{"solution": "i"}))...)
			r := okCell(t, ev, "b")
			maj, mu := scalar(t, r, "majorant").Value, scalar(t, r, "primal_error").Value
			low := scalar(t, r, "minorant").Value
			if !(maj >= mu) || !(low <= mu) {
				t.Errorf("%v, disturbed by %g: error %g outside [%g, %g]", prob, amp, mu, low, maj)
			}
			t.Logf("%v, disturbed by %g: error %.3e in [%.3e, %.3e], efficiency %.3f", prob["p"], amp, mu, low, maj, maj/mu)
		}
	}
}

// Fixtures written by meshio (meshfile/testdata/make.py): the grid of the
// rectangle (0,2) × (0,1) with u = x² + 3y + 1 imports and bounds.
func TestImportMeshioFixture(t *testing.T) {
	for _, name := range []string{"tri-zlib.vtu", "tri-41.msh", "tri.vtk"} {
		raw, err := os.ReadFile("../../meshfile/testdata/" + name)
		if err != nil {
			t.Fatal(err)
		}
		ev := evalCells(t,
			kc("p", "problem", map[string]any{"domain": "rectangle", "x_max": 2, "p": 2, "u_D": "x^2 + 3*y + 1", "f": "-2"}),
			kc("i", "import", map[string]any{"problem": "p", "file": name, "data": encodeData(raw), "array": "u"}),
			kc("b", "bound", map[string]any{"solution": "i"}))
		r := okCell(t, ev, "i")
		if n := scalar(t, r, "nodes").Value; n != 20 {
			t.Errorf("%s: %g nodes", name, n)
		}
		// −Δu = −2 for u = x² + 3y + 1: the field is the interpolant of
		// the exact solution, whose error the majorant bounds.
		if maj := scalar(t, okCell(t, ev, "b"), "majorant").Value; !(maj > 0) {
			t.Errorf("%s: majorant %g", name, maj)
		}
	}
}

// What is wrong with an import is said on the input to blame.
func TestImportErrors(t *testing.T) {
	raw, err := os.ReadFile("../../meshfile/testdata/tri-zlib.vtu")
	if err != nil {
		t.Fatal(err)
	}
	rect := map[string]any{"domain": "rectangle", "x_max": 2, "p": 2, "u_D": "x^2 + 3*y + 1"}
	for _, c := range []struct {
		name          string
		prob          map[string]any
		in            map[string]any
		field, phrase string
	}{
		{"wrong array", rect, map[string]any{"array": "temperature"}, "array", "it has: u, w"},
		{"two arrays, none chosen", rect, map[string]any{}, "array", "choose one: u, w"},
		{"other domain", map[string]any{"domain": "rectangle", "p": 2}, map[string]any{"array": "u"}, "problem", "does not mesh the domain"},
		{"boundary mismatch", map[string]any{"domain": "rectangle", "x_max": 2, "p": 2}, map[string]any{"array": "u"}, "boundary", "interpolate"},
		{"not base64", rect, map[string]any{"data": "%%%"}, "data", "not base64"},
	} {
		in := map[string]any{"problem": "p", "file": "tri.vtu", "data": encodeData(raw)}
		for k, v := range c.in {
			in[k] = v
		}
		ev := evalCells(t, kc("p", "problem", c.prob), kc("i", "import", in))
		o := ev.Cell("i")
		if o.Status != notebook.StatusError || o.Err.Field != c.field || !strings.Contains(o.Err.Msg, c.phrase) {
			t.Errorf("%s: %s %+v; want an error on %s saying %q", c.name, o.Status, o.Err, c.field, c.phrase)
		}
	}
	// With interpolate, the mismatching boundary values are replaced and
	// counted.
	ev := evalCells(t, kc("p", "problem", map[string]any{"domain": "rectangle", "x_max": 2, "p": 2}),
		kc("i", "import", map[string]any{"problem": "p", "data": encodeData(raw), "array": "u", "boundary": "interpolate"}))
	if n := scalar(t, okCell(t, ev, "i"), "boundary_changed").Value; n != 14 {
		t.Errorf("interpolate changed %g boundary values, want the 14 boundary nodes of the 4 × 3 grid", n)
	}
}

// Model comparison: the Newtonian (p = 2) solution bounded inside a
// p-problem on the same domain. The bounds are guaranteed there: the
// error of v in the p-problem, computed from that problem's exact
// solution, lies inside the bound's interval.
func TestBoundInAnotherProblem(t *testing.T) {
	for _, p := range []float64{1.5, 3} {
		ev := evalCells(t,
			kc("newt", "problem", map[string]any{"domain": "rectangle", "p": 2, "f": "1"}),
			kc("m", "mesh", map[string]any{"problem": "newt", "cells": 8}),
			kc("s", "solve", map[string]any{"mesh": "m"}),
			kc("pp", "problem", map[string]any{"domain": "rectangle", "p": p, "f": "", "exact": "x*(1-x)*y*(1-y)"}),
			kc("b", "bound", map[string]any{"solution": "s", "problem": "pp"}),
			kc("wrong", "problem", map[string]any{"domain": "L-shape", "p": p}),
			kc("bw", "bound", map[string]any{"solution": "s", "problem": "wrong"}))
		r := okCell(t, ev, "b")
		maj, low, mu := scalar(t, r, "majorant").Value, scalar(t, r, "minorant").Value, scalar(t, r, "primal_error").Value
		if !(low <= mu && mu <= maj) {
			t.Errorf("p = %g: the Newtonian field's error %g in the p-problem is outside [%g, %g]", p, mu, low, maj)
		}
		t.Logf("p = %g: Newtonian field's error %.4e in [%.4e, %.4e]", p, mu, low, maj)
		if o := ev.Cell("bw"); o.Status != notebook.StatusError || o.Err.Field != "problem" || !strings.Contains(o.Err.Msg, "does not mesh the domain") {
			t.Errorf("a problem on another domain: %s %+v", o.Status, o.Err)
		}
	}
}
