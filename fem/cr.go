package fem

import (
	"context"
	"fmt"
	"math"

	"gapbook/mesh"
)

// CR is the Crouzeix–Raviart nonconforming P1 space on a triangle mesh
// (Crouzeix & Raviart, RAIRO Anal. Numér. 7 (1973) 33–75): piecewise linear
// functions continuous at edge midpoints, one degree of freedom per edge,
// zero at the midpoints of boundary edges. On cell T the basis function of
// the edge opposite vertex i is 1 − 2λ_i.
type CR struct {
	Mesh *mesh.Mesh
	edgeTopology
	Area []float64
	Grad [][3][2]float64
	// Free maps an edge to its free index (−1 on boundary edges);
	// FreeEdges maps back.
	Free      []int32
	FreeEdges []int32

	pattern *CSR
	pos     [][9]int32
}

// NewCR prepares the CR space on m with Dirichlet conditions on the
// boundary edges (edges of one cell).
func NewCR(m *mesh.Mesh) (*CR, error) { return newCR(m, true) }

func newCR(m *mesh.Mesh, dirichlet bool) (*CR, error) {
	t, err := newEdgeTopology(m)
	if err != nil {
		return nil, fmt.Errorf("crouzeix–raviart space: %w", err)
	}
	area, grad, err := geometry(m)
	if err != nil {
		return nil, fmt.Errorf("crouzeix–raviart space: %w", err)
	}
	s := &CR{Mesh: m, edgeTopology: *t, Area: area, Grad: grad}
	s.Free = make([]int32, len(t.Edges))
	for e := range s.Free {
		if dirichlet && t.OnBoundary[e] {
			s.Free[e] = -1
			continue
		}
		s.Free[e] = int32(len(s.FreeEdges))
		s.FreeEdges = append(s.FreeEdges, int32(e))
	}
	s.pattern, s.pos = cellPattern(t.CellEdges, 3, len(t.Edges), s.Free, s.FreeEdges)
	return s, nil
}

// NumFree returns the number of free (interior) edges.
func (s *CR) NumFree() int { return len(s.FreeEdges) }

// NewMatrix returns a zero matrix on the free edges with the CR pattern.
func (s *CR) NewMatrix() *CSR {
	p := s.pattern
	return &CSR{Rows: p.Rows, Cols: p.Cols, RowPtr: p.RowPtr, Col: p.Col, Val: make([]float64, len(p.Col))}
}

// Stiffness assembles A_ef = Σ_T ∫_T ∇φ_e · ∇φ_f (broken gradients) on the
// free edges: 4|T| ∇λ_i · ∇λ_j on each cell.
func (s *CR) Stiffness(a *CSR) error {
	if a == nil || len(a.Val) != len(s.pattern.Col) {
		return fmt.Errorf("crouzeix–raviart stiffness: the matrix must come from NewMatrix of this space")
	}
	clear(a.Val)
	for k := range s.pos {
		g := &s.Grad[k]
		for i := range 3 {
			for j := range 3 {
				if p := s.pos[k][3*i+j]; p >= 0 {
					a.Val[p] += 4 * s.Area[k] * (g[i][0]*g[j][0] + g[i][1]*g[j][1])
				}
			}
		}
	}
	return nil
}

// Mass assembles M_ef = ∫ φ_e φ_f on the free edges. It is diagonal,
// |T|/3 per cell and edge: the edge-midpoint rule is exact for quadratics
// and each basis function vanishes at the other two midpoints.
func (s *CR) Mass(a *CSR) error {
	if a == nil || len(a.Val) != len(s.pattern.Col) {
		return fmt.Errorf("crouzeix–raviart mass: the matrix must come from NewMatrix of this space")
	}
	clear(a.Val)
	for k := range s.pos {
		for i := range 3 {
			if p := s.pos[k][4*i]; p >= 0 {
				a.Val[p] += s.Area[k] / 3
			}
		}
	}
	return nil
}

// Interpolate sets the free vector dst to the values of f at the midpoints
// of the free edges (the CR interpolant of a continuous f up to O(h²); it
// preserves ∫_e f for linear f).
func (s *CR) Interpolate(f func(x, y float64) float64, dst []float64) {
	for i, e := range s.FreeEdges {
		p, q := s.Mesh.Nodes[s.Edges[e][0]], s.Mesh.Nodes[s.Edges[e][1]]
		dst[i] = f((p.X+q.X)/2, (p.Y+q.Y)/2)
	}
}

// Eigen is the result of an eigenvalue computation.
type Eigen struct {
	// Value is the Rayleigh quotient of Vector, an upper bound of the
	// smallest eigenvalue of the pencil.
	Value float64
	// Radius is the Krylov–Weinstein radius ‖Ax − ρMx‖_{M⁻¹} / ‖x‖_M: an
	// eigenvalue lies in [Value − Radius, Value + Radius] (Parlett, The
	// Symmetric Eigenvalue Problem, 1980, Thm 4.5.1, for the pencil). It is
	// computed when M is diagonal (CR) and is NaN otherwise.
	Radius float64
	// Vector is the eigenvector, normalised to xᵀMx = 1.
	Vector []float64
	// Outer counts inverse iterations; Stats sums the inner PCG work.
	Outer int
	Stats Stats
}

