package kinds

import (
	"errors"
	"fmt"
	"math"

	"gapbook/estimate"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/notebook"
	"gapbook/problem"
)

func init() { notebook.Register(solveKind{}) }

// solveKind minimises the discrete energy on a mesh by Newton's method.
type solveKind struct{}

func (solveKind) Name() string { return "solve" }
func (solveKind) Doc() string {
	return "The P1 finite element solution v minimising J(w) = ∫ G(∇w) − f w with w = u_D at the boundary nodes, by Newton's method with multigrid (for a problem with a time horizon: its data at t = 0; use an evolve cell for the evolution)."
}
func (solveKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "mesh", Type: notebook.Ref, RefKinds: []string{"mesh"}, Doc: "id of the mesh cell to solve on"},
		{Name: "tolerance", Type: notebook.Number, Default: defaultTolerance, Low: notebook.Above(0), High: notebook.Below(1),
			Doc: "Newton stops when the energy decrement falls below this fraction of the energy scale (any v is allowed in the bounds; a looser tolerance only weakens them)"},
		{Name: "max_newton", Type: notebook.Integer, Default: defaultMaxNewton, Low: notebook.AtLeast(1), High: notebook.AtMost(1000),
			Doc: "largest number of Newton steps per mesh level and continuation stage"},
	}
}

// The solve cell's default settings, also those of the refined solve behind
// the minorant of an imported field.
const (
	defaultTolerance = 1e-10
	defaultMaxNewton = 60
)

// Solution is the object a solve cell hands on (name "solution").
type Solution struct {
	Problem *problem.Problem
	Mesh    *mesh.Mesh
	Space   *fem.P1
	// V holds the nodal values of the discrete solution.
	V      []float64
	Result *nonlinear.Result
	// Tolerance and MaxNewton are the solver settings used.
	Tolerance float64
	MaxNewton int
}

func (solveKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	d, ok := c.Object(in.Text("mesh"), "mesh").(*Discretisation)
	if !ok {
		return nil, notebook.FieldErr("mesh", "cell %s is not a mesh cell", in.Text("mesh"))
	}
	sol, err := solveOn(c, d.Problem, d.Mesh, in.Number("tolerance"), in.Int("max_newton"))
	if err != nil {
		return nil, err
	}
	return solutionResults(sol), nil
}

// solveOn runs Newton on m for p and wraps the answer; a failed solve
// names the tolerance input so that the user knows what to change.
func solveOn(c *notebook.Context, p *problem.Problem, m *mesh.Mesh, tol float64, maxNewton int) (*Solution, error) {
	return solveWith(c, p, m, p.DirichletAt(0), tol, maxNewton)
}

// solveWith is solveOn with other boundary data.
func solveWith(c *notebook.Context, p *problem.Problem, m *mesh.Mesh, uD func(x, y float64) float64, tol float64, maxNewton int) (*Solution, error) {
	s, err := fem.NewP1(m)
	if err != nil {
		return nil, err
	}
	prog := 0
	r, err := nonlinear.Solve(c.Context(), m, p.WithDirichlet(uD),
		nonlinear.Options{Tol: tol, MaxIter: maxNewton, Progress: func(st nonlinear.Step) {
			prog++
			c.Progress(1-1/float64(prog+1), fmt.Sprintf("Newton step %d, level %d, decrement %.1e", prog, st.Level, st.Decrement))
		}})
	if err != nil {
		if e := c.Err(); e != nil {
			return nil, e
		}
		return nil, solveFailure(p, err, tol)
	}
	return &Solution{Problem: p, Mesh: m, Space: s, V: r.U, Result: r, Tolerance: tol, MaxNewton: maxNewton}, nil
}

func solutionResults(sol *Solution) *notebook.Results {
	r := sol.Result
	res := &notebook.Results{
		Scalars: []notebook.Scalar{
			// J(v) is computed, not bounded: its only errors are the
			// quadrature of f v and rounding. Bounds of J(u) come from a
			// bound cell.
			{Name: "energy", Value: r.Energy, Label: notebook.Estimate, Unit: fmt.Sprintf("J(v), discrete energy; load quadrature of degree %d", r.LoadDegree)},
			{Name: "newton_steps", Value: float64(r.Newton), Label: notebook.Reference, Unit: "count over all levels and stages"},
			{Name: "cg_iterations", Value: float64(r.CG), Label: notebook.Reference, Unit: "count"},
			{Name: "unknowns", Value: float64(sol.Space.NumFree()), Label: notebook.Reference, Unit: "free nodes"},
		},
		Tables:  []notebook.Table{historyTable(r.History)},
		Objects: map[string]any{"solution": sol},
	}
	if mf := sol.Problem.Exact(); mf != nil {
		_, u, grad := mf.At(0)
		e := estimate.GradientError(sol.Space, sol.V, grad, sol.Problem.Exponent())
		res.Scalars = append(res.Scalars,
			notebook.Scalar{Name: "gradient_error", Value: e, Label: notebook.Reference, Unit: fmt.Sprintf("‖∇(u − v)‖ in L^%g against the exact solution, quadrature degree %d", sol.Problem.Exponent(), estimate.ErrorDegree)},
			notebook.Scalar{Name: "max_nodal_error", Value: estimate.MaxNodalError(sol.Mesh, sol.V, u), Label: notebook.Reference, Unit: "largest |u − v| at the nodes"})
	}
	m := sol.Mesh
	if m.Dim == 1 {
		res.Plots = append(res.Plots, nodalPlot(m, "v", "discrete solution v", sol.V))
	} else if m.NumCells() <= fieldCellLimit {
		res.Fields = append(res.Fields, meshField(m, "v", "discrete solution v (P1)", sol.V, false))
	}
	return res
}

