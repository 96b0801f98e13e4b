package notebook

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"gapbook/convex"
	"gapbook/expr"
	"gapbook/mesh"
	"gapbook/nonlinear"
)

func init() { Register(problemKind{}) }

// problemKind states a nonlinear diffusion problem: domain, potential,
// data and an optional exact solution. It computes nothing heavy; it
// checks everything and hands a *ProblemSpec to mesh cells.
type problemKind struct{}

// Domain names offered by the problem kind.
const (
	domInterval  = "interval"
	domRectangle = "rectangle"
	domLShape    = "L-shape"
	domDisk      = "disk polygon"
	domPolygon   = "polygon"
)

// Potential family names offered by the problem kind.
const (
	potPower    = "power"
	potQuad     = "quadratic"
	potRegPower = "regularised power"
	potPowerSum = "power sum"
	potFormula  = "formula"
)

func (problemKind) Name() string { return "problem" }
func (problemKind) Doc() string {
	return "A nonlinear diffusion problem −div ∂G(∇u) = f with u = u_D on the boundary: domain, potential G(ξ) = g(|ξ|), source, boundary data and, if known, the exact solution."
}

// formulaCheck parses a formula at load time in the widest set of
// variables, so that syntax errors show before anything runs; Evaluate
// checks the exact variables again.
func formulaCheck(v any) error {
	s, _ := v.(string)
	if strings.TrimSpace(s) == "" {
		return nil
	}
	if _, err := expr.Parse(s, "x", "y", "t"); err != nil {
		return errors.New(formulaMsg(err))
	}
	return nil
}

// formulaMsg rewrites an expr error as "unknown name "sn" at column 5;
// allowed variables: x, y" so that the column follows the problem.
func formulaMsg(err error) string {
	var e *expr.Error
	if !errors.As(err, &e) {
		return err.Error()
	}
	if e.Col <= 0 {
		return e.Msg
	}
	head, tail, found := strings.Cut(e.Msg, "; ")
	s := fmt.Sprintf("%s at column %d", head, e.Col)
	if found {
		s += "; " + tail
	}
	return s
}

func (problemKind) Inputs() []Input {
	return []Input{
		{Name: "domain", Type: Choice, Default: domLShape,
			Choices: []string{domInterval, domRectangle, domLShape, domDisk, domPolygon},
			Doc:     "the domain Ω: an interval x_min..x_max (1-D), the rectangle x_min..x_max × y_min..y_max, the L-shape (−1,1)² without [0,1)×(−1,0], the regular polygon with the given number of sides inscribed in the circle of the given radius about the origin, or a polygon through the listed vertices"},
		{Name: "x_min", Type: Number, Default: 0.0, Doc: "left end of the interval or rectangle"},
		{Name: "x_max", Type: Number, Default: 1.0, Doc: "right end of the interval or rectangle (> x_min)"},
		{Name: "y_min", Type: Number, Default: 0.0, Doc: "bottom of the rectangle"},
		{Name: "y_max", Type: Number, Default: 1.0, Doc: "top of the rectangle (> y_min)"},
		{Name: "radius", Type: Number, Default: 1.0, Low: Above(0), Doc: "circumradius of the disk polygon"},
		{Name: "sides", Type: Integer, Default: 32, Low: AtLeast(3), High: AtMost(4096), Doc: "number of sides of the disk polygon (the domain is this polygon exactly, not the disk)"},
		{Name: "vertices", Type: Numbers, Default: []float64{0, 0, 2, 0, 2, 1, 0, 1},
			Doc: "vertices of the polygon as x1, y1, x2, y2, …, in order around the boundary, the first not repeated"},
		{Name: "potential", Type: Choice, Default: potPower,
			Choices: []string{potPower, potQuad, potRegPower, potPowerSum, potFormula},
			Doc:     "the potential g: power t^α/α (the α-Laplacian, p = α), quadratic κt²/2, regularised power ((ε²+t²)^{α/2} − ε^α)/α, power sum a t²/2 + b t^α/α (α > 2), or a formula g(t) of your own"},
		{Name: "alpha", Type: Number, Default: 3.0, Low: Above(1), High: AtMost(100), Doc: "growth exponent α > 1 (the p of the p-Laplacian); α < 2 shear-thinning, α > 2 shear-thickening"},
		{Name: "kappa", Type: Number, Default: 1.0, Low: Above(0), Doc: "conductivity κ of the quadratic potential"},
		{Name: "epsilon", Type: Number, Default: 0.01, Low: AtLeast(0), Doc: "regularisation ε ≥ 0 of the regularised power"},
		{Name: "a", Type: Number, Default: 1.0, Low: Above(0), Doc: "coefficient a of the quadratic part of the power sum"},
		{Name: "b", Type: Number, Default: 1.0, Low: Above(0), Doc: "coefficient b of the power part of the power sum"},
		{Name: "g", Type: Text, Default: "", MaxLen: 2000, Check: formulaCheck,
			Doc: "g(t) in the variable t for the formula potential: convex, increasing, g(0) = g'(0) = 0, growth α (for example t^3/3 + t^2/2)"},
		{Name: "f", Type: Text, Default: "1", MaxLen: 4000, Check: formulaCheck,
			Doc: "source f in x, y (and t with a time horizon); leave empty to derive it from the exact solution by automatic differentiation"},
		{Name: "u_D", Type: Text, Default: "", MaxLen: 4000, Check: formulaCheck,
			Doc: "Dirichlet data on the boundary, in x, y; empty means the exact solution if given, otherwise 0"},
		{Name: "exact", Type: Text, Default: "", MaxLen: 4000, Check: formulaCheck,
			Doc: "exact solution u in x, y if known (errors and efficiency indices are then shown)"},
		{Name: "T", Type: Number, Default: 0.0, Low: AtLeast(0), Doc: "time horizon for evolution studies; 0 for a steady problem"},
		{Name: "u0", Type: Text, Default: "", MaxLen: 4000, Check: formulaCheck,
			Doc: "initial value u(x, y, 0) for evolution studies; empty means the exact solution at t = 0 if given, otherwise 0"},
	}
}

