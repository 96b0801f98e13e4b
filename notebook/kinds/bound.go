package kinds

import (
	"fmt"
	"math"
	"strings"

	"gapbook/estimate"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/notebook"
	"gapbook/problem"
)

func init() { notebook.Register(boundKind{}) }

// boundKind reconstructs a flux for a discrete solution and reports the
// guaranteed two-sided bounds of docs/math.md §4.
type boundKind struct{}

// Flux strategies offered by the bound kind.
const (
	fluxEquilibrated = "equilibrated"
	fluxMinimised    = "minimised"
	fluxAveraged     = "averaged"
)

// Friedrichs constant choices of the bound kind.
const (
	constBest  = "best guaranteed"
	constWidth = "width bound"
)

func (boundKind) Intervals() []notebook.IntervalDef {
	return []notebook.IntervalDef{
		{Name: "error", Lower: "minorant", Upper: "majorant", Unit: "μ(v) = J(v) − J(u), the error of v in the problem's own measure"},
		{Name: "energy", Lower: "energy_low", Upper: "energy_high", Unit: "J(u), the energy of the exact solution"},
		{Name: "flow", Lower: "flow_low", Upper: "flow_high", Unit: "Q = ∫u, the flow rate of the exact solution"},
	}
}

func (boundKind) Name() string { return "bound" }
func (boundKind) Doc() string {
	return "Guaranteed bounds of the error of a discrete solution: the error measure μ(v) = J(v) − J(u) from above and below, the flux error, the gradient norm, the energy J(u) and flow rate as intervals, and where the error sits."
}
func (boundKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "solution", Type: notebook.Ref, RefKinds: []string{"solve", "import"}, Doc: "id of the solve or import cell whose field v is bounded"},
		{Name: "problem", Type: notebook.Ref, RefKinds: []string{"problem"}, Optional: true,
			Doc: "id of another problem cell to bound v in (model comparison: how far a Newtonian p = 2 answer is from the solution at another p, on the same domain); empty: the problem v was computed for"},
		{Name: "flux", Type: notebook.Choice, Default: fluxEquilibrated, Choices: []string{fluxEquilibrated, fluxMinimised, fluxAveraged},
			Doc: "the flux y* of the bounds: equilibrated (div y* balances the projected source on every cell; sharp, converging bounds), minimised (the averaged flux plus the continuous piecewise linear field that lowers the majorant most; no global solve, slower to evaluate) or averaged (nodal averages of ∂G(∇v); cheap, but its bounds do not converge)"},
		{Name: "order", Type: notebook.Integer, Default: 1, Low: notebook.AtLeast(0), High: notebook.AtMost(1),
			Doc: "Raviart–Thomas order k of the equilibrated flux: 0 (cell means of f) or 1 (f projected onto linear functions per cell, sharper for smooth f)"},
		{Name: "newton", Type: notebook.Integer, Default: 3, Low: notebook.AtLeast(0), High: notebook.AtMost(50),
			Doc: "Newton steps that bring the equilibrated flux closer to the exact one (sharper bounds, never less valid)"},
		{Name: "constant", Type: notebook.Choice, Default: constBest, Choices: []string{constBest, constWidth},
			Doc: "Friedrichs constant of the residual term: the best guaranteed one (for p = 2 the Crouzeix–Raviart eigenvalue bound when smaller than the width bound) or the width bound alone"},
		{Name: "degree", Type: notebook.Integer, Default: estimate.DefaultDegree, Low: notebook.AtLeast(2), High: notebook.AtMost(8),
			Doc: "exactness degree of the quadrature rule of the gap integrals; the terms with f use the solver's load rule, whose samples of f they share (the guarantee holds up to these quadratures, both listed in the assumptions)"},
		{Name: "minorant", Type: notebook.Bool, Default: true,
			Doc: "solve once more on the uniformly refined mesh: its energy gives the lower bound μ(v) ≥ J(v) − J(w) and the upper end of the energy interval"},
	}
}

// Bounds is the object a bound cell hands on (name "bounds").
type Bounds struct {
	Solution *Solution
	Result   *estimate.Result
	Flux     estimate.Flux
}

