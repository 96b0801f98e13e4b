package estimate

import (
	"context"
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// Source is the load that an equilibrated flux balances, evaluated at the
// point of cell k with barycentric coordinates lam (1-D: lam[0], lam[1]).
// For the elliptic problem it is f; for a step of the evolution problem it
// is f_n − (v_n − v_{n−1})/τ, which contains a P1 field (docs/math.md §7). It is
// called at quadrature points only, so data known only there can be wrapped
// as well.
type Source func(k int, lam [3]float64) float64

// FuncSource returns the Source of a load given as a function of the
// position (y = 0 in 1-D).
func FuncSource(m *mesh.Mesh, f func(x, y float64) float64) Source {
	return func(k int, lam [3]float64) float64 {
		x, y := eqPoint(m, k, lam)
		return f(x, y)
	}
}

// StepSource returns the load f(x, y) − (vNew − vOld)/τ of an implicit Euler
// step of the evolution problem (docs/math.md §7), with vNew and vOld nodal P1
// vectors; f == nil means f = 0.
func StepSource(m *mesh.Mesh, f func(x, y float64) float64, vNew, vOld []float64, tau float64) (Source, error) {
	n := m.NumNodes()
	if len(vNew) != n || len(vOld) != n {
		return nil, fmt.Errorf("step source: the mesh has %d nodes but v_n has %d and v_{n−1} %d values", n, len(vNew), len(vOld))
	}
	if !(tau > 0) || math.IsInf(tau, 0) {
		return nil, fmt.Errorf("step source: the time step τ = %g must be positive and finite", tau)
	}
	nv := m.Dim + 1
	return func(k int, lam [3]float64) float64 {
		c := m.Cells[k]
		var dt float64
		for a := range nv {
			dt += lam[a] * (vNew[c[a]] - vOld[c[a]])
		}
		s := -dt / tau
		if f != nil {
			x, y := eqPoint(m, k, lam)
			s += f(x, y)
		}
		return s
	}, nil
}

// eqPoint maps barycentric coordinates of cell k to the physical point.
func eqPoint(m *mesh.Mesh, k int, lam [3]float64) (x, y float64) {
	c := m.Cells[k]
	for a := range m.Dim + 1 {
		p := m.Nodes[c[a]]
		x += lam[a] * p.X
		y += lam[a] * p.Y
	}
	return x, y
}

// EquilibrateOptions configure Equilibrate; the zero value gives RT0 with
// the defaults below.
type EquilibrateOptions struct {
	// Order is k: 0 for Raviart–Thomas RT0 (div y* = −Π0 f, cell means) or 1
	// for RT1 (div y* = −Π1 f, the L² projection onto P1 of each cell, so the
	// data oscillation f − Π1 f is O(h²) for smooth f). In 1-D the flux is
	// continuous and piecewise of degree k + 1.
	Order int
	// Newton is the number of Newton steps on the discrete dual problem
	// after the first, quadratic-model step (0: none). Each costs one
	// preconditioned CG solve.
	Newton int
	// Tol is the relative residual of the CG solves (default 1e-3: against
	// 1e-9 it changed ∫ D_G(∇v, y*) by 1e-7 relative on smooth problems, at
	// a third to a quarter of the iterations). It changes only how close y*
	// is to the optimum, never its balance.
	Tol float64
	// Degree is the exactness degree of the rule that projects the source
	// (default 4 for k = 0, 5 for k = 1: the projection error then changes
	// only the cell means of the residual, by O(h^{Degree+1}), which the
	// split residual of the bounds accounts for; the balance
	// div y* + Π_k f = 0 holds for the projection actually computed).
	Degree int
	// Reg is the relative Hessian regularisation: D²G is frozen below the
	// radius Reg · max|∇v| (default 1e-3); it affects only the optimality of
	// y*, not its balance.
	Reg float64
}

func (o *EquilibrateOptions) defaults() error {
	if o.Order != 0 && o.Order != 1 {
		return fmt.Errorf("equilibrated flux: order k = %d is not offered; use 0 (RT0) or 1 (RT1)", o.Order)
	}
	if o.Newton < 0 {
		return fmt.Errorf("equilibrated flux: %d Newton steps; need 0 or more", o.Newton)
	}
	if o.Tol == 0 {
		o.Tol = 1e-3
	}
	if !(o.Tol > 0 && o.Tol < 1) {
		return fmt.Errorf("equilibrated flux: CG tolerance %g must lie in (0, 1)", o.Tol)
	}
	if o.Degree == 0 {
		o.Degree = 4 + o.Order
	}
	if o.Degree < 1 {
		return fmt.Errorf("equilibrated flux: quadrature degree %d must be at least 1", o.Degree)
	}
	if o.Reg == 0 {
		o.Reg = 1e-3
	}
	if !(o.Reg > 0 && o.Reg < 1) {
		return fmt.Errorf("equilibrated flux: regularisation %g must lie in (0, 1)", o.Reg)
	}
	return nil
}

// Equilibrated is a flux y* with div y* + Π_k f = 0 on every cell, built by
// Equilibrate. It implements Flux.
//
// On each cell y* is stored as a quadratic form in the barycentric
// coordinates, y* = Σ_i λ_i² C_i + Σ_{i<j} λ_i λ_j C_ij, which holds RT0,
// RT1 and the 1-D fluxes alike; div y* is its exact derivative.
type Equilibrated struct {
	order int
	coef  [][6][2]float64 // C_0, C_1, C_2, C_12, C_02, C_01
	div   [][3]float64    // div y* = Σ_i div[k][i] λ_i
	proj  [][3]float64    // Π_k f = Σ_i proj[k][i] λ_i
	// Iterations totals the preconditioned CG iterations (2-D) or the scalar
	// Newton/bisection steps (1-D) spent.
	Iterations int
	// Steps is the number of accepted steps on the dual problem.
	Steps int
}

// At returns y*(x) and div y*(x) at the point of cell k with barycentric
// coordinates lam. It does not allocate.
func (e *Equilibrated) At(k int, lam [3]float64) (y [2]float64, div float64) {
	y = quadForm(&e.coef[k], lam)
	d := &e.div[k]
	return y, lam[0]*d[0] + lam[1]*d[1] + lam[2]*d[2]
}

// Degree returns k + 1, the polynomial degree of y* on each cell.
func (e *Equilibrated) Degree() int { return e.order + 1 }

// Order returns k of RT_k: div y* = −Π_k f.
func (e *Equilibrated) Order() int { return e.order }

// Projected returns Π_k f at the point of cell k with barycentric
// coordinates lam: the part of the load that y* balances exactly, so that
// the residual f + div y* equals f − Π_k f.
func (e *Equilibrated) Projected(k int, lam [3]float64) float64 {
	p := &e.proj[k]
	return lam[0]*p[0] + lam[1]*p[1] + lam[2]*p[2]
}

// pairs lists, for slot 3 + i of the quadratic form, the barycentric pair
// (j, k) opposite vertex i.
var pairs = [3][2]int{{1, 2}, {0, 2}, {0, 1}}

// pairSlot returns the slot of λ_a λ_b, a ≠ b.
func pairSlot(a, b int) int { return 3 + (3 - a - b) }

// addLinear adds the linear field Σ_j λ_j Y_j to the quadratic form, using
// λ_j = λ_j Σ_i λ_i.
func addLinear(c *[6][2]float64, Y [3][2]float64, nv int) {
	for j := range nv {
		for d := range 2 {
			c[j][d] += Y[j][d]
		}
		for i := range nv {
			if i != j {
				s := pairSlot(i, j)
				c[s][0] += Y[j][0]
				c[s][1] += Y[j][1]
			}
		}
	}
}

// addConstant adds the constant field a to the quadratic form.
func addConstant(c *[6][2]float64, a [2]float64, nv int) {
	addLinear(c, [3][2]float64{a, a, a}, nv)
}

// divergence returns the coefficients of div y* = Σ_i d_i λ_i for the
// quadratic form c with barycentric gradients g:
// d_i = 2∇λ_i·C_i + Σ_{m≠i} ∇λ_m·C_im.
func divergence(c *[6][2]float64, g *[3][2]float64, nv int) (d [3]float64) {
	for i := range nv {
		s := 2 * (g[i][0]*c[i][0] + g[i][1]*c[i][1])
		for m := range nv {
			if m != i {
				p := pairSlot(i, m)
				s += g[m][0]*c[p][0] + g[m][1]*c[p][1]
			}
		}
		d[i] = s
	}
	return d
}

// Equilibrate reconstructs an equilibrated flux y* from the P1 function v
// (nodal values on s.Mesh) for the potential G and the load f: y* lies in
// RT_k, div y* + Π_k f = 0 holds on every cell to rounding whatever the
// quality of v, and y* approximately minimises ∫ D_G(∇v, y*) among all
// such fields, i.e. it approximates the discrete dual mixed solution
// (docs/math.md §5, item 3).
//
// Method (2-D). (1) Start from the edge fluxes of the cellwise flux
// σ = ∂G(∇v), averaged across each edge; (2) correct them along a spanning
// tree of the dual graph rooted at the boundary, cell by cell from the
// leaves, so that every cell balances exactly (an O(N) particular solution);
// for k = 1 add the RT1 interior fields λ_i(λ_j ∇^⊥λ_k − λ_k ∇^⊥λ_j), whose
// divergence c(3λ_i − 1) matches the mean-free part of −Π1 f; (3) every
// other balanced field differs by a divergence-free field, which on a simply
// connected domain is the curl of a stream function in P_{k+1} (Brezzi &
// Fortin, Mixed and Hybrid Finite Element Methods, 1991, §III.3), so the
// constrained minimisation of ∫ D_G(∇v, y*) becomes an unconstrained one in
// the stream function: first its quadratic model around σ,
// ½∫ (y* − σ)ᵀ D²G(∇v)⁻¹ (y* − σ), then opt.Newton Newton steps on
// ∫ D_G(∇v, y*) itself. Each step is one CG solve preconditioned by the
// P1 multigrid of package fem (plus Jacobi on the quadratic stream
// functions for k = 1), so the cost is O(N) per step. Because the stream
// correction is divergence free for any stream function, the CG tolerance
// changes only the quality of y*, never its balance. Boundary normal
// components are free (Dirichlet boundary).
//
// Method (1-D). y* is continuous with y*' = −Π_k f, so y* = c − ∫_a^x Π_k f;
// the constant c minimises the scalar convex function ∫ D_G(v', y*)
// (safeguarded Newton on its derivative), which is exact.
func Equilibrate(ctx context.Context, s *fem.P1, G convex.Potential, v []float64, f Source, opt EquilibrateOptions) (*Equilibrated, error) {
	if err := opt.defaults(); err != nil {
		return nil, err
	}
	if s == nil || G == nil || f == nil {
		return nil, fmt.Errorf("equilibrated flux: the space, the potential and the source are all required")
	}
	m := s.Mesh
	if len(v) != m.NumNodes() {
		return nil, fmt.Errorf("equilibrated flux: v has %d values for a mesh of %d nodes", len(v), m.NumNodes())
	}
	if m.Dim == 2 {
		q, err := newEquilibrator(s, opt.Order)
		if err != nil {
			return nil, err
		}
		return q.flux(ctx, G, v, f, opt)
	}
	e := newEquilibrated(m.NumCells(), opt.Order)
	if err := e.project(s, f, opt.Degree); err != nil {
		return nil, err
	}
	if err := e.equilibrate1(s, G, v); err != nil {
		return nil, err
	}
	e.finish(s)
	return e, nil
}

func newEquilibrated(nc, order int) *Equilibrated {
	return &Equilibrated{order: order, coef: make([][6][2]float64, nc), div: make([][3]float64, nc), proj: make([][3]float64, nc)}
}

// finish sets the divergence coefficients from the quadratic forms.
func (e *Equilibrated) finish(s *fem.P1) {
	nv := s.Mesh.Dim + 1
	for k := range e.coef {
		e.div[k] = divergence(&e.coef[k], &s.Grad[k], nv)
	}
}

// project sets proj to Π_k f: the cell mean (k = 0) or the L² projection
// onto P1(T), whose barycentric coefficients are M⁻¹ b with b_i = ∫_T f λ_i
// and M the P1 mass matrix of the cell.
func (e *Equilibrated) project(s *fem.P1, f Source, degree int) error {
	m := s.Mesh
	nv := m.Dim + 1
	r := s.Rule(degree)
	for k := range m.Cells {
		var b [3]float64
		var mean float64
		for q, p := range r.Points {
			lam, _ := cellPoint(m.Dim, p)
			fv := f(k, lam)
			if math.IsNaN(fv) || math.IsInf(fv, 0) {
				x, y := eqPoint(m, k, lam)
				return fmt.Errorf("equilibrated flux: the source is %g at (%g, %g) in cell %d; it must be finite", fv, x, y, k)
			}
			w := r.Weights[q] * fv
			mean += w
			for a := range nv {
				b[a] += w * lam[a]
			}
		}
		// Reference weights sum to 1 (interval) or 1/2 (triangle).
		if m.Dim == 2 {
			mean *= 2
			for a := range b {
				b[a] *= 2
			}
		}
		if e.order == 0 {
			e.proj[k] = [3]float64{mean, mean, mean}
			if m.Dim == 1 {
				e.proj[k][2] = 0
			}
			continue
		}
		if m.Dim == 1 {
			// (|T|/6)[2 1; 1 2]⁻¹ applied to |T| b.
			e.proj[k] = [3]float64{2 * (2*b[0] - b[1]), 2 * (2*b[1] - b[0]), 0}
		} else {
			// (|T|/12)[2 1 1; 1 2 1; 1 1 2]⁻¹ = (3/|T|)[3 −1 −1; …].
			for a := range 3 {
				e.proj[k][a] = 3 * (3*b[a] - b[(a+1)%3] - b[(a+2)%3])
			}
		}
	}
	return nil
}
