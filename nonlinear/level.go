package nonlinear

import (
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// level holds the discrete problem on one mesh of the hierarchy and the
// scratch space of its Newton steps, so that a step allocates nothing but
// the PCG vectors.
type level struct {
	index int
	s     *fem.P1
	mg    *fem.Multigrid
	hess  *fem.CSR
	mass  *fem.CSR // free-node mass matrix, nil without a mass term
	c     float64  // mass coefficient
	ref   []float64
	bd    []float64 // Dirichlet values at the nodes (boundary entries used)
	load  []float64 // nodal ∫ f φ_i
	fvals []float64 // f at the load rule's points (fem.P1.Sample order)
	grad  [][2]float64
	coef  [][3]float64
	nodal []float64
	trial []float64
	g, d  []float64
	gt    []float64
	// sigma and lin are the cell fluxes of the primal-dual Newton method
	// (allocated on first use).
	sigma, lin [][2]float64
	bnorm      float64 // ‖b‖ on the free nodes
}

// levelCache keeps the last level built on a mesh, so that a sequence of
// solves on one mesh (Evolve: one per time step) builds the space, the
// matrix patterns, the multigrid hierarchy and the mass matrix once; only
// the data (Dirichlet values, load, mass coefficient, reference) are set
// again. The matrices are overwritten by every assembly, so results are
// those of a fresh level.
type levelCache struct {
	m  *mesh.Mesh
	lv *level
}

func (sv *solver) newLevel(m *mesh.Mesh, index int) (*level, error) {
	var lv *level
	if c := sv.cache; c != nil && c.m == m && c.lv != nil {
		lv = c.lv
		lv.index = index
		clear(lv.bd)
		clear(lv.load)
	} else {
		s, err := fem.NewP1(m)
		if err != nil {
			return nil, fmt.Errorf("newton: %w", err)
		}
		mg, err := fem.NewMultigrid(s)
		if err != nil {
			return nil, fmt.Errorf("newton: %w", err)
		}
		nn, nc, nf := s.NumNodes(), m.NumCells(), s.NumFree()
		lv = &level{
			index: index, s: s, mg: mg, hess: s.NewMatrix(),
			bd: make([]float64, nn), load: make([]float64, nn),
			grad: make([][2]float64, nc), coef: make([][3]float64, nc),
			nodal: make([]float64, nn), trial: make([]float64, nn),
			g: make([]float64, nf), d: make([]float64, nf), gt: make([]float64, nf),
		}
		if c := sv.cache; c != nil {
			c.m, c.lv = m, lv
		}
	}
	s := lv.s
	lv.c, lv.ref = 0, nil
	if sv.p.Dirichlet != nil {
		s.Interpolate(sv.p.Dirichlet, lv.bd)
		for i, v := range lv.bd {
			if m.Boundary[i] && (math.IsNaN(v) || math.IsInf(v, 0)) {
				return nil, &DataError{Datum: "u_D", At: m.Nodes[i], Value: v}
			}
		}
	}
	if sv.p.F != nil {
		r := s.Rule(sv.o.LoadDegree)
		if n := m.NumCells() * r.Len(); len(lv.fvals) != n {
			lv.fvals = make([]float64, n)
		}
		s.Sample(sv.p.F, r, lv.fvals)
		for i, v := range lv.fvals {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, &DataError{Datum: "f", At: quadPoint(s, r, i), Value: v}
			}
		}
		s.LoadValues(r, lv.fvals, lv.load)
	}
	for i, n := range s.FreeNodes {
		lv.g[i] = lv.load[n]
	}
	lv.bnorm = math.Sqrt(dot(lv.g, lv.g))
	for i, v := range lv.load {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			p := m.Nodes[i]
			return nil, fmt.Errorf("newton: the load ∫ f φ is %g at node (%g, %g); f must be finite at the quadrature points", v, p.X, p.Y)
		}
	}
	if sv.p.Mass > 0 {
		lv.c, lv.ref = sv.p.Mass, sv.p.Ref
		if lv.mass == nil {
			lv.mass = s.NewMatrix()
			if err := s.Mass(lv.mass); err != nil {
				return nil, fmt.Errorf("newton: %w", err)
			}
		}
	}
	return lv, nil
}