func (boundKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	sol, ok := c.Object(in.Text("solution"), "solution").(*Solution)
	if !ok {
		return nil, notebook.FieldErr("solution", "cell %s is not a solve or import cell", in.Text("solution"))
	}
	if id := in.Text("problem"); id != "" {
		other, ok := c.Object(id, "problem").(*problem.Problem)
		if !ok {
			return nil, notebook.FieldErr("problem", "cell %s is not a problem cell", id)
		}
		var err error
		if sol, err = inOtherProblem(sol, other); err != nil {
			return nil, notebook.FieldErr("problem", "%v", err)
		}
	}
	st := boundSettings{flux: in.Text("flux"), order: in.Int("order"), newton: in.Int("newton"),
		constant: in.Text("constant"), degree: in.Int("degree")}
	b, err := computeBound(c, sol, st)
	if err != nil {
		return nil, err
	}
	res := boundResults(b, st)
	if in.Bool("minorant") {
		c.Progress(0.7, "solve on the refined mesh for the minorant")
		if err := addMinorant(c, b, st, res); err != nil {
			return nil, err
		}
	}
	return res, nil
}

// inOtherProblem is v as a candidate for another problem on the same
// domain: the mesh must mesh that problem's domain and v must take its
// boundary values (docs/math.md §9).
func inOtherProblem(sol *Solution, other *problem.Problem) (*Solution, error) {
	if other.Domain.Dim() != sol.Mesh.Dim {
		return nil, fmt.Errorf("problem %s is %d-D, the field %d-D", other.Name, other.Domain.Dim(), sol.Mesh.Dim)
	}
	if err := coversDomain(other.Domain, sol.Mesh); err != nil {
		return nil, fmt.Errorf("the field's mesh does not mesh the domain of problem %s: %v", other.Name, err)
	}
	if worst, at, tol := boundaryMismatch(other, sol.Mesh, sol.V); worst > tol {
		pt := sol.Mesh.Nodes[at]
		return nil, fmt.Errorf("the field differs from problem %s's u_D by %.3g at the boundary node (%g, %g); a guaranteed bound needs v = u_D on the boundary", other.Name, worst, pt.X, pt.Y)
	}
	return &Solution{Problem: other, Mesh: sol.Mesh, Space: sol.Space, V: sol.V, Tolerance: sol.Tolerance, MaxNewton: sol.MaxNewton}, nil
}

// boundSettings are the inputs of a bound (also used by adapt cells).
type boundSettings struct {
	flux          string
	order, newton int
	constant      string
	degree        int
}

// computeBound reconstructs the flux and evaluates the bounds for sol.
func computeBound(c *notebook.Context, sol *Solution, st boundSettings) (*Bounds, error) {
	p := sol.Problem
	s := sol.Space
	if len(p.G.Modulus().Bounds) == 0 {
		// A formula potential has no proven modulus: refuse rather than
		// invent one, and say what would work.
		return nil, notebook.FieldErr("solution", "the potential %s of problem %s has no proven modulus, so no guaranteed bound exists; use a catalogue potential", p.G, p.Name)
	}
	c.Progress(0.1, "Friedrichs constant")
	cf, err := friedrichs(c, sol.Mesh, p.Exponent(), st.constant)
	if err != nil {
		return nil, err
	}
	var y estimate.Flux
	var samples *estimate.Samples
	c.Progress(0.3, "flux reconstruction")
	switch st.flux {
	case fluxAveraged:
		if samples, err = boundSamples(sol, st.degree); err == nil {
			y, err = estimate.NewAveraged(s, p.G, sol.V)
		}
	case fluxMinimised:
		var y0 estimate.Flux
		if y0, err = estimate.NewAveraged(s, p.G, sol.V); err == nil {
			y, err = estimate.Minimise(c.Context(), s, p, sol.V, y0,
				estimate.MinimiseOptions{Friedrichs: cf, Degree: st.degree})
		}
	default:
		// f sampled once serves both the flux's projection of f and the
		// residual terms: the solver's load samples when it kept them.
		if samples, err = boundSamples(sol, st.degree); err == nil {
			y, err = estimate.Equilibrate(c.Context(), s, p.G, sol.V, samples.Source(),
				estimate.EquilibrateOptions{Order: st.order, Newton: st.newton, Degree: samples.Degree})
		}
	}
	if err != nil {
		if e := c.Err(); e != nil {
			return nil, e
		}
		return nil, notebook.FieldErr("flux", "%v", err)
	}
	opt := estimate.Options{Degree: st.degree, Friedrichs: cf, Samples: samples}
	c.Progress(0.5, "bounds")
	r, err := estimate.Estimate(s, p, sol.V, y, opt)
	if err != nil {
		return nil, notebook.FieldErr("solution", "%v", err)
	}
	return &Bounds{Solution: sol, Result: r, Flux: y}, nil
}

