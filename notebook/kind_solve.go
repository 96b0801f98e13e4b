package notebook

import (
	"errors"
	"fmt"
	"gapbook/problem"

	"gapbook/estimate"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
)

func init() { Register(solveKind{}) }

// solveKind minimises the discrete energy on a mesh by Newton's method.
type solveKind struct{}

func (solveKind) Name() string { return "solve" }
func (solveKind) Doc() string {
	return "The P1 finite element solution v minimising J(w) = ∫ G(∇w) − f w with w = u_D at the boundary nodes, by Newton's method with multigrid (for a problem with a time horizon: its data at t = 0; use an evolve cell for the evolution)."
}
func (solveKind) Inputs() []Input {
	return []Input{
		{Name: "mesh", Type: Ref, RefKinds: []string{"mesh"}, Doc: "id of the mesh cell to solve on"},
		{Name: "tolerance", Type: Number, Default: 1e-10, Low: Above(0), High: Below(1),
			Doc: "Newton stops when the energy decrement falls below this fraction of the energy scale (any v is allowed in the bounds; a looser tolerance only weakens them)"},
		{Name: "max_newton", Type: Integer, Default: 60, Low: AtLeast(1), High: AtMost(1000),
			Doc: "largest number of Newton steps per mesh level and continuation stage"},
	}
}

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

func (solveKind) Evaluate(c *Context, in Values) (*Results, error) {
	d, ok := c.Object(in.Text("mesh"), "mesh").(*Discretisation)
	if !ok {
		return nil, FieldErr("mesh", "cell %s is not a mesh cell", in.Text("mesh"))
	}
	sol, err := solveOn(c, d.Problem, d.Mesh, in.Number("tolerance"), in.Int("max_newton"))
	if err != nil {
		return nil, err
	}
	return solutionResults(sol), nil
}

// solveOn runs Newton on m for p and wraps the answer; a failed solve
// names the tolerance input so that the user knows what to change.
func solveOn(c *Context, p *problem.Problem, m *mesh.Mesh, tol float64, maxNewton int) (*Solution, error) {
	return solveWith(c, p, m, p.DirichletAt(0), tol, maxNewton)
}

// solveWith is solveOn with other boundary data.
func solveWith(c *Context, p *problem.Problem, m *mesh.Mesh, uD func(x, y float64) float64, tol float64, maxNewton int) (*Solution, error) {
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
		var nc *nonlinear.NotConvergedError
		if errors.As(err, &nc) {
			return nil, FieldErr("max_newton", "%v; allow more steps or a looser tolerance", err)
		}
		return nil, err
	}
	return &Solution{Problem: p, Mesh: m, Space: s, V: r.U, Result: r, Tolerance: tol, MaxNewton: maxNewton}, nil
}

func solutionResults(sol *Solution) *Results {
	r := sol.Result
	res := &Results{
		Scalars: []Scalar{
			// J(v) is computed, not bounded: its only errors are the
			// quadrature of f v and rounding. Bounds of J(u) come from a
			// bound cell.
			{Name: "energy", Value: r.Energy, Label: Estimate, Unit: fmt.Sprintf("J(v), discrete energy; load quadrature of degree %d", r.LoadDegree)},
			{Name: "newton_steps", Value: float64(r.Newton), Label: Reference, Unit: "count over all levels and stages"},
			{Name: "cg_iterations", Value: float64(r.CG), Label: Reference, Unit: "count"},
			{Name: "unknowns", Value: float64(sol.Space.NumFree()), Label: Reference, Unit: "free nodes"},
		},
		Tables:  []Table{historyTable(r.History)},
		Objects: map[string]any{"solution": sol},
	}
	if mf := sol.Problem.Exact(); mf != nil {
		_, u, grad := mf.At(0)
		e := estimate.GradientError(sol.Space, sol.V, grad, sol.Problem.Exponent())
		res.Scalars = append(res.Scalars,
			Scalar{Name: "gradient_error", Value: e, Label: Reference, Unit: fmt.Sprintf("‖∇(u − v)‖ in L^%g against the exact solution, quadrature degree %d", sol.Problem.Exponent(), estimate.ErrorDegree)},
			Scalar{Name: "max_nodal_error", Value: estimate.MaxNodalError(sol.Mesh, sol.V, u), Label: Reference, Unit: "largest |u − v| at the nodes"})
	}
	m := sol.Mesh
	if m.Dim == 1 {
		res.Plots = append(res.Plots, nodalPlot(m, "v", "discrete solution v", sol.V))
	} else if m.NumCells() <= fieldCellLimit {
		res.Fields = append(res.Fields, meshField(m, "v", "discrete solution v (P1)", sol.V, false))
	}
	return res
}

func historyTable(h []nonlinear.Step) Table {
	t := Table{Name: "newton", Title: "Newton history", Columns: []Column{
		{Name: "step"}, {Name: "level"}, {Name: "unknowns"}, {Name: "epsilon", Unit: "continuation"},
		{Name: "energy"}, {Name: "decrement", Unit: "relative"}, {Name: "residual", Unit: "relative"},
		{Name: "step_length"}, {Name: "cg"}}}
	for i, s := range h {
		t.Rows = append(t.Rows, []float64{float64(i + 1), float64(s.Level), float64(s.Unknowns), s.Epsilon,
			s.Energy, s.Decrement, s.Residual, s.StepLength, float64(s.CG)})
	}
	return t
}