// SmallestEigenvalue computes the smallest eigenvalue of A x = λ M x (A, M
// symmetric positive definite) by inverse iteration with the Rayleigh
// quotient (Parlett 1980, §4.2), each step A y = M x solved by PCG with the
// preconditioner pre to relative residual 1e-13, warm-started at x/ρ. It
// stops when the Rayleigh quotient changes by less than tol relative (its
// error is about the square of the eigenvector error, so tol = 1e-14 gives
// full double accuracy) and, when M is diagonal, the residual radius has
// fallen to 1e-12 relative or stopped falling; it reports an error after
// 500 steps.
func SmallestEigenvalue(ctx context.Context, a, m *CSR, pre Preconditioner, tol float64) (Eigen, error) {
	n := a.Rows
	var ev Eigen
	if n == 0 || m.Rows != n {
		return ev, fmt.Errorf("eigenvalue: A has %d rows and M has %d; need equal sizes above zero", n, m.Rows)
	}
	x, y, mx, ax := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	// A positive start vector is not orthogonal to the positive first
	// eigenfunction of the Dirichlet Laplacian.
	for i := range x {
		x[i] = 1
	}
	rho := math.Inf(1)
	scaleM := func() {
		m.MulVec(mx, x)
		s := 1 / math.Sqrt(dot(x, mx))
		for i := range x {
			x[i] *= s
			mx[i] *= s
		}
	}
	diag, hasDiag := diagonalOnly(m)
	radius := func() float64 {
		if !hasDiag {
			return math.NaN()
		}
		s := 0.0
		for i := range ax {
			r := ax[i] - rho*mx[i]
			s += r * r / diag[i]
		}
		return math.Sqrt(s) // ‖x‖_M = 1
	}
	scaleM()
	ev.Radius = math.Inf(1)
	const maxOuter = 500
	for ev.Outer = 1; ; ev.Outer++ {
		if ev.Outer > maxOuter {
			return ev, fmt.Errorf("eigenvalue: inverse iteration did not settle in %d steps (last %.15g); the two smallest eigenvalues may be too close", maxOuter, rho)
		}
		if rho < math.Inf(1) {
			for i := range y {
				y[i] = x[i] / rho
			}
		}
		st, err := PCG(ctx, a, pre, mx, y, 1e-13, 10*n+100)
		ev.Stats.Iterations += st.Iterations
		ev.Stats.MatVecs += st.MatVecs
		if err != nil {
			return ev, fmt.Errorf("eigenvalue: inverse iteration step %d: %w", ev.Outer, err)
		}
		x, y = y, x
		scaleM()
		a.MulVec(ax, x)
		ev.Stats.MatVecs++
		next := dot(x, ax)
		settled := math.Abs(next-rho) <= tol*next
		rho = next
		prev := ev.Radius
		ev.Radius = radius()
		// With a diagonal M, go on until the residual radius is tiny too or
		// has reached its rounding floor (it falls by λ₁/λ₂ per step).
		if settled && (!hasDiag || ev.Radius <= 1e-12*rho || ev.Radius > 0.9*prev) {
			break
		}
	}
	ev.Value, ev.Vector = rho, x
	return ev, nil
}

func diagonalOnly(m *CSR) ([]float64, bool) {
	d := make([]float64, m.Rows)
	for i := range m.Rows {
		for p := m.RowPtr[i]; p < m.RowPtr[i+1]; p++ {
			if int(m.Col[p]) != i && m.Val[p] != 0 {
				return nil, false
			}
			if int(m.Col[p]) == i {
				d[i] = m.Val[p]
			}
		}
		if !(d[i] > 0) {
			return nil, false
		}
	}
	return d, true
}

// FirstEigenvalue returns the smallest Dirichlet eigenvalue λ_CR of −Δ in
// the CR space, solved to full double accuracy (SmallestEigenvalue with
// symmetric Gauss–Seidel-preconditioned inner solves). It is not itself a
// bound: λ_CR / (1 + (0.1893 h)² λ_CR) is a guaranteed lower bound of the
// exact eigenvalue (Liu 2015), which the caller applies, e.g. after
// subtracting Radius from Value.
func (s *CR) FirstEigenvalue(ctx context.Context) (Eigen, error) {
	if s.NumFree() == 0 {
		return Eigen{}, fmt.Errorf("crouzeix–raviart eigenvalue: the mesh has no interior edge; refine it")
	}
	a, m := s.NewMatrix(), s.NewMatrix()
	if err := s.Stiffness(a); err != nil {
		return Eigen{}, err
	}
	if err := s.Mass(m); err != nil {
		return Eigen{}, err
	}
	pre, err := NewSGS(a)
	if err != nil {
		return Eigen{}, err
	}
	return SmallestEigenvalue(ctx, a, m, pre, 1e-14)
}

// FirstEigenvalue returns the smallest Dirichlet eigenvalue of −Δ in the P1
// space (an upper bound of the exact one), by SmallestEigenvalue with
// multigrid-preconditioned inner solves.
func (s *P1) FirstEigenvalue(ctx context.Context) (Eigen, error) {
	if s.NumFree() == 0 {
		return Eigen{}, fmt.Errorf("p1 eigenvalue: the mesh has no interior node; refine it")
	}
	a, m := s.NewMatrix(), s.NewMatrix()
	s.Stiffness(nil, a)
	s.Mass(m)
	mg, err := NewMultigrid(s)
	if err != nil {
		return Eigen{}, err
	}
	if err := mg.Update(a); err != nil {
		return Eigen{}, err
	}
	return SmallestEigenvalue(ctx, a, m, mg, 1e-14)
}
