package kinds

import (
	"fmt"

	"gapbook/estimate"
	"gapbook/fem"
	"gapbook/nonlinear"
	"gapbook/notebook"
	"gapbook/problem"
)

func init() { notebook.Register(evolveKind{}) }

// evolveKind integrates the evolution problem in time and accumulates the
// space-time bounds of docs/math.md §7 step by step.
type evolveKind struct{}

// Time forms of the flux offered by the evolve kind.
const (
	timeLinear   = "linear in time"
	timeConstant = "constant in time"
)

func (evolveKind) Name() string { return "evolve" }
func (evolveKind) Doc() string {
	return "The evolution ∂_t u − div ∂G(∇u) = f from u0 up to the problem's time horizon T, by implicit Euler steps, with guaranteed bounds of the space-time error and of the error at every time."
}
func (evolveKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "mesh", Type: notebook.Ref, RefKinds: []string{"mesh"}, Doc: "id of the mesh cell (its problem needs a time horizon T > 0)"},
		{Name: "steps", Type: notebook.Integer, Default: 20, Low: notebook.AtLeast(1), High: notebook.AtMost(100000), Doc: "number of equal implicit Euler steps over (0, T)"},
		{Name: "flux", Type: notebook.Choice, Default: fluxEquilibrated, Choices: []string{fluxEquilibrated, fluxAveraged},
			Doc: "the flux y* at each step: equilibrated (balances f − ∂_t v on every cell; sharp) or averaged (cheap, bounds do not converge)"},
		{Name: "order", Type: notebook.Integer, Default: 1, Low: notebook.AtLeast(0), High: notebook.AtMost(1),
			Doc: "Raviart–Thomas order of the equilibrated flux (1 lets div y* match the linear ∂_t v on each cell)"},
		{Name: "in_time", Type: notebook.Choice, Default: timeLinear, Choices: []string{timeLinear, timeConstant},
			Doc: "how y* varies inside a step: linear between the two ends (two reconstructions per step, sharper) or constant"},
		{Name: "tolerance", Type: notebook.Number, Default: 1e-10, Low: notebook.Above(0), High: notebook.Below(1), Doc: "Newton tolerance of each step"},
		{Name: "max_newton", Type: notebook.Integer, Default: 60, Low: notebook.AtLeast(1), High: notebook.AtMost(1000), Doc: "largest number of Newton steps per time step"},
	}
}