// boundSamples returns the samples of f for the flux and the bounds: the
// solver's own (f at its load points, degree 5 by default) when it kept
// them, so that f is not evaluated again, else f at the points of the
// bounds' rule.
func boundSamples(sol *Solution, degree int) (*estimate.Samples, error) {
	p := sol.Problem
	if r := sol.Result; r != nil && r.Load != nil {
		if sm, err := estimate.SamplesOf(sol.Space, p.SourceAt(0), r.LoadDegree, r.Load); err == nil {
			return sm, nil
		}
		// A load rule the bounds cannot use (negative weights): sample f
		// at the bounds' own rule instead.
	}
	if sol.Result == nil {
		// A field from elsewhere: f at the points a solve here would
		// have used, so that the same field has the same bounds.
		degree = nonlinear.DefaultLoadDegree
	}
	return estimate.NewSamples(sol.Space, p.SourceAt(0), degree)
}

func friedrichs(c *notebook.Context, m *mesh.Mesh, alpha float64, which string) (estimate.Constant, error) {
	var cf estimate.Constant
	var err error
	if which == constWidth {
		cf, err = estimate.WidthConstant(m, alpha)
	} else {
		cf, err = estimate.FriedrichsConstant(c.Context(), m, alpha)
	}
	if err != nil {
		if e := c.Err(); e != nil {
			return cf, e
		}
		return cf, notebook.FieldErr("constant", "%v", err)
	}
	return cf, nil
}

// boundResults lists the bounds with their labels, the reference errors
// when the exact solution is known, the assumptions and the indicators.
func boundResults(b *Bounds, st boundSettings) *notebook.Results {
	r := b.Result
	sol := b.Solution
	p := sol.Problem
	lab := r.Label
	res := &notebook.Results{Objects: map[string]any{"bounds": b}}
	add := func(name string, v float64, l notebook.Label, unit string) {
		res.Scalars = append(res.Scalars, notebook.Scalar{Name: name, Value: v, Label: l, Unit: unit})
	}
	add("majorant", r.Majorant.Value, lab, "μ(v) = J(v) − J(u) ≤ majorant")
	add("dual_majorant", r.Dual.Value, lab, "μ*(y*) = ∫ D_G(∇u, y*) ≤ dual_majorant")
	add("norm_bound", r.Norm.Value, lab, fmt.Sprintf("‖∇(u − v)‖ in L^%g ≤ norm_bound", p.Exponent()))
	add("energy_low", estimate.EnergyInterval(r, 0).Lo, lab, "J(u) ≥ J(v) − majorant (less the rounding of J(v))")
	add("discrete_energy", r.Energy, notebook.Estimate, fmt.Sprintf("J(v): ∫ G(∇v) exactly, ∫ f v by a rule of degree %d", r.Quadrature.ResidualDegree))
	add("gap_integral", r.D, notebook.Estimate, "∫ D_G(∇v, y*), quadrature")
	add("residual_term", r.R.Value, lab, fmt.Sprintf("R in ∫ r(u − v) ≤ R ‖∇(u − v)‖, %s form", r.Form))
	// θ is a parameter of the inequality, not a bound of anything.
	add("theta", r.Theta, notebook.Estimate, "θ at which the Young form (1 − θ)μ + μ* ≤ young_rhs equals the majorant")
	if !math.IsNaN(r.YoungRHS) {
		add("young_rhs", r.YoungRHS, lab, "right side of the Young form at that θ")
	}
	if mf := p.Exact(); mf != nil {
		_, _, grad := mf.At(0)
		mu, _ := estimate.PrimalError(sol.Space, p.G, sol.V, grad)
		dual := estimate.DualError(sol.Space, p.G, b.Flux, grad, st.degree)
		note := ""
		if interpolatedData(r.Assumptions) {
			note = "; the bounds concern the interpolated boundary data, this u does not, so efficiency may fall below 1"
		}
		add("primal_error", mu, notebook.Reference, fmt.Sprintf("μ(v) = ∫ D_G(∇v, ∂G(∇u)) from the exact solution, quadrature degree %d%s", estimate.ErrorDegree, note))
		add("dual_error", dual, notebook.Reference, "μ*(y*) = ∫ D_G(∇u, y*) from the exact solution")
		add("efficiency", r.Majorant.Value/mu, notebook.Reference, "majorant / μ(v) (≥ 1)")
		add("total_efficiency", (r.Majorant.Value+r.Dual.Value)/(mu+dual), notebook.Reference, "(majorant + dual_majorant) / (μ(v) + μ*(y*))")
	}
	assum := append([]string{}, r.Assumptions...)
	switch st.flux {
	case fluxEquilibrated:
		assum = append(assum, fmt.Sprintf("equilibrated Raviart–Thomas flux of order %d, %d Newton steps", st.order, st.newton))
	case fluxMinimised:
		assum = append(assum, "averaged flux plus a minimising piecewise linear correction")
	default:
		assum = append(assum, "averaged flux")
	}
	t := notebook.Table{Name: "assumptions", Title: "What the guaranteed numbers rest on", Columns: []notebook.Column{{Name: "item"}}}
	for i, a := range assum {
		t.Labels = append(t.Labels, a)
		t.Rows = append(t.Rows, []float64{float64(i + 1)})
	}
	res.Tables = append(res.Tables, t)
	m := sol.Mesh
	if m.Dim == 2 && m.NumCells() <= fieldCellLimit {
		res.Fields = append(res.Fields, meshField(m, "indicators", "local indicators η_T (they sum to the majorant)", r.Indicators, true))
	} else if m.Dim == 1 {
		xs := make([]float64, m.NumCells())
		for k, cl := range m.Cells {
			xs[k] = (m.Nodes[cl[0]].X + m.Nodes[cl[1]].X) / 2
		}
		res.Plots = append(res.Plots, notebook.Plot{Name: "indicators", Title: "local indicators η_T at cell midpoints", XLabel: "x", YLabel: "η_T", LogY: true,
			Series: []notebook.Series{{Name: "η_T", X: xs, Y: r.Indicators}}})
	}
	return res
}

