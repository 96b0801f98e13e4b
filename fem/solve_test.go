package fem

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// The Galerkin product agrees with the dense product Pᵀ A P (gonum).
func TestGalerkinMatchesDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	s, _ := NewP1(hierarchy(t, 2, 2, 2))
	mg, err := NewMultigrid(s)
	if err != nil {
		t.Fatal(err)
	}
	a := s.NewMatrix()
	s.Stiffness(randomSPD(rng, s.Mesh.NumCells()), a)
	if err := mg.Update(a); err != nil {
		t.Fatal(err)
	}
	g := mg.levels[0].gal
	A := mat.NewDense(a.Rows, a.Cols, a.Dense())
	P := mat.NewDense(g.P.Rows, g.P.Cols, g.P.Dense())
	var tmp, want mat.Dense
	tmp.Mul(A, P)
	want.Mul(P.T(), &tmp)
	got := mat.NewDense(g.Coarse.Rows, g.Coarse.Cols, g.Coarse.Dense())
	if !mat.EqualApprox(got, &want, 1e-12) {
		t.Fatalf("PᵀAP differs from the dense product:\n%v\n%v", mat.Formatted(got), mat.Formatted(&want))
	}
	// P interpolates: prolonging the coarse interpolant of a linear function
	// gives the fine interpolant at free nodes whose parents are free.
	// Two refinements of the 2 × 2 rectangle, which records the 1 × 1
	// rectangle (no free node) as its own coarse mesh.
	if mg.Levels() != 4 {
		t.Errorf("levels = %d, want 4", mg.Levels())
	}
}

// PCG with multigrid agrees with a dense gonum solve on a small mesh.
func TestSparseSolveMatchesDense(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, dim := range []int{1, 2} {
		s, _ := NewP1(hierarchy(t, dim, 2, 3))
		a := s.NewMatrix()
		s.Stiffness(randomSPD(rng, s.Mesh.NumCells()), a)
		b := make([]float64, s.NumFree())
		for i := range b {
			b[i] = rng.Float64() - 0.5
		}
		mg, _ := NewMultigrid(s)
		if err := mg.Update(a); err != nil {
			t.Fatal(err)
		}
		x := make([]float64, s.NumFree())
		if _, err := PCG(context.Background(), a, mg, b, x, 1e-13, 100); err != nil {
			t.Fatal(err)
		}
		var want mat.VecDense
		if err := want.SolveVec(mat.NewDense(a.Rows, a.Cols, a.Dense()), mat.NewVecDense(len(b), b)); err != nil {
			t.Fatal(err)
		}
		for i := range x {
			if math.Abs(x[i]-want.AtVec(i)) > 1e-10*math.Max(1, math.Abs(want.AtVec(i))) {
				t.Fatalf("dim %d: x[%d] = %g, dense solve %g", dim, i, x[i], want.AtVec(i))
			}
		}
	}
}