func (evolveKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	d, ok := c.Object(in.Text("mesh"), "mesh").(*Discretisation)
	if !ok {
		return nil, notebook.FieldErr("mesh", "cell %s is not a mesh cell", in.Text("mesh"))
	}
	p := d.Problem
	if !(p.T > 0) {
		return nil, notebook.FieldErr("mesh", "problem %s has no time horizon; set its input T > 0", p.Name)
	}
	if len(p.G.Modulus().Bounds) == 0 {
		return nil, notebook.FieldErr("mesh", "the potential %s of problem %s has no proven modulus, so no guaranteed bound exists; use a catalogue potential", p.G, p.Name)
	}
	m := d.Mesh
	sp, err := fem.NewP1(m)
	if err != nil {
		return nil, notebook.FieldErr("mesh", "%v", err)
	}
	po := estimate.EvolutionOptions{InTime: estimate.LinearInTime,
		Equilibrate: estimate.EquilibrateOptions{Order: in.Int("order")}}
	if in.Text("flux") == fluxAveraged {
		po.Kind = estimate.AveragedFlux
	}
	if in.Text("in_time") == timeConstant {
		po.InTime = estimate.ConstantInTime
	}
	cf, err := friedrichs(c, m, p.Exponent(), constBest)
	if err != nil {
		return nil, err
	}
	po.Friedrichs = cf
	if mf := p.Exact(); mf != nil {
		mg := p.Exact()
		po.Exact = &estimate.ExactSolution{U: mf.U, Grad: mg.Grad, Split: 2, TimePoints: 3}
	}
	// The data with their own scratch space, for the solver and the bounds.
	ev := problem.Evolution(p.G, p.Source(), p.Boundary(), p.Initial(), 0, p.T)
	b, err := estimate.NewEvolution(sp, ev, po)
	if err != nil {
		return nil, notebook.FieldErr("mesh", "%v", err)
	}
	steps := in.Int("steps")
	var table notebook.Table
	table = notebook.Table{Name: "steps", Title: "time steps", Columns: []notebook.Column{{Name: "t"}, {Name: "newton"}, {Name: "cg"}}}
	run, err := nonlinear.Evolve(c.Context(), m, ev, nonlinear.EvolveOptions{Steps: steps,
		Newton: nonlinear.Options{Tol: in.Number("tolerance"), MaxIter: in.Int("max_newton")},
		// The bounds reuse the samples of f the solver's load took.
		Load: b.LoadSamples,
		Progress: func(st nonlinear.EvolveStep) {
			table.Rows = append(table.Rows, []float64{st.T1, float64(st.Newton), float64(st.CG)})
			c.Progress(float64(st.N)/float64(st.Steps), fmt.Sprintf("step %d of %d, t = %.4g", st.N, st.Steps, st.T1))
		}}, b.Step)
	if err != nil {
		if e := c.Err(); e != nil {
			return nil, e
		}
		return nil, notebook.FieldErr("steps", "%v", err)
	}
	r, err := b.Bounds()
	if err != nil {
		return nil, notebook.FieldErr("steps", "%v", err)
	}
	lab := r.Label
	res := &notebook.Results{Scalars: []notebook.Scalar{
		{Name: "bound", Value: r.Split.Value, Label: lab, Unit: "sup_t S(t) ≤ bound, S = ∫ D_G(∇v, ∂G(∇u)) + ∫ D_G(∇u, y*) + ½‖e(t)‖² over (0, t)"},
		{Name: "modulus_bound", Value: r.Modulus.Value, Label: r.Modulus.Label, Unit: "the same with the global Friedrichs constant"},
		{Name: "constant_free", Value: r.ConstantFree.Value, Label: r.ConstantFree.Label, Unit: "S(T) ≤ constant_free (Gronwall form, no modulus, no constant)"},
		{Name: "norm_bound", Value: r.Norm.Value, Label: lab, Unit: fmt.Sprintf("‖∇(u − v)‖ in L^%g over space and time", p.Exponent())},
		{Name: "max_error_bound", Value: r.Final.Value, Label: lab, Unit: "max_t ‖u(t) − v(t)‖ in L²"},
		{Name: "initial_error", Value: r.Initial, Label: notebook.Estimate, Unit: "½‖u0 − v(0)‖², quadrature"},
		{Name: "space_part", Value: r.Space, Label: notebook.Estimate, Unit: "share of the bound that a finer mesh reduces"},
		{Name: "time_part", Value: r.Time, Label: notebook.Estimate, Unit: "share of the bound that shorter steps reduce"},
		{Name: "newton_steps", Value: float64(run.Newton), Label: notebook.Reference, Unit: "count over all time steps"},
	}}
	if e := r.Exact; e != nil {
		res.Scalars = append(res.Scalars,
			notebook.Scalar{Name: "exact_error", Value: e.Sup, Label: notebook.Reference, Unit: "sup_t S(t) from the exact solution"},
			notebook.Scalar{Name: "final_error", Value: e.L2Final, Label: notebook.Reference, Unit: "‖u(T) − v(T)‖ in L² from the exact solution"},
			notebook.Scalar{Name: "efficiency", Value: r.Split.Value / e.Sup, Label: notebook.Reference, Unit: "bound / sup_t S(t) (≥ 1)"})
	}
	pt := notebook.Table{Name: "parts", Title: "bound per time step: space and time parts", Columns: []notebook.Column{{Name: "t"}, {Name: "space"}, {Name: "time"}}}
	for _, sp := range r.Parts {
		pt.Rows = append(pt.Rows, []float64{sp.T1, sp.Space, sp.Time})
	}
	as := notebook.Table{Name: "assumptions", Title: "What the guaranteed numbers rest on", Columns: []notebook.Column{{Name: "item"}}}
	for i, a := range append(append([]string{}, r.Assumptions...), "Friedrichs constant "+cf.Method+" (modulus_bound only)") {
		as.Labels = append(as.Labels, a)
		as.Rows = append(as.Rows, []float64{float64(i + 1)})
	}
	res.Tables = []notebook.Table{table, pt, as}
	if m.Dim == 1 {
		res.Plots = []notebook.Plot{nodalPlot(m, "v", fmt.Sprintf("v at t = %g", p.T), run.V)}
	} else if m.NumCells() <= fieldCellLimit {
		res.Fields = []notebook.Field{
			meshField(m, "v", fmt.Sprintf("v at t = %g", p.T), run.V, false),
			meshField(m, "indicators", "space indicators summed over the steps", r.Cells, true),
		}
	}
	return res, nil
}
