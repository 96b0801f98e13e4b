package fem

import (
	"context"
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"

	"gapbook/mesh"
)

// Preconditioner applies an approximate inverse: dst = B r. B must be
// symmetric positive definite for PCG.
type Preconditioner interface {
	Apply(dst, r []float64)
}

// Stats reports the work of an iterative solve.
type Stats struct {
	Iterations int     // PCG iterations
	MatVecs    int     // products with the system matrix
	Residual   float64 // final ‖b − A x‖ / ‖b‖
}

// PCG solves A x = b for symmetric positive definite A by the preconditioned
// conjugate gradient method (Hestenes & Stiefel 1952; Saad, Iterative
// Methods for Sparse Linear Systems, 2nd ed., Alg. 9.1), starting from the
// given x, until ‖b − A x‖ ≤ tol ‖b‖. m == nil means no preconditioner. The
// context is checked every iteration.
func PCG(ctx context.Context, a *CSR, m Preconditioner, b, x []float64, tol float64, maxIter int) (Stats, error) {
	n := a.Rows
	var st Stats
	if len(b) != n || len(x) != n {
		return st, fmt.Errorf("pcg: matrix has %d rows but b has %d and x %d entries", n, len(b), len(x))
	}
	bn := norm(b)
	if bn == 0 {
		clear(x)
		return st, nil
	}
	// The four work vectors come from a pool: Newton methods call PCG once
	// per step with the same size, and a million unknowns need 32 MB.
	work := getWork(n)
	defer pcgWork.Put(work)
	r, z, p, q := work.v[0], work.v[1], work.v[2], work.v[3]
	a.MulVec(r, x)
	st.MatVecs++
	for i := range r {
		r[i] = b[i] - r[i]
	}
	apply := func() {
		if m == nil {
			copy(z, r)
		} else {
			m.Apply(z, r)
		}
	}
	apply()
	copy(p, z)
	rz := dot(r, z)
	st.Residual = norm(r) / bn
	for st.Residual > tol {
		if err := ctx.Err(); err != nil {
			return st, fmt.Errorf("pcg: stopped after %d iterations (relative residual %.2e): %w", st.Iterations, st.Residual, err)
		}
		if st.Iterations >= maxIter {
			return st, fmt.Errorf("pcg: relative residual %.2e after %d iterations, wanted %.2e; the matrix may not be positive definite, or raise the iteration limit", st.Residual, st.Iterations, tol)
		}
		a.MulVec(q, p)
		st.MatVecs++
		pq := dot(p, q)
		if !(pq > 0) {
			return st, fmt.Errorf("pcg: pᵀAp = %g at iteration %d: the matrix is not positive definite", pq, st.Iterations)
		}
		alpha := rz / pq
		for i := range x {
			x[i] += alpha * p[i]
			r[i] -= alpha * q[i]
		}
		st.Iterations++
		st.Residual = norm(r) / bn
		apply()
		rzNew := dot(r, z)
		beta := rzNew / rz
		rz = rzNew
		for i := range p {
			p[i] = z[i] + beta*p[i]
		}
	}
	return st, nil
}

type pcgVectors struct{ v [4][]float64 }

var pcgWork sync.Pool

func getWork(n int) *pcgVectors {
	w, _ := pcgWork.Get().(*pcgVectors)
	if w == nil || cap(w.v[0]) < n {
		w = &pcgVectors{}
		for i := range w.v {
			w.v[i] = make([]float64, n)
		}
	}
	for i := range w.v {
		w.v[i] = w.v[i][:n]
	}
	return w
}

func dot(x, y []float64) float64 {
	s := 0.0
	for i := range x {
		s += x[i] * y[i]
	}
	return s
}

func norm(x []float64) float64 { return math.Sqrt(dot(x, x)) }

// SGS is the symmetric Gauss–Seidel preconditioner (one forward and one
// backward sweep from zero) of a matrix with positive diagonal.
type SGS struct {
	A    *CSR
	diag []int32
}

// NewSGS prepares symmetric Gauss–Seidel for a; it fails when a diagonal
// entry is missing or not positive.
func NewSGS(a *CSR) (*SGS, error) {
	d, err := diagonal(a)
	if err != nil {
		return nil, err
	}
	return &SGS{A: a, diag: d}, nil
}

// Apply sets dst = B r for the symmetric Gauss–Seidel operator B.
func (s *SGS) Apply(dst, r []float64) {
	clear(dst)
	gsForward(s.A, s.diag, r, dst)
	gsBackward(s.A, s.diag, r, dst)
}

func diagonal(a *CSR) ([]int32, error) {
	d := make([]int32, a.Rows)
	for i := range d {
		p := a.Find(i, i)
		if p < 0 || !(a.Val[p] > 0) {
			v := 0.0
			if p >= 0 {
				v = a.Val[p]
			}
			return nil, fmt.Errorf("matrix row %d has diagonal %g; a positive diagonal is needed (is a cell degenerate or a coefficient not positive definite?)", i, v)
		}
		d[i] = int32(p)
	}
	return d, nil
}