// Multigrid-PCG iteration counts to 1e-10 must not grow as h halves, for the
// Laplacian, for coefficient jumps of 1e4 and for a p-Laplace-like
// coefficient |∇v|^{p−2} (common practice, no source: the h-independence of
// geometric multigrid is the claim under test).
func TestMultigridIterationsBounded(t *testing.T) {
	type coefFn func(x, y float64) [3]float64
	cases := []struct {
		name string
		dim  int
		c    coefFn
	}{
		{"laplace-2d", 2, nil},
		{"laplace-1d", 1, nil},
		{"jump-1e4", 2, func(x, y float64) [3]float64 {
			if (x < 0.5) != (y < 0.5) {
				return [3]float64{1e4, 0, 1e4}
			}
			return [3]float64{1, 0, 1}
		}},
		{"anisotropic-smooth", 2, func(x, y float64) [3]float64 {
			return [3]float64{1 + x, 0.3 * y, 1 + y}
		}},
		{"p-laplace-like", 2, func(x, y float64) [3]float64 {
			// D²G(ξ) for G = |ξ|^p/p, p = 4, at ξ = ∇v with v = sin(4x)sin(3y)
			// plus a small regularisation: |ξ|²(I + 2 ξξᵀ/|ξ|²) + 1e-3.
			gx, gy := 4*math.Cos(4*x)*math.Sin(3*y), 3*math.Sin(4*x)*math.Cos(3*y)
			n2 := gx*gx + gy*gy
			return [3]float64{n2 + 2*gx*gx + 1e-3, 2 * gx * gy, n2 + 2*gy*gy + 1e-3}
		}},
	}
	for _, c := range cases {
		var its []int
		for lev := 2; lev <= 5; lev++ {
			m := hierarchy(t, c.dim, 2, lev)
			s, _ := NewP1(m)
			var coef [][3]float64
			if c.c != nil {
				coef = make([][3]float64, m.NumCells())
				for k, cell := range m.Cells {
					p0, p1, p2 := m.Nodes[cell[0]], m.Nodes[cell[1]], m.Nodes[cell[2]]
					coef[k] = c.c((p0.X+p1.X+p2.X)/3, (p0.Y+p1.Y+p2.Y)/3)
				}
			}
			a := s.NewMatrix()
			s.Stiffness(coef, a)
			mg, _ := NewMultigrid(s)
			if err := mg.Update(a); err != nil {
				t.Fatal(err)
			}
			b := make([]float64, s.NumFree())
			for i := range b {
				b[i] = 1
			}
			x := make([]float64, s.NumFree())
			st, err := PCG(context.Background(), a, mg, b, x, 1e-10, 100)
			if err != nil {
				t.Fatalf("%s level %d: %v", c.name, lev, err)
			}
			if st.MatVecs != st.Iterations+1 {
				t.Errorf("%s: %d matvecs for %d iterations", c.name, st.MatVecs, st.Iterations)
			}
			its = append(its, st.Iterations)
		}
		t.Logf("%s: iterations %v for 8, 16, 32, 64 cells per side", c.name, its)
		// Degenerate coefficients need a few more iterations while the mesh
		// resolves them; the last step must have levelled off.
		n := len(its)
		if its[n-1] > its[n-2]+1 || its[n-1] > 20 {
			t.Errorf("%s: iterations %v grow with refinement", c.name, its)
		}
	}
}

func TestPCGHonoursContextAndLimits(t *testing.T) {
	// Rectangles record a coarser rectangle; cut it for a single level.
	single := *hierarchy(t, 2, 8, 0)
	single.Coarse, single.Parents = nil, nil
	s, _ := NewP1(&single)
	a := s.NewMatrix()
	s.Stiffness(nil, a)
	b := make([]float64, s.NumFree())
	for i := range b {
		b[i] = 1
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	x := make([]float64, s.NumFree())
	if _, err := PCG(ctx, a, nil, b, x, 1e-10, 100); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled context: got %v", err)
	}
	clear(x)
	st, err := PCG(context.Background(), a, nil, b, x, 1e-14, 2)
	if err == nil || st.Iterations != 2 {
		t.Errorf("iteration limit: got %v after %d iterations", err, st.Iterations)
	}
	// A single-level mesh this small is solved exactly by Cholesky.
	mg, _ := NewMultigrid(s)
	if err := mg.Update(a); err != nil {
		t.Fatal(err)
	}
	clear(x)
	st, err = PCG(context.Background(), a, mg, b, x, 1e-12, 5)
	if err != nil || st.Iterations > 1 {
		t.Errorf("direct coarse solve: %d iterations, %v", st.Iterations, err)
	}
	// Symmetric Gauss–Seidel alone converges too.
	sgs, err := NewSGS(a)
	if err != nil {
		t.Fatal(err)
	}
	clear(x)
	if _, err := PCG(context.Background(), a, sgs, b, x, 1e-10, 200); err != nil {
		t.Error(err)
	}
	// An indefinite matrix is reported, not silently "solved".
	neg := s.NewMatrix()
	for i := range neg.Val {
		neg.Val[i] = -a.Val[i]
	}
	if err := mg.Update(neg); err == nil {
		t.Error("negative definite matrix accepted by multigrid")
	}
}