func historyTable(h []nonlinear.Step) notebook.Table {
	t := notebook.Table{Name: "newton", Title: "Newton history", Columns: []notebook.Column{
		{Name: "step"}, {Name: "level"}, {Name: "unknowns"}, {Name: "epsilon", Unit: "continuation"},
		{Name: "energy"}, {Name: "decrement", Unit: "relative"}, {Name: "residual", Unit: "relative"},
		{Name: "step_length"}, {Name: "cg"}}}
	for i, s := range h {
		t.Rows = append(t.Rows, []float64{float64(i + 1), float64(s.Level), float64(s.Unknowns), s.Epsilon,
			s.Energy, s.Decrement, s.Residual, s.StepLength, float64(s.CG)})
	}
	return t
}

// solveFailure turns a failed solve into the error of the input to change,
// with what failed, the last residual and a remedy that works
// (docs/math.md §4.8).
func solveFailure(p *problem.Problem, err error, tol float64) error {
	var de *nonlinear.DataError
	if errors.As(err, &de) {
		field := de.Datum
		if de.Datum == "u_D" && p.DirichletFromExact() || de.Datum == "f" && p.Derived() {
			field = "exact" // the datum comes from the exact solution
		}
		if field == "exact" {
			return notebook.FieldErr(field, "the exact solution, which gives %s here, is %g at the %s (%g, %g); it must be finite on the domain", de.Datum, de.Value, map[string]string{"u_D": "boundary node", "f": "quadrature point"}[de.Datum], de.At.X, de.At.Y)
		}
		return notebook.FieldErr(field, "%v", de)
	}
	var nc *nonlinear.NotConvergedError
	if !errors.As(err, &nc) {
		return err
	}
	last := nonlinear.Step{}
	if n := len(nc.History); n > 0 {
		last = nc.History[n-1]
	}
	switch nc.Cause {
	case nonlinear.StepsExhausted:
		if stagnated(nc.History) {
			return notebook.FieldErr("tolerance", "%v; the energy decrement stagnates near %.1e, which floating point cannot resolve further: set tolerance to %.0e or more", err, last.Decrement, suggestTol(last.Decrement, tol))
		}
		return notebook.FieldErr("max_newton", "%v; the decrement is still falling: allow more Newton steps (max_newton)", err)
	case nonlinear.LineSearchFailed:
		if last.Decrement < 1e-6 {
			return notebook.FieldErr("tolerance", "%v; J cannot decrease further in floating point at relative decrement %.1e: set tolerance to %.0e or more", err, last.Decrement, suggestTol(last.Decrement, tol))
		}
		return notebook.FieldErr("tolerance", "%v; the Newton direction does not lower the energy far from the solution: the data may be badly scaled for this exponent (try f and u_D of size about 1, or solve at an exponent nearer 2 first)", err)
	case nonlinear.NoDescent:
		return notebook.FieldErr("potential", "%v; the linearised problem is not positive definite at the current gradients: the potential is not convex enough there", err)
	case nonlinear.NotFinite:
		return notebook.FieldErr("p", "%v; the potential leaves the floating-point range (about 1.8e308) at these gradients: rescale the problem so that gradients are of order 1 (for the power potential u ↦ λu turns f into λ^{p−1} f), or lower p", err)
	}
	return notebook.FieldErr("max_newton", "%v", err)
}

// stagnated reports whether the decrement stopped falling at rounding
// level: over the last stage alone (the steps on the last level with the
// last continuation parameter; the history runs over all of them), at
// least eight steps, the decrement below 1e-8 and no longer halving.
func stagnated(h []nonlinear.Step) bool {
	if len(h) == 0 {
		return false
	}
	last := h[len(h)-1]
	i := len(h)
	for i > 0 && h[i-1].Level == last.Level && h[i-1].Epsilon == last.Epsilon {
		i--
	}
	stage := h[i:]
	if len(stage) < 8 || !(last.Decrement < 1e-8) {
		return false
	}
	best, recent := math.Inf(1), math.Inf(1)
	for j, s := range stage {
		if j < len(stage)-4 {
			best = math.Min(best, s.Decrement)
		} else {
			recent = math.Min(recent, s.Decrement)
		}
	}
	return recent >= 0.5*best
}

// suggestTol is a tolerance that a stalled decrement d meets: ten times d,
// rounded up to a power of ten, and never tighter than the one asked for.
func suggestTol(d, tol float64) float64 {
	t := math.Pow(10, math.Ceil(math.Log10(10*math.Max(d, 1e-300))))
	return math.Max(t, tol)
}
