package notebook

import (
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/estimate"
	"gapbook/fem"
	"gapbook/mesh"
)

func init() { Register(constantKind{}) }

// constantKind computes Friedrichs and Poincaré constants of a domain.
type constantKind struct{}

func (constantKind) Name() string { return "constant" }
func (constantKind) Doc() string {
	return "Friedrichs constant C in ‖w‖_α ≤ C ‖∇w‖_α (w = 0 on the boundary) and, on convex domains, the Poincaré constant, with guaranteed bounds and an estimate."
}
func (constantKind) Inputs() []Input {
	return []Input{
		{Name: "mesh", Type: Ref, RefKinds: []string{"mesh"}, Doc: "id of the mesh cell whose domain is measured (the eigenvalue methods use this mesh)"},
		{Name: "alpha", Type: Number, Default: 0.0, Low: AtLeast(0), High: AtMost(100),
			Check: func(v any) error {
				if a := v.(float64); a != 0 && a <= 1 {
					return fmt.Errorf("want 0 (the problem's exponent) or a number > 1, got %g", a)
				}
				return nil
			},
			Doc: "exponent α > 1 of the norms; 0 takes the problem's growth exponent"},
		{Name: "eigenvalue", Type: Bool, Default: true,
			Doc: "also estimate the first eigenvalue of the α-Laplacian on the mesh (an estimate, not a bound: a discrete eigenvalue lies above the exact one)"},
	}
}

func (constantKind) Evaluate(c *Context, in Values) (*Results, error) {
	d, ok := c.Object(in.Text("mesh"), "mesh").(*Discretisation)
	if !ok {
		return nil, FieldErr("mesh", "cell %s is not a mesh cell", in.Text("mesh"))
	}
	alpha := in.Number("alpha")
	if alpha == 0 {
		alpha = d.Problem.Alpha
	}
	m := d.Mesh
	w, err := estimate.WidthConstant(m, alpha)
	if err != nil {
		return nil, FieldErr("alpha", "%v", err)
	}
	res := &Results{Scalars: []Scalar{
		{Name: "alpha", Value: alpha, Label: Reference, Unit: "exponent (input)"},
		{Name: "width", Value: m.MinWidth(), Label: Reference, Unit: "width of Ω, exact geometry"},
		{Name: "width_bound", Value: w.Value, Label: Guaranteed, Unit: "C_F ≤ ℓ/((α−1)^{1/α} π_α), strip of width ℓ"},
	}}
	best := w.Value
	if convexDomain(d.Problem) {
		lo, hi := m.BoundingBox()
		diam := domainDiameter(d.Problem, lo, hi)
		res.Scalars = append(res.Scalars, Scalar{Name: "poincare_bound", Value: convex.PoincareConvex(alpha, diam), Label: Guaranteed,
			Unit: fmt.Sprintf("min_c ‖w − c‖_α ≤ C ‖∇w‖_α on the convex domain of diameter %.6g", diam)})
	}
	if alpha == 2 && m.Dim == 2 {
		c.Progress(0.2, "Crouzeix–Raviart eigenvalue")
		b, err := estimate.FirstEigenvalue(c.Context(), m)
		if err != nil {
			if e := c.Err(); e != nil {
				return nil, e
			}
			return nil, FieldErr("mesh", "%v", err)
		}
		cr := 1 / math.Sqrt(b.Lower)
		best = math.Min(best, cr)
		res.Scalars = append(res.Scalars,
			Scalar{Name: "eigenvalue_low", Value: b.Lower, Label: Guaranteed, Unit: "λ₁ ≥ λ_CR/(1 + (0.1893 h)² λ_CR), Crouzeix–Raviart"},
			Scalar{Name: "eigenvalue_high", Value: b.Upper, Label: Guaranteed, Unit: "λ₁ ≤ conforming P1 eigenvalue (Rayleigh–Ritz)"},
			Scalar{Name: "eigen_bound", Value: cr, Label: Guaranteed, Unit: "C_F ≤ λ_low^{−1/2}"})
	}
	res.Scalars = append(res.Scalars, Scalar{Name: "friedrichs", Value: best, Label: Guaranteed, Unit: "best guaranteed C_F above"})
	if in.Bool("eigenvalue") {
		c.Progress(0.6, "α-Laplacian eigenvalue")
		s, err := fem.NewP1(m)
		if err != nil {
			return nil, FieldErr("mesh", "%v", err)
		}
		lam, ce, err := estimate.AlphaEigenvalue(c.Context(), s, alpha)
		if err != nil {
			if e := c.Err(); e != nil {
				return nil, e
			}
			return nil, FieldErr("eigenvalue", "%v; switch it off or change the mesh", err)
		}
		res.Scalars = append(res.Scalars,
			Scalar{Name: "alpha_eigenvalue", Value: lam, Label: Estimate, Unit: "first eigenvalue of the α-Laplacian, P1 (lies above the exact one)"},
			Scalar{Name: "eigen_estimate", Value: ce.Value, Label: Estimate, Unit: "C_F ≈ λ_α^{−1/α} (lies below the exact one)"})
	}
	return res, nil
}

// convexDomain reports whether the problem's domain is convex.
func convexDomain(p *ProblemSpec) bool {
	switch p.Domain {
	case domInterval, domRectangle, domDisk:
		return true
	case domPolygon:
		v := p.vertices
		sign := 0.0
		for i := range v {
			a, b, c := v[i], v[(i+1)%len(v)], v[(i+2)%len(v)]
			cr := (b.X-a.X)*(c.Y-b.Y) - (b.Y-a.Y)*(c.X-b.X)
			if cr*sign < 0 {
				return false
			}
			if cr != 0 {
				sign = cr
			}
		}
		return true
	}
	return false
}

// domainDiameter is the largest distance between two points of a convex
// domain: between two vertices of the polygon.
func domainDiameter(p *ProblemSpec, lo, hi mesh.Point) float64 {
	var v []mesh.Point
	switch p.Domain {
	case domInterval:
		return p.x1 - p.x0
	case domRectangle:
		return math.Hypot(hi.X-lo.X, hi.Y-lo.Y)
	case domDisk:
		for j := range p.sides {
			a := 2 * math.Pi * float64(j) / float64(p.sides)
			v = append(v, mesh.Point{X: p.radius * math.Cos(a), Y: p.radius * math.Sin(a)})
		}
	default:
		v = p.vertices
	}
	d := 0.0
	for i := range v {
		for j := range i {
			d = math.Max(d, math.Hypot(v[i].X-v[j].X, v[i].Y-v[j].Y))
		}
	}
	return d
}
