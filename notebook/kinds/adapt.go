package kinds

import (
	"context"
	"fmt"
	"math"

	"gapbook/estimate"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/notebook"
	"gapbook/problem"
)

func init() { notebook.Register(adaptKind{}) }

// adaptKind refines a mesh where the indicators are large until the
// majorant meets a target or the mesh a size limit.
type adaptKind struct{}

func (adaptKind) Name() string { return "adapt" }
func (adaptKind) Doc() string {
	return "Adaptive refinement: solve, bound, refine the cells that hold half of the error (newest-vertex bisection), and repeat until the guaranteed bound meets the target or the mesh the size limit."
}
func (adaptKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "problem", Type: notebook.Ref, RefKinds: []string{"problem"}, Doc: "id of the problem cell to solve (2-D domains)"},
		{Name: "cells", Type: notebook.Integer, Default: 4, Low: notebook.AtLeast(1), High: notebook.AtMost(256), Doc: "cells across the domain of the starting mesh (as in a mesh cell)"},
		{Name: "target", Type: notebook.Number, Default: 0.0, Low: notebook.AtLeast(0), Doc: "stop once the majorant of μ(v) is at most this (0: no target; the size and step limits stop the loop)"},
		{Name: "max_cells", Type: notebook.Integer, Default: 20000, Low: notebook.AtLeast(10), High: notebook.AtMost(2000000), Doc: "stop before a mesh with more cells than this"},
		{Name: "max_steps", Type: notebook.Integer, Default: 12, Low: notebook.AtLeast(1), High: notebook.AtMost(60), Doc: "largest number of meshes"},
		{Name: "share", Type: notebook.Number, Default: 0.5, Low: notebook.Above(0), High: notebook.AtMost(1), Doc: "bulk marking: refine the fewest cells whose indicators hold this share of the total (1: refine all)"},
		{Name: "tolerance", Type: notebook.Number, Default: 1e-10, Low: notebook.Above(0), High: notebook.Below(1), Doc: "Newton tolerance on every mesh (as in a solve cell)"},
		{Name: "max_newton", Type: notebook.Integer, Default: 60, Low: notebook.AtLeast(1), High: notebook.AtMost(1000), Doc: "largest number of Newton steps per mesh"},
		{Name: "order", Type: notebook.Integer, Default: 1, Low: notebook.AtLeast(0), High: notebook.AtMost(1), Doc: "Raviart–Thomas order of the equilibrated flux (as in a bound cell)"},
		{Name: "newton", Type: notebook.Integer, Default: 3, Low: notebook.AtLeast(0), High: notebook.AtMost(50), Doc: "Newton steps on the equilibrated flux"},
		{Name: "degree", Type: notebook.Integer, Default: estimate.DefaultDegree, Low: notebook.AtLeast(2), High: notebook.AtMost(8), Doc: "quadrature degree of the cell integrals"},
	}
}

func (adaptKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	p, ok := c.Object(in.Text("problem"), "problem").(*problem.Problem)
	if !ok {
		return nil, notebook.FieldErr("problem", "cell %s is not a problem cell", in.Text("problem"))
	}
	if p.Domain.Dim() != 2 {
		return nil, notebook.FieldErr("problem", "adaptive refinement needs a 2-D domain; problem %s is an interval (use a finer mesh cell instead)", p.Name)
	}
	if len(p.G.Modulus().Bounds) == 0 {
		return nil, notebook.FieldErr("problem", "the potential %s has no proven modulus, so there are no guaranteed indicators; use a catalogue potential", p.G)
	}
	m0, err := p.Domain.Mesh(in.Int("cells"), 0)
	if err != nil {
		return nil, notebook.FieldErr("cells", "%v", err)
	}
	cf, err := friedrichs(c, m0, p.Exponent(), constBest)
	if err != nil {
		return nil, err
	}
	src := p.SourceAt(0)
	tol, maxNewton := in.Number("tolerance"), in.Int("max_newton")
	var prevMesh *mesh.Mesh
	var prevV []float64
	var samples *estimate.Samples
	solve := func(ctx context.Context, s *fem.P1) ([]float64, error) {
		o := nonlinear.Options{Tol: tol, MaxIter: maxNewton}
		if m := s.Mesh; prevMesh != nil && m.Coarse == prevMesh && len(m.Parents) == m.NumNodes() {
			// Start from the previous solution instead of redoing the
			// whole bisection hierarchy.
			o.Initial = make([]float64, m.NumNodes())
			for i, pp := range m.Parents {
				o.Initial[i] = (prevV[pp[0]] + prevV[pp[1]]) / 2
			}
		}
		r, err := nonlinear.Solve(ctx, s.Mesh, p, o)
		if err != nil {
			return nil, err
		}
		prevMesh, prevV = s.Mesh, r.U
		// The solver's samples of f serve the flux and the bounds on this
		// mesh, as in the bound cell; a load rule they cannot use leaves
		// samples nil, and f is then evaluated where needed.
		samples = nil
		if r.Load != nil {
			samples, _ = estimate.SamplesOf(s, src, r.LoadDegree, r.Load)
		}
		return r.U, nil
	}
	eo := estimate.EquilibrateOptions{Order: in.Int("order"), Newton: in.Int("newton"), Degree: in.Int("degree")}
	flux := func(ctx context.Context, s *fem.P1, v []float64) (estimate.Flux, error) {
		if samples.On(s) {
			o := eo
			o.Degree = samples.Degree
			return estimate.Equilibrate(ctx, s, p.G, v, samples.Source(), o)
		}
		return estimate.Equilibrate(ctx, s, p.G, v, estimate.FuncSource(s.Mesh, p.SourceAt(0)), eo)
	}
	maxSteps := in.Int("max_steps")
	run, err := estimate.Adapt(c.Context(), m0, p, solve, flux,
		estimate.AdaptOptions{Options: estimate.Options{Degree: in.Int("degree"), Friedrichs: cf}, Target: in.Number("target"),
			MaxCells: in.Int("max_cells"), MaxSteps: maxSteps, Share: in.Number("share"),
			Samples: func(*fem.P1) *estimate.Samples { return samples },
			Progress: func(st estimate.AdaptStep) {
				c.Progress(float64(st.Step+1)/float64(maxSteps), fmt.Sprintf("mesh %d: %d unknowns, majorant %.3g", st.Step, st.Unknowns, st.Result.Majorant.Value))
			}})
	if err != nil {
		if e := c.Err(); e != nil {
			return nil, e
		}
		return nil, fmt.Errorf("%v", err)
	}
	return adaptResults(p, run, cf), nil
}

