package notebook

import (
	"errors"
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
)

func init() { Register(solveKind{}) }

// solveKind minimises the discrete energy on a mesh by Newton's method.
type solveKind struct{}

// errorDegree is the exactness degree of the quadrature of errors against
// an exact solution: far above the O(h) accuracy of P1 gradients, so the
// quadrature error does not show in the reported digits on usual meshes.
const errorDegree = 8

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
	Problem *ProblemSpec
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
func solveOn(c *Context, p *ProblemSpec, m *mesh.Mesh, tol float64, maxNewton int) (*Solution, error) {
	return solveWith(c, p, m, p.Dirichlet(), tol, maxNewton)
}

// solveWith is solveOn with other boundary data.
func solveWith(c *Context, p *ProblemSpec, m *mesh.Mesh, uD func(x, y float64) float64, tol float64, maxNewton int) (*Solution, error) {
	s, err := fem.NewP1(m)
	if err != nil {
		return nil, err
	}
	prog := 0
	r, err := nonlinear.Solve(c.Context(), m, nonlinear.Problem{G: p.G, F: p.Source(), Dirichlet: uD},
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
	if mf := sol.Problem.Manufactured(); mf != nil {
		_, u, grad := mf.Steady(0)
		e := gradientError(sol.Space, sol.V, grad, sol.Problem.Alpha)
		res.Scalars = append(res.Scalars,
			Scalar{Name: "gradient_error", Value: e, Label: Reference, Unit: fmt.Sprintf("‖∇(u − v)‖ in L^%g against the exact solution, quadrature degree %d", sol.Problem.Alpha, errorDegree)},
			Scalar{Name: "max_nodal_error", Value: maxNodalError(sol.Mesh, sol.V, u), Label: Reference, Unit: "largest |u − v| at the nodes"})
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

// cellIntegral returns Σ_T ∫_T φ(k, x, y) by the rule of the given degree
// on every cell; the reference weights are rescaled to the cell measure.
func cellIntegral(s *fem.P1, degree int, phi func(k int, x, y float64) float64) []float64 {
	r := s.Rule(degree)
	nq := r.Len()
	pts := make([]mesh.Point, s.Mesh.NumCells()*nq)
	s.QuadPoints(r, pts)
	wsum := 0.0
	for _, w := range r.Weights {
		wsum += w
	}
	out := make([]float64, s.Mesh.NumCells())
	for k := range out {
		acc := 0.0
		for q := range nq {
			p := pts[k*nq+q]
			acc += r.Weights[q] * phi(k, p.X, p.Y)
		}
		out[k] = acc / wsum * s.Area[k]
	}
	return out
}

func sum(v []float64) float64 {
	t := 0.0
	for _, x := range v {
		t += x
	}
	return t
}

// gradientError returns ‖∇(u − v)‖_α by quadrature of degree errorDegree.
func gradientError(s *fem.P1, v []float64, grad func(x, y float64) (float64, float64), alpha float64) float64 {
	gv := make([][2]float64, s.Mesh.NumCells())
	s.Gradient(v, gv)
	per := cellIntegral(s, errorDegree, func(k int, x, y float64) float64 {
		gx, gy := grad(x, y)
		return math.Pow(math.Hypot(gx-gv[k][0], gy-gv[k][1]), alpha)
	})
	return math.Pow(sum(per), 1/alpha)
}

// primalError returns μ(v) = ∫ D_G(∇v, ∂G(∇u)) = J(v) − J(u) by
// quadrature of degree errorDegree, per cell.
func primalError(s *fem.P1, G convex.Potential, v []float64, grad func(x, y float64) (float64, float64)) []float64 {
	gv := make([][2]float64, s.Mesh.NumCells())
	s.Gradient(v, gv)
	return cellIntegral(s, errorDegree, func(k int, x, y float64) float64 {
		gx, gy := grad(x, y)
		return convex.Gap(G, gv[k], convex.Flux(G, [2]float64{gx, gy}))
	})
}

func maxNodalError(m *mesh.Mesh, v []float64, u func(x, y float64) float64) float64 {
	e := 0.0
	for i, q := range m.Nodes {
		e = math.Max(e, math.Abs(u(q.X, q.Y)-v[i]))
	}
	return e
}
