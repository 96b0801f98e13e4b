package kinds

import (
	"errors"

	"gapbook/notebook"
	"gapbook/problem"
)

func init() { notebook.Register(problemKind{}) }

// problemKind states a nonlinear diffusion problem: domain, potential,
// data and an optional exact solution. It computes nothing heavy; it
// checks everything and hands a *problem.Problem to mesh cells.
type problemKind struct{}

func (problemKind) Name() string { return "problem" }
func (problemKind) Doc() string {
	return "A nonlinear diffusion problem −div ∂G(∇u) = f with u = u_D on the boundary: domain, potential G(ξ) = g(|ξ|), source, boundary data and, if known, the exact solution."
}

func formulaCheck(v any) error {
	s, _ := v.(string)
	return problem.CheckFormula(s)
}

func (problemKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "domain", Type: notebook.Choice, Default: problem.LShape,
			Choices: problem.Shapes,
			Doc:     "the domain Ω: an interval x_min..x_max (1-D), the rectangle x_min..x_max × y_min..y_max, the L-shape (−1,1)² without [0,1)×(−1,0], the regular polygon with the given number of sides inscribed in the circle of the given radius about the origin, or a polygon through the listed vertices"},
		{Name: "x_min", Type: notebook.Number, Default: 0.0, Doc: "left end of the interval or rectangle"},
		{Name: "x_max", Type: notebook.Number, Default: 1.0, Doc: "right end of the interval or rectangle (> x_min)"},
		{Name: "y_min", Type: notebook.Number, Default: 0.0, Doc: "bottom of the rectangle"},
		{Name: "y_max", Type: notebook.Number, Default: 1.0, Doc: "top of the rectangle (> y_min)"},
		{Name: "radius", Type: notebook.Number, Default: 1.0, Low: notebook.Above(0), Doc: "circumradius of the disk polygon"},
		{Name: "sides", Type: notebook.Integer, Default: 32, Low: notebook.AtLeast(3), High: notebook.AtMost(4096), Doc: "number of sides of the disk polygon (the domain is this polygon exactly, not the disk)"},
		{Name: "vertices", Type: notebook.Numbers, Default: []float64{0, 0, 2, 0, 2, 1, 0, 1},
			Doc: "vertices of the polygon as x1, y1, x2, y2, …, in order around the boundary, the first not repeated"},
		{Name: "potential", Type: notebook.Choice, Default: problem.Power,
			Choices: problem.Families,
			Doc:     "the potential g: power t^p/p (the p-Laplacian), quadratic κt²/2, regularised power ((ε²+t²)^{p/2} − ε^p)/p, power sum a t²/2 + b t^p/p (p > 2), or a formula g(t) of your own"},
		{Name: "p", Type: notebook.Number, Default: 3.0, Low: notebook.Above(1), High: notebook.AtMost(100), Doc: "growth exponent p > 1 of the potential (the p of the p-Laplacian); p < 2 shear-thinning, p > 2 shear-thickening"},
		{Name: "kappa", Type: notebook.Number, Default: 1.0, Low: notebook.Above(0), Doc: "conductivity κ of the quadratic potential"},
		{Name: "epsilon", Type: notebook.Number, Default: 0.01, Low: notebook.AtLeast(0), Doc: "regularisation ε ≥ 0 of the regularised power"},
		{Name: "a", Type: notebook.Number, Default: 1.0, Low: notebook.Above(0), Doc: "coefficient a of the quadratic part of the power sum"},
		{Name: "b", Type: notebook.Number, Default: 1.0, Low: notebook.Above(0), Doc: "coefficient b of the power part of the power sum"},
		{Name: "g", Type: notebook.Text, Default: "", MaxLen: 2000, Check: formulaCheck,
			Doc: "g(t) in the variable t for the formula potential: convex, increasing, g(0) = g'(0) = 0, growth p (for example t^3/3 + t^2/2)"},
		{Name: "f", Type: notebook.Text, Default: "1", MaxLen: 4000, Check: formulaCheck,
			Doc: "source f in x, y (and t with a time horizon); leave empty to derive it from the exact solution by automatic differentiation"},
		{Name: "u_D", Type: notebook.Text, Default: "", MaxLen: 4000, Check: formulaCheck,
			Doc: "Dirichlet data on the boundary, in x, y; empty means the exact solution if given, otherwise 0"},
		{Name: "exact", Type: notebook.Text, Default: "", MaxLen: 4000, Check: formulaCheck,
			Doc: "exact solution u in x, y if known (errors and efficiency indices are then shown)"},
		{Name: "T", Type: notebook.Number, Default: 0.0, Low: notebook.AtLeast(0), Doc: "time horizon for evolution studies; 0 for a steady problem"},
		{Name: "u0", Type: notebook.Text, Default: "", MaxLen: 4000, Check: formulaCheck,
			Doc: "initial value u(x, y, 0) for evolution studies; empty means the exact solution at t = 0 if given, otherwise 0"},
	}
}

func (problemKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	p, err := buildProblem(in)
	if err != nil {
		return nil, err
	}
	p.Name = c.Cell()
	coarse, err := p.Domain.Mesh(1, 0)
	if err != nil {
		// A polygon that cannot be meshed is the fault of its vertices
		// (the message names the crossing edges).
		field := "domain"
		if p.Domain.Shape == problem.Polygon {
			field = "vertices"
		}
		return nil, notebook.FieldErr(field, "%v", err)
	}
	res := &notebook.Results{
		Scalars: []notebook.Scalar{
			// Inputs echoed and exact geometry are not computed
			// approximations: they carry the label of outside values.
			{Name: "p", Value: p.Exponent(), Label: notebook.Reference, Unit: "growth exponent (input)"},
			{Name: "measure", Value: coarse.Measure(), Label: notebook.Reference, Unit: "length or area of Ω, exact geometry"},
			{Name: "width", Value: coarse.MinWidth(), Label: notebook.Reference, Unit: "width of Ω (narrowest strip), exact geometry"},
		},
		Tables:  []notebook.Table{{Name: "problem", Title: p.Summary, Columns: []notebook.Column{{Name: "dimension"}, {Name: "p"}, {Name: "exact solution known"}, {Name: "T"}}, Rows: [][]float64{{float64(p.Domain.Dim()), p.Exponent(), b2f(p.HasExact()), p.T}}}},
		Objects: map[string]any{"problem": p},
	}
	return res, nil
}

func b2f(b bool) float64 {
	if b {
		return 1
	}
	return 0
}

// buildProblem hands the inputs of a problem cell to problem.New and
// blames the input it names.
func buildProblem(in notebook.Values) (*problem.Problem, error) {
	p, err := problem.New(problem.Spec{
		Domain: problem.DomainSpec{Shape: in.Text("domain"),
			X0: in.Number("x_min"), X1: in.Number("x_max"), Y0: in.Number("y_min"), Y1: in.Number("y_max"),
			Radius: in.Number("radius"), Sides: in.Int("sides"), Coords: in.Numbers("vertices")},
		Family: in.Text("potential"),
		P:      in.Number("p"), Kappa: in.Number("kappa"), Epsilon: in.Number("epsilon"), A: in.Number("a"), B: in.Number("b"),
		G: in.Text("g"), F: in.Text("f"), UD: in.Text("u_D"), Exact: in.Text("exact"), U0: in.Text("u0"),
		T: in.Number("T"),
	})
	var ie *problem.InputError
	if errors.As(err, &ie) {
		return nil, notebook.FieldErr(ie.Field, "%s", ie.Msg)
	}
	return p, err
}