// ProblemSpec is the object a problem cell hands on (name "problem"): a
// checked problem with its potential and compiled formulas.
type ProblemSpec struct {
	Cell   string
	Dim    int
	Domain string
	// Family is the potential family (one of the potential choices).
	Family  string
	Summary string
	G       convex.Potential
	// Alpha is the growth exponent of G.
	Alpha float64
	T     float64

	x0, x1, y0, y1 float64
	radius         float64
	sides          int
	vertices       []mesh.Point

	f, uD, exact, u0 *expr.Formula // in x, y, t; nil when absent
	derived          bool          // f comes from the exact solution
	// FConst is the source value when f is a constant, else NaN.
	FConst float64
}

// HasExact reports whether an exact solution is known.
func (p *ProblemSpec) HasExact() bool { return p.exact != nil }

// Derived reports whether f is derived from the exact solution.
func (p *ProblemSpec) Derived() bool { return p.derived }

func eval2(f *expr.Formula, t float64) func(x, y float64) float64 {
	if f == nil {
		return nil
	}
	f = f.Clone()
	var q [3]float64
	return func(x, y float64) float64 {
		q = [3]float64{x, y, t}
		return f.Eval(q[:])
	}
}

// Manufactured returns the exact solution with its derived source, or nil.
func (p *ProblemSpec) Manufactured() *nonlinear.Manufactured {
	if p.exact == nil {
		return nil
	}
	m, err := nonlinear.Manufacture(p.exact.Source(), p.G)
	if err != nil {
		return nil
	}
	return m
}

// Source returns f(x, y) at t = 0; each call gives a function with its
// own scratch space.
func (p *ProblemSpec) Source() func(x, y float64) float64 {
	if p.derived {
		f, _, _ := p.Manufactured().Steady(0)
		return f
	}
	return eval2(p.f, 0)
}

func eval3(f *expr.Formula) func(x, y, t float64) float64 {
	if f == nil {
		return nil
	}
	f = f.Clone()
	var q [3]float64
	return func(x, y, t float64) float64 {
		q = [3]float64{x, y, t}
		return f.Eval(q[:])
	}
}

// Source3 returns f(x, y, t) for evolution; each call gives a function
// with its own scratch space.
func (p *ProblemSpec) Source3() func(x, y, t float64) float64 {
	if p.derived {
		return p.Manufactured().Source
	}
	return eval3(p.f)
}

// Dirichlet3 returns u_D(x, y, t) (nil for zero data).
func (p *ProblemSpec) Dirichlet3() func(x, y, t float64) float64 {
	if p.uD != nil {
		return eval3(p.uD)
	}
	if p.exact != nil {
		return p.Manufactured().U
	}
	return nil
}

// Initial returns u0(x, y): the u0 formula, else the exact solution at
// t = 0, else nil (zero).
func (p *ProblemSpec) Initial() func(x, y float64) float64 {
	if p.u0 != nil {
		return eval2(p.u0, 0)
	}
	return eval2(p.exact, 0)
}