// setBoundary puts the Dirichlet values into the boundary entries of w and
// of the trial vector.
func (lv *level) setBoundary(w []float64) {
	for i := range w {
		if lv.s.Free[i] < 0 {
			w[i] = lv.bd[i]
			lv.trial[i] = lv.bd[i]
		}
	}
}

// massDen is the denominator of the element mass matrix |T|(1 + δ_ij)/den.
func (lv *level) massDen() float64 {
	if lv.s.Mesh.Dim == 1 {
		return 6
	}
	return 12
}

// energy returns J(w) and its scale ∫ G(∇w) + |∫ f w| + mass term, the
// denominator of relative decrements. It also leaves ∇w in lv.grad.
func (lv *level) energy(G convex.Potential, w []float64) (J, scale float64) {
	lv.s.Gradient(w, lv.grad)
	e := 0.0
	for k, g := range lv.grad {
		e += lv.s.Area[k] * convex.Value(G, g)
	}
	fw := dot(lv.load, w)
	m := 0.0
	if lv.c > 0 {
		nv := lv.s.Mesh.Dim + 1
		for k, c := range lv.s.Mesh.Cells {
			// dᵀM_T d = |T|/den (Σ d_a² + (Σ d_a)²).
			sq, sum := 0.0, 0.0
			for a := range nv {
				d := w[c[a]] - lv.ref[c[a]]
				sq += d * d
				sum += d
			}
			m += lv.s.Area[k] / lv.massDen() * (sq + sum*sum)
		}
		m *= lv.c / 2
	}
	return e - fw + m, e + math.Abs(fw) + m + math.SmallestNonzeroFloat64
}

// residual stores the gradient of J at w on the free nodes in g and returns
// its norm and the reference norm ‖b‖ + ‖F(w)‖ of relative residuals, F(w)
// the internal forces ∫ ∂G(∇w)·∇φ_i at all nodes.
func (lv *level) residual(G convex.Potential, w, g []float64) (norm, ref float64) {
	lv.s.Gradient(w, lv.grad)
	// ∫ ∂G(∇w)·∇φ_a cell by cell (fem.P1.FluxLoad without storing the
	// fluxes: a million unknowns would keep 34 MB for it).
	clear(lv.nodal)
	nv := lv.s.Mesh.Dim + 1
	for k, x := range lv.grad {
		f := convex.Flux(G, x)
		ar, gr := lv.s.Area[k], &lv.s.Grad[k]
		for a, n := range lv.s.Mesh.Cells[k][:nv] {
			lv.nodal[n] += ar * (f[0]*gr[a][0] + f[1]*gr[a][1])
		}
	}
	// The internal forces at every node, the reactions at the Dirichlet
	// nodes included: when f = 0 and the boundary data drive the flow, the
	// forces at the free nodes vanish at the solution, and a residual
	// measured against them alone could never become small.
	fnorm := 0.0
	for _, x := range lv.nodal {
		fnorm += x * x
	}
	lv.addMass(w, lv.nodal)
	for i, n := range lv.s.FreeNodes {
		g[i] = lv.nodal[n] - lv.load[n]
	}
	norm = math.Sqrt(dot(g, g))
	return norm, lv.bnorm + math.Sqrt(fnorm) + math.SmallestNonzeroFloat64
}