// gsForward and gsBackward are Gauss–Seidel sweeps. On a mesh numbered
// for locality the newest value x[i∓1] is nearly always in row i, so the
// row sum is split: the part the sweep has not yet updated first, then the
// updated part in the order that uses the newest value last. That keeps the
// chain from one row to the next down to a few operations instead of the
// whole row (same sum, another order of rounding).
func gsForward(a *CSR, diag []int32, b, x []float64) {
	for i := range a.Rows {
		d := diag[i]
		s := b[i]
		for p := d; p < a.RowPtr[i+1]; p++ {
			s -= a.Val[p] * x[a.Col[p]]
		}
		l := 0.0
		for p := a.RowPtr[i]; p < d; p++ {
			l += a.Val[p] * x[a.Col[p]]
		}
		x[i] += (s - l) / a.Val[d]
	}
}

func gsBackward(a *CSR, diag []int32, b, x []float64) {
	for i := a.Rows - 1; i >= 0; i-- {
		d := diag[i]
		s := b[i]
		for p := a.RowPtr[i]; p <= d; p++ {
			s -= a.Val[p] * x[a.Col[p]]
		}
		u := 0.0
		for p := a.RowPtr[i+1] - 1; p > d; p-- {
			u += a.Val[p] * x[a.Col[p]]
		}
		x[i] += (s - u) / a.Val[d]
	}
}

// DirectLimit is the largest coarsest-level size factorised densely by
// Cholesky; larger coarsest levels are smoothed by CoarseSweeps symmetric
// Gauss–Seidel sweeps instead.
const DirectLimit = 1500

// CoarseSweeps is the number of symmetric Gauss–Seidel sweeps used on a
// coarsest level too large for Cholesky.
const CoarseSweeps = 20

// Multigrid is a geometric V-cycle preconditioner for P1 stiffness matrices
// on the free nodes of a mesh hierarchy (mesh.Coarse and mesh.Parents):
// prolongation by linear interpolation (a new node takes the mean of its two
// parents), Galerkin coarse operators PᵀAP recomputed by Update,
// Sweeps forward Gauss–Seidel sweeps before and as many backward sweeps after
// the coarse correction (so the preconditioner is symmetric), and dense
// Cholesky (gonum) on the coarsest level. See Hackbusch, Multi-Grid Methods
// and Applications (1985), and Briggs, Henson & McCormick, A Multigrid
// Tutorial (2000).
//
// Without a hierarchy (a mesh with Coarse == nil) there is a single level:
// up to DirectLimit unknowns it is solved exactly, beyond that the
// preconditioner degrades to CoarseSweeps symmetric Gauss–Seidel sweeps,
// whose PCG iteration counts grow like h⁻¹. Build meshes by Refine to get
// h-independent counts.
type Multigrid struct {
	// Sweeps is the number of pre- and of post-smoothing sweeps (default 2).
	Sweeps int
	levels []mgLevel
	chol   mat.Cholesky
	direct bool
	dense  *mat.SymDense
	rhs    *mat.VecDense
	sol    *mat.VecDense
}

type mgLevel struct {
	a    *CSR
	diag []int32
	gal  *Galerkin // to the next coarser level; nil on the coarsest
	r    []float64
	b, x []float64 // right-hand side and solution on coarser levels
}

// NewMultigrid builds the hierarchy below s (patterns, prolongations and
// Galerkin product patterns). Call Update with a matrix before Apply.
func NewMultigrid(s *P1) (*Multigrid, error) {
	mg := &Multigrid{Sweeps: 2}
	// The fine matrix is the one given to Update; until then only its
	// pattern is needed (no values: a million unknowns would hold 56 MB).
	p := s.pattern
	fine := &CSR{Rows: p.Rows, Cols: p.Cols, RowPtr: p.RowPtr, Col: p.Col}
	mg.levels = append(mg.levels, mgLevel{a: fine, r: make([]float64, fine.Rows)})
	m, free := s.Mesh, s.Free
	for m.Coarse != nil && len(m.Parents) == m.NumNodes() {
		c := m.Coarse
		cfree, cnodes := freeMap(c)
		p, err := prolongation(m, free, c, cfree, len(cnodes))
		if err != nil {
			return nil, err
		}
		last := &mg.levels[len(mg.levels)-1]
		g, err := NewGalerkin(last.a, p)
		if err != nil {
			return nil, err
		}
		last.gal = g
		n := g.Coarse.Rows
		mg.levels = append(mg.levels, mgLevel{a: g.Coarse, r: make([]float64, n), b: make([]float64, n), x: make([]float64, n)})
		m, free = c, cfree
	}
	return mg, nil
}