// Dirichlet returns u_D(x, y) (nil for zero data).
func (p *ProblemSpec) Dirichlet() func(x, y float64) float64 {
	if p.uD != nil {
		return eval2(p.uD, 0)
	}
	return eval2(p.exact, 0)
}

// ZeroDirichlet reports whether the boundary data vanish identically.
func (p *ProblemSpec) ZeroDirichlet() bool { return p.uD == nil && p.exact == nil }

// Mesh builds the mesh of the domain with about n cells across (n per
// unit length for the L-shape), or with cells of diameter at most h when
// h > 0.
func (p *ProblemSpec) Mesh(n int, h float64) (*mesh.Mesh, error) {
	ceil := func(v float64) int {
		if v > 1e8 {
			return 1e8
		}
		return max(1, int(math.Ceil(v-1e-9)))
	}
	switch p.Domain {
	case domInterval:
		if h > 0 {
			n = ceil((p.x1 - p.x0) / h)
		}
		return mesh.Interval(p.x0, p.x1, n)
	case domRectangle:
		w, ht := p.x1-p.x0, p.y1-p.y0
		s := math.Min(w, ht)
		if h > 0 {
			n = ceil(math.Sqrt2 * s / h)
		}
		return mesh.Rectangle(p.x0, p.x1, p.y0, p.y1, ceil(float64(n)*w/s), ceil(float64(n)*ht/s))
	case domLShape:
		if h > 0 {
			n = ceil(math.Sqrt2 / h)
		}
		return mesh.LShape(n)
	case domDisk:
		if h <= 0 {
			h = 2 * p.radius / float64(n)
		}
		return mesh.Disk(p.radius, p.sides, h)
	default:
		if h <= 0 {
			lo, hi := boundingBox(p.vertices)
			h = math.Hypot(hi.X-lo.X, hi.Y-lo.Y) / float64(n)
		}
		return mesh.Polygon(p.vertices, h)
	}
}

func boundingBox(v []mesh.Point) (lo, hi mesh.Point) {
	lo, hi = v[0], v[0]
	for _, q := range v {
		lo.X, lo.Y = math.Min(lo.X, q.X), math.Min(lo.Y, q.Y)
		hi.X, hi.Y = math.Max(hi.X, q.X), math.Max(hi.Y, q.Y)
	}
	return lo, hi
}

// parseField parses the formula of input name in vars and blames the
// input on failure.
func parseField(name, src string, vars []string) (*expr.Formula, error) {
	if _, err := expr.Parse(src, vars...); err != nil {
		return nil, FieldErr(name, "%s", formulaMsg(err))
	}
	return expr.Parse(src, "x", "y", "t")
}