// addMass adds c M (w − ref) to the nodal vector dst (nothing without a
// mass term).
func (lv *level) addMass(w, dst []float64) {
	if lv.c == 0 {
		return
	}
	nv := lv.s.Mesh.Dim + 1
	den := lv.massDen()
	for k, c := range lv.s.Mesh.Cells {
		// (M_T d)_a = |T|/den (d_a + Σ_b d_b).
		sum := 0.0
		for a := range nv {
			sum += w[c[a]] - lv.ref[c[a]]
		}
		f := lv.c * lv.s.Area[k] / den
		for a := range nv {
			dst[c[a]] += f * (w[c[a]] - lv.ref[c[a]] + sum)
		}
	}
}

// hessian assembles D²J at the gradients in lv.grad (left by residual) with
// the Hessian of G frozen below radius reg, and updates the multigrid.
func (lv *level) hessian(G convex.Potential, reg float64) error {
	for k, x := range lv.grad {
		lv.coef[k] = convex.Hessian(G, x, reg)
		if h := lv.coef[k]; math.IsInf(h[0], 0) || math.IsInf(h[2], 0) || math.IsNaN(h[0]+h[1]+h[2]) {
			return fmt.Errorf("newton: the Hessian of %v is %v at gradient %v; the potential needs a finite g'' away from 0", G, h, x)
		}
	}
	return lv.assemble()
}

// assemble builds the Hessian matrix from the cell coefficients in lv.coef
// (plus the mass term) and updates the multigrid.
func (lv *level) assemble() error {
	if err := lv.s.Stiffness(lv.coef, lv.hess); err != nil {
		return fmt.Errorf("newton: %w", err)
	}
	if lv.mass != nil {
		for i, v := range lv.mass.Val {
			lv.hess.Val[i] += lv.c * v
		}
	}
	if err := lv.mg.Update(lv.hess); err != nil {
		return fmt.Errorf("newton: %w", err)
	}
	return nil
}

// smoothed is the potential g_ε(t) = g(√(ε² + t²)) − g(ε) used for
// continuation: for the power potential it is convex.RegPower. It is convex
// and increasing for convex increasing g, with g_ε”(0) = g'(ε)/ε finite
// and positive. Only Profile is used by the solver.
type smoothed struct {
	g   convex.Potential
	eps float64
}

func (p smoothed) Profile(t float64) (g, g1, g2 float64) {
	s := math.Sqrt(p.eps*p.eps + t*t)
	v, d1, d2 := p.g.Profile(s)
	v0, _, _ := p.g.Profile(p.eps)
	// s' = t/s, s'' = ε²/s³.
	return v - v0, d1 * t / s, d2*(t/s)*(t/s) + d1*p.eps*p.eps/(s*s*s)
}

func (p smoothed) Conjugate(float64) (float64, float64) { return math.NaN(), math.NaN() }
func (p smoothed) Growth() float64                      { return p.g.Growth() }
func (p smoothed) Modulus() convex.Modulus              { return convex.Modulus{Label: convex.Estimate} }
func (p smoothed) DualModulus() convex.Modulus          { return convex.Modulus{Label: convex.Estimate} }
func (p smoothed) String() string                       { return fmt.Sprintf("%v smoothed at ε = %g", p.g, p.eps) }

// DataError reports data that are not finite where the solver needs them:
// f at a quadrature point of the load, or u_D at a boundary node.
type DataError struct {
	// Datum is "f" or "u_D".
	Datum string
	At    mesh.Point
	Value float64
}

func (e *DataError) Error() string {
	where := "quadrature point"
	if e.Datum == "u_D" {
		where = "boundary node"
	}
	return fmt.Sprintf("%s is %g at the %s (%g, %g); the data must be finite on the domain", e.Datum, e.Value, where, e.At.X, e.At.Y)
}

// quadPoint returns the i-th point of rule r over the cells of s, in the
// order of fem.P1.Sample.
func quadPoint(s *fem.P1, r fem.Rule, i int) mesh.Point {
	pts := make([]mesh.Point, s.Mesh.NumCells()*r.Len())
	s.QuadPoints(r, pts)
	return pts[i]
}