func adaptResults(p *problem.Problem, run *estimate.AdaptRun, cf estimate.Constant) *notebook.Results {
	mf := p.Exact()
	cols := []notebook.Column{{Name: "step"}, {Name: "cells"}, {Name: "unknowns"}, {Name: "h"}, {Name: "majorant"}, {Name: "norm_bound"}}
	if mf != nil {
		cols = append(cols, notebook.Column{Name: "primal_error"}, notebook.Column{Name: "efficiency"})
	}
	t := notebook.Table{Name: "adapt", Title: "adaptive refinement (" + run.Reason + ")", Columns: cols}
	var xs, maj, errs []float64
	last := run.Steps[len(run.Steps)-1]
	var lastMu float64
	for _, st := range run.Steps {
		r := st.Result
		row := []float64{float64(st.Step), float64(st.Mesh.NumCells()), float64(st.Unknowns), st.Mesh.MaxH(), r.Majorant.Value, r.Norm.Value}
		xs = append(xs, float64(st.Unknowns))
		maj = append(maj, r.Majorant.Value)
		if mf != nil {
			s, _ := fem.NewP1(st.Mesh)
			_, _, grad := mf.At(0)
			mu, _ := estimate.PrimalError(s, p.G, st.V, grad)
			row = append(row, mu, r.Majorant.Value/mu)
			errs = append(errs, mu)
			lastMu = mu
		}
		t.Rows = append(t.Rows, row)
	}
	lab := last.Result.Label
	res := &notebook.Results{
		Scalars: []notebook.Scalar{
			{Name: "majorant", Value: last.Result.Majorant.Value, Label: lab, Unit: "μ(v) ≤ majorant on the final mesh"},
			{Name: "norm_bound", Value: last.Result.Norm.Value, Label: lab, Unit: fmt.Sprintf("‖∇(u − v)‖ in L^%g on the final mesh", p.Exponent())},
			{Name: "unknowns", Value: float64(last.Unknowns), Label: notebook.Reference, Unit: "free nodes of the final mesh"},
			{Name: "steps", Value: float64(len(run.Steps)), Label: notebook.Reference, Unit: "meshes solved"},
		},
		Tables: []notebook.Table{t},
	}
	if n := len(xs); n >= 3 {
		// Slope of log μ̄ against log N over the second half of the run:
		// 1 is the optimal rate of P1 in 2-D for μ ~ ‖∇e‖² type measures.
		k := n / 2
		rate := -math.Log(maj[n-1]/maj[k]) / math.Log(xs[n-1]/xs[k])
		res.Scalars = append(res.Scalars, notebook.Scalar{Name: "rate", Value: rate, Label: notebook.Estimate, Unit: "−d log(majorant)/d log(unknowns) over the second half of the run"})
	}
	if mf != nil {
		res.Scalars = append(res.Scalars,
			notebook.Scalar{Name: "primal_error", Value: lastMu, Label: notebook.Reference, Unit: "μ(v) on the final mesh from the exact solution"},
			notebook.Scalar{Name: "efficiency", Value: last.Result.Majorant.Value / lastMu, Label: notebook.Reference, Unit: "majorant / μ(v) on the final mesh"})
	}
	pl := notebook.Plot{Name: "convergence", Title: "majorant against unknowns", XLabel: "unknowns", YLabel: "μ", LogX: true, LogY: true,
		Series: []notebook.Series{{Name: "majorant", X: xs, Y: maj}}}
	if mf != nil {
		pl.Series = append(pl.Series, notebook.Series{Name: "primal_error", X: xs, Y: errs})
	}
	res.Plots = []notebook.Plot{pl}
	if last.Mesh.NumCells() <= fieldCellLimit {
		res.Fields = []notebook.Field{meshField(last.Mesh, "indicators", fmt.Sprintf("indicators on the final mesh (%d cells); Friedrichs constant %.4g, %s", last.Mesh.NumCells(), cf.Value, cf.Method), last.Result.Indicators, true)}
	}
	return res
}