// addMinorant solves on the uniform refinement of the mesh and adds the
// minorant, the upper end of the energy interval and, where it applies,
// the flow-rate interval.
func addMinorant(c *notebook.Context, b *Bounds, st boundSettings, res *notebook.Results) error {
	sol := b.Solution
	p := sol.Problem
	r := b.Result
	fine, err := sol.Mesh.Refine()
	if err != nil {
		return notebook.FieldErr("minorant", "refined mesh: %v; switch the minorant off", err)
	}
	w, err := solveWith(c, p, fine, coarseData(sol, fine), sol.Tolerance, sol.MaxNewton)
	if err != nil {
		if fe, ok := err.(*notebook.FieldError); ok {
			return notebook.FieldErr("minorant", "solve on the refined mesh: %s", fe.Msg)
		}
		return notebook.FieldErr("minorant", "solve on the refined mesh: %v", err)
	}
	jw, rw := estimate.EnergyRounded(w.Space, p.G, p.SourceAt(0), w.V, r.Degree)
	mu := estimate.Minorant(r.Energy, r.EnergyRound, jw, rw)
	lab := r.Label
	e := estimate.EnergyInterval(r, mu)
	res.Scalars = append(res.Scalars,
		notebook.Scalar{Name: "minorant", Value: mu, Label: lab, Unit: "μ(v) ≥ J(v) − J(w), w on the refined mesh"},
		notebook.Scalar{Name: "energy_high", Value: e.Hi, Label: lab, Unit: "J(u) ≤ J(w)"})
	if p.Family == problem.Power && p.ZeroDirichlet() && !math.IsNaN(p.FConst) && p.FConst != 0 {
		q, err := estimate.FlowRate(e, p.Exponent(), p.FConst)
		if err == nil {
			res.Scalars = append(res.Scalars,
				notebook.Scalar{Name: "flow_low", Value: q.Lo, Label: lab, Unit: "Q = ∫u ≥ flow_low (power potential, u_D = 0, constant f)"},
				notebook.Scalar{Name: "flow_high", Value: q.Hi, Label: lab, Unit: "Q = ∫u ≤ flow_high"})
		}
	}
	return nil
}

// interpolatedData reports whether the bounds were computed for the
// problem with interpolated boundary data.
func interpolatedData(assumptions []string) bool {
	for _, a := range assumptions {
		if strings.Contains(a, "interpolated") {
			return true
		}
	}
	return false
}

// coarseData returns the boundary data of v (the interpolant of u_D on
// the coarse mesh) at the nodes of its uniform refinement fine, so that
// the refined solution w solves the same problem as v and J(v) − J(w)
// bounds μ(v) from below even when u_D is not linear on the boundary
// edges.
func coarseData(sol *Solution, fine *mesh.Mesh) func(x, y float64) float64 {
	vals := make(map[mesh.Point]float64, len(fine.Nodes))
	for i, q := range fine.Nodes {
		if fine.Boundary[i] {
			pp := fine.Parents[i]
			vals[q] = (sol.V[pp[0]] + sol.V[pp[1]]) / 2
		}
	}
	uD := sol.Problem.DirichletAt(0)
	return func(x, y float64) float64 {
		if v, ok := vals[mesh.Point{X: x, Y: y}]; ok {
			return v
		}
		if uD == nil {
			return 0
		}
		return uD(x, y)
	}
}
