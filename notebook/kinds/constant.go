package kinds

import (
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/estimate"
	"gapbook/fem"
	"gapbook/notebook"
)

func init() { notebook.Register(constantKind{}) }

// constantKind computes Friedrichs and Poincaré constants of a domain.
type constantKind struct{}

func (constantKind) Intervals() []notebook.IntervalDef {
	return []notebook.IntervalDef{{Name: "eigenvalue", Lower: "eigenvalue_low", Upper: "eigenvalue_high", Unit: "λ₁, the first Dirichlet eigenvalue of the Laplacian on Ω"}}
}

func (constantKind) Name() string { return "constant" }
func (constantKind) Doc() string {
	return "Friedrichs constant C in ‖w‖_p ≤ C ‖∇w‖_p (w = 0 on the boundary) and, on convex domains, the Poincaré constant, with guaranteed bounds and an estimate."
}
func (constantKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "mesh", Type: notebook.Ref, RefKinds: []string{"mesh"}, Doc: "id of the mesh cell whose domain is measured (the eigenvalue methods use this mesh)"},
		{Name: "p", Type: notebook.Number, Default: 0.0, Low: notebook.Above(1), High: notebook.AtMost(100),
			Doc: "exponent p > 1 of the norms; leave it out to take the problem's growth exponent"},
		{Name: "eigenvalue", Type: notebook.Bool, Default: true,
			Doc: "also estimate the first eigenvalue of the p-Laplacian on the mesh (an estimate, not a bound: a discrete eigenvalue lies above the exact one)"},
	}
}

func (constantKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	d, ok := c.Object(in.Text("mesh"), "mesh").(*Discretisation)
	if !ok {
		return nil, notebook.FieldErr("mesh", "cell %s is not a mesh cell", in.Text("mesh"))
	}
	alpha := in.Number("p")
	if alpha == 0 {
		alpha = d.Problem.Exponent()
	}
	m := d.Mesh
	w, err := estimate.WidthConstant(m, alpha)
	if err != nil {
		return nil, notebook.FieldErr("p", "%v", err)
	}
	res := &notebook.Results{Scalars: []notebook.Scalar{
		{Name: "p", Value: alpha, Label: notebook.Reference, Unit: "exponent (input)"},
		{Name: "width", Value: m.MinWidth(), Label: notebook.Reference, Unit: "width of Ω, exact geometry"},
		{Name: "width_bound", Value: w.Value, Label: notebook.Guaranteed, Unit: "C_F ≤ ℓ/((p−1)^{1/p} π_p), strip of width ℓ"},
	}}
	best := w.Value
	if d.Problem.Domain.Convex() {
		diam := d.Problem.Domain.Diameter()
		res.Scalars = append(res.Scalars, notebook.Scalar{Name: "poincare_bound", Value: convex.PoincareConvex(alpha, diam), Label: notebook.Guaranteed,
			Unit: fmt.Sprintf("min_c ‖w − c‖_p ≤ C ‖∇w‖_p on the convex domain of diameter %.6g", diam)})
	}
	if alpha == 2 && m.Dim == 2 {
		c.Progress(0.2, "Crouzeix–Raviart eigenvalue")
		b, err := estimate.FirstEigenvalue(c.Context(), m)
		if err != nil {
			if e := c.Err(); e != nil {
				return nil, e
			}
			return nil, notebook.FieldErr("mesh", "%v", err)
		}
		cr := 1 / math.Sqrt(b.Lower)
		best = math.Min(best, cr)
		res.Scalars = append(res.Scalars,
			notebook.Scalar{Name: "eigenvalue_low", Value: b.Lower, Label: notebook.Guaranteed, Unit: "λ₁ ≥ λ_CR/(1 + (0.1893 h)² λ_CR), Crouzeix–Raviart"},
			notebook.Scalar{Name: "eigenvalue_high", Value: b.Upper, Label: notebook.Guaranteed, Unit: "λ₁ ≤ conforming P1 eigenvalue (Rayleigh–Ritz)"},
			notebook.Scalar{Name: "eigen_bound", Value: cr, Label: notebook.Guaranteed, Unit: "C_F ≤ λ_low^{−1/2}"})
	}
	res.Scalars = append(res.Scalars, notebook.Scalar{Name: "friedrichs", Value: best, Label: notebook.Guaranteed, Unit: "best guaranteed C_F above"})
	if in.Bool("eigenvalue") {
		c.Progress(0.6, "p-Laplacian eigenvalue")
		s, err := fem.NewP1(m)
		if err != nil {
			return nil, notebook.FieldErr("mesh", "%v", err)
		}
		lam, ce, err := estimate.AlphaEigenvalue(c.Context(), s, alpha)
		if err != nil {
			if e := c.Err(); e != nil {
				return nil, e
			}
			return nil, notebook.FieldErr("eigenvalue", "%v; switch it off or change the mesh", err)
		}
		res.Scalars = append(res.Scalars,
			notebook.Scalar{Name: "p_eigenvalue", Value: lam, Label: notebook.Estimate, Unit: "first eigenvalue of the p-Laplacian, P1 (lies above the exact one)"},
			notebook.Scalar{Name: "eigen_estimate", Value: ce.Value, Label: notebook.Estimate, Unit: "C_F ≈ λ_p^{−1/p} (lies below the exact one)"})
	}
	return res, nil
}