func (problemKind) Evaluate(c *Context, in Values) (*Results, error) {
	p, err := buildProblem(c.Cell(), in)
	if err != nil {
		return nil, err
	}
	coarse, err := p.Mesh(1, 0)
	if err != nil {
		return nil, FieldErr("domain", "%v", err)
	}
	res := &Results{
		Scalars: []Scalar{
			// Inputs echoed and exact geometry are not computed
			// approximations: they carry the label of outside values.
			{Name: "alpha", Value: p.Alpha, Label: Reference, Unit: "growth exponent (input)"},
			{Name: "measure", Value: coarse.Measure(), Label: Reference, Unit: "length or area of Ω, exact geometry"},
			{Name: "width", Value: coarse.MinWidth(), Label: Reference, Unit: "width of Ω (narrowest strip), exact geometry"},
		},
		Tables:  []Table{{Name: "problem", Title: p.Summary, Columns: []Column{{Name: "dimension"}, {Name: "alpha"}, {Name: "exact solution known"}, {Name: "T"}}, Rows: [][]float64{{float64(p.Dim), p.Alpha, b2f(p.exact != nil), p.T}}}},
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

// buildProblem checks the inputs of a problem cell and compiles them.
func buildProblem(id string, in Values) (*ProblemSpec, error) {
	p := &ProblemSpec{Cell: id, Domain: in.Text("domain"), Dim: 2, T: in.Number("T"), FConst: math.NaN()}
	p.x0, p.x1, p.y0, p.y1 = in.Number("x_min"), in.Number("x_max"), in.Number("y_min"), in.Number("y_max")
	p.radius, p.sides = in.Number("radius"), in.Int("sides")
	var where string
	switch p.Domain {
	case domInterval:
		p.Dim = 1
		if !(p.x0 < p.x1) {
			return nil, FieldErr("x_max", "want x_max > x_min = %g, got %g", p.x0, p.x1)
		}
		where = fmt.Sprintf("the interval (%g, %g)", p.x0, p.x1)
	case domRectangle:
		if !(p.x0 < p.x1) {
			return nil, FieldErr("x_max", "want x_max > x_min = %g, got %g", p.x0, p.x1)
		}
		if !(p.y0 < p.y1) {
			return nil, FieldErr("y_max", "want y_max > y_min = %g, got %g", p.y0, p.y1)
		}
		where = fmt.Sprintf("the rectangle (%g, %g) × (%g, %g)", p.x0, p.x1, p.y0, p.y1)
	case domLShape:
		where = "the L-shape (−1,1)² \\ [0,1)×(−1,0]"
	case domDisk:
		where = fmt.Sprintf("the regular %d-gon of circumradius %g", p.sides, p.radius)
	case domPolygon:
		v := in.Numbers("vertices")
		if len(v)%2 != 0 || len(v) < 6 {
			return nil, FieldErr("vertices", "want x1, y1, x2, y2, … for at least 3 vertices (an even count of numbers ≥ 6), got %d numbers", len(v))
		}
		for i := 0; i < len(v); i += 2 {
			p.vertices = append(p.vertices, mesh.Point{X: v[i], Y: v[i+1]})
		}
		where = fmt.Sprintf("a polygon with %d vertices", len(p.vertices))
	}
	alpha := in.Number("alpha")
	var err error
	field := "alpha"
	p.Family = in.Text("potential")
	switch p.Family {
	case potPower:
		p.G, err = convex.Power(alpha)
	case potQuad:
		field = "kappa"
		p.G, err = convex.Quadratic(in.Number("kappa"))
		alpha = 2
	case potRegPower:
		p.G, err = convex.RegPower(alpha, in.Number("epsilon"))
	case potPowerSum:
		if alpha <= 2 {
			return nil, FieldErr("alpha", "want α > 2 for the power sum (a t²/2 is its quadratic part), got %g", alpha)
		}
		p.G, err = convex.PowerSum(in.Number("a"), in.Number("b"), alpha)
	case potFormula:
		field = "g"
		src := in.Text("g")
		if strings.TrimSpace(src) == "" {
			return nil, FieldErr("g", "empty; the formula potential needs g(t), for example t^3/3")
		}
		gf, perr := expr.Parse(src, "t")
		if perr != nil {
			return nil, FieldErr("g", "%s", formulaMsg(perr))
		}
		p.G, err = convex.Custom("g(t) = "+src, func(t float64) (float64, float64, float64) { return gf.Scalar(t) }, alpha)
	}
	if err != nil {
		return nil, FieldErr(field, "%v", err)
	}
	p.Alpha = p.G.Growth()

	vars := []string{"x", "y"}
	if p.Dim == 1 {
		vars = []string{"x"}
	}
	if p.T > 0 {
		vars = append(vars, "t")
	}
	for _, fl := range []struct {
		name string
		dst  **expr.Formula
	}{{"exact", &p.exact}, {"f", &p.f}, {"u_D", &p.uD}, {"u0", &p.u0}} {
		src := strings.TrimSpace(in.Text(fl.name))
		if src == "" {
			continue
		}
		f, err := parseField(fl.name, src, vars)
		if err != nil {
			return nil, err
		}
		*fl.dst = f
	}
	if p.f == nil {
		if p.exact == nil {
			return nil, FieldErr("f", "empty; give a source f, or an exact solution to derive it from")
		}
		p.derived = true
	} else if !p.f.Uses("x") && !p.f.Uses("y") && !p.f.Uses("t") {
		p.FConst = p.f.Eval([]float64{0, 0, 0})
		if math.IsNaN(p.FConst) || math.IsInf(p.FConst, 0) {
			return nil, FieldErr("f", "the constant %s is not a finite number", p.f.Source())
		}
	}
	if p.exact != nil {
		if _, err := nonlinear.Manufacture(p.exact.Source(), p.G); err != nil {
			return nil, FieldErr("exact", "%v", err)
		}
	}
	fdesc := "f derived from the exact solution"
	if !p.derived {
		fdesc = "f = " + p.f.Source()
	}
	bdesc := "u_D = 0"
	switch {
	case p.uD != nil:
		bdesc = "u_D = " + p.uD.Source()
	case p.exact != nil:
		bdesc = "u_D = exact solution"
	}
	p.Summary = fmt.Sprintf("%s potential on %s; %s; %s", p.G, where, fdesc, bdesc)
	if p.exact != nil {
		p.Summary += "; exact u = " + p.exact.Source()
	}
	if p.T > 0 {
		p.Summary += fmt.Sprintf("; time horizon T = %g", p.T)
	}
	return p, nil
}