// prolongation returns P from coarse free values to fine free values.
func prolongation(f *mesh.Mesh, ffree []int32, c *mesh.Mesh, cfree []int32, nc int) (*CSR, error) {
	nf := 0
	for _, v := range ffree {
		if v >= 0 {
			nf++
		}
	}
	// At most two parents per fine node: no growth by appending.
	p := &CSR{Rows: nf, Cols: nc, RowPtr: make([]int32, nf+1), Col: make([]int32, 0, 2*nf), Val: make([]float64, 0, 2*nf)}
	for i, fi := range ffree {
		if fi < 0 {
			continue
		}
		par := f.Parents[i]
		if par[0] < 0 || par[1] < 0 || int(par[0]) >= c.NumNodes() || int(par[1]) >= c.NumNodes() {
			return nil, fmt.Errorf("multigrid: node %d has parents %v outside the coarse mesh (%d nodes)", i, par, c.NumNodes())
		}
		w := 0.5
		ps := par[:]
		if par[0] == par[1] {
			w, ps = 1, par[:1]
		} else if par[0] > par[1] {
			ps = []int32{par[1], par[0]}
		}
		for _, q := range ps {
			if cq := cfree[q]; cq >= 0 {
				p.Col = append(p.Col, cq)
				p.Val = append(p.Val, w)
			}
		}
		p.RowPtr[fi+1] = int32(len(p.Col))
	}
	return p, nil
}

// Levels returns the number of levels (1 without a hierarchy).
func (mg *Multigrid) Levels() int { return len(mg.levels) }

// Update takes a new fine matrix (from NewMatrix of the space given to
// NewMultigrid, freshly assembled) and recomputes the coarse operators and
// the coarsest factorisation: O(nnz) plus the coarsest Cholesky.
func (mg *Multigrid) Update(a *CSR) error {
	l0 := &mg.levels[0]
	if a.Rows != l0.a.Rows || len(a.Col) != len(l0.a.Col) || len(a.Val) != len(a.Col) {
		return fmt.Errorf("multigrid update: matrix is %d×%d with %d entries, the hierarchy was built for %d rows and %d entries", a.Rows, a.Cols, len(a.Val), l0.a.Rows, len(l0.a.Col))
	}
	l0.a = a
	for i := range mg.levels {
		l := &mg.levels[i]
		if i > 0 {
			mg.levels[i-1].gal.Update(mg.levels[i-1].a)
		}
		// The pattern is fixed: find the diagonal positions once, then
		// only check the values.
		if l.diag == nil {
			d, err := diagonal(l.a)
			if err != nil {
				return fmt.Errorf("multigrid level %d: %w", i, err)
			}
			l.diag = d
		}
		for r, p := range l.diag {
			if !(l.a.Val[p] > 0) {
				return fmt.Errorf("multigrid level %d: matrix row %d has diagonal %g; a positive diagonal is needed (is a cell degenerate or a coefficient not positive definite?)", i, r, l.a.Val[p])
			}
		}
	}
	last := &mg.levels[len(mg.levels)-1]
	n := last.a.Rows
	mg.direct = n <= DirectLimit
	if !mg.direct || n == 0 {
		return nil
	}
	if mg.dense == nil || mg.dense.SymmetricDim() != n {
		mg.dense = mat.NewSymDense(n, nil)
		mg.rhs, mg.sol = mat.NewVecDense(n, nil), mat.NewVecDense(n, nil)
	}
	d := mg.dense.RawSymmetric().Data
	clear(d)
	for i := range n {
		for p := last.a.RowPtr[i]; p < last.a.RowPtr[i+1]; p++ {
			d[i*n+int(last.a.Col[p])] = last.a.Val[p]
		}
	}
	if ok := mg.chol.Factorize(mg.dense); !ok {
		return fmt.Errorf("multigrid: the coarsest matrix (%d unknowns) is not positive definite; check that the coefficients are positive definite on every cell", n)
	}
	return nil
}

// Apply sets dst = B r for one V-cycle B (zero initial guess).
func (mg *Multigrid) Apply(dst, r []float64) {
	mg.cycle(0, r, dst)
}

func (mg *Multigrid) cycle(i int, b, x []float64) {
	l := &mg.levels[i]
	clear(x)
	if i == len(mg.levels)-1 {
		if l.a.Rows == 0 {
			return
		}
		if mg.direct {
			copy(mg.rhs.RawVector().Data, b)
			if err := mg.chol.SolveVecTo(mg.sol, mg.rhs); err == nil {
				copy(x, mg.sol.RawVector().Data)
				return
			}
		}
		for range CoarseSweeps {
			gsForward(l.a, l.diag, b, x)
			gsBackward(l.a, l.diag, b, x)
		}
		return
	}
	for range mg.Sweeps {
		gsForward(l.a, l.diag, b, x)
	}
	l.a.MulVec(l.r, x)
	for j := range l.r {
		l.r[j] = b[j] - l.r[j]
	}
	c := &mg.levels[i+1]
	l.gal.Pt.MulVec(c.b, l.r)
	mg.cycle(i+1, c.b, c.x)
	p := l.gal.P
	for j := range p.Rows {
		s := 0.0
		for q := p.RowPtr[j]; q < p.RowPtr[j+1]; q++ {
			s += p.Val[q] * c.x[p.Col[q]]
		}
		x[j] += s
	}
	for range mg.Sweeps {
		gsBackward(l.a, l.diag, b, x)
	}
}
