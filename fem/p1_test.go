package fem

import (
	"context"
	"math"
	"math/rand/v2"
	"slices"
	"testing"

	"gapbook/mesh"
)

// hierarchy returns the unit square (or interval) with a coarse grid of n
// cells per side refined `levels` times.
func hierarchy(t testing.TB, dim, n, levels int) *mesh.Mesh {
	t.Helper()
	var m *mesh.Mesh
	var err error
	if dim == 1 {
		m, err = mesh.Interval(0, 1, n)
	} else {
		m, err = mesh.Rectangle(0, 1, 0, 1, n, n)
	}
	if err != nil {
		t.Fatal(err)
	}
	for range levels {
		if m, err = m.Refine(); err != nil {
			t.Fatal(err)
		}
	}
	return m
}

// floating returns a copy of m without boundary nodes, so that P1 matrices
// cover every node.
func floating(m *mesh.Mesh) *mesh.Mesh {
	c := *m
	c.Boundary = make([]bool, m.NumNodes())
	c.Coarse, c.Parents = nil, nil
	return &c
}

func randomSPD(rng *rand.Rand, nc int) [][3]float64 {
	c := make([][3]float64, nc)
	for k := range c {
		// C = LLᵀ + 0.1 I with a random lower triangular L.
		a, b, d := rng.Float64()*2-1, rng.Float64()*2-1, rng.Float64()*2-1
		c[k] = [3]float64{a*a + 0.1, a * b, b*b + d*d + 0.1}
	}
	return c
}

func TestStiffnessKernelAndEnergy(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, dim := range []int{1, 2} {
		m := floating(hierarchy(t, dim, 3, 1))
		s, err := NewP1(m)
		if err != nil {
			t.Fatal(err)
		}
		for _, coef := range [][][3]float64{nil, randomSPD(rng, m.NumCells())} {
			a := s.NewMatrix()
			if err := s.Stiffness(coef, a); err != nil {
				t.Fatal(err)
			}
			// Constants lie in the kernel: every row sums to zero.
			one := make([]float64, s.NumFree())
			for i := range one {
				one[i] = 1
			}
			r := make([]float64, s.NumFree())
			a.MulVec(r, one)
			for i, v := range r {
				if math.Abs(v) > 1e-12 {
					t.Fatalf("dim %d: row %d sums to %g", dim, i, v)
				}
			}
			// For linear u = g·x: uᵀAu = ∫ ∇u · C ∇u exactly.
			g := [2]float64{0.7, -1.3}
			if dim == 1 {
				g[1] = 0
			}
			u := make([]float64, s.NumNodes())
			s.Interpolate(func(x, y float64) float64 { return g[0]*x + g[1]*y + 0.4 }, u)
			a.MulVec(r, u)
			want := 0.0
			for k := range s.Area {
				c := [3]float64{1, 0, 1}
				if coef != nil {
					c = coef[k]
				}
				if dim == 1 {
					c[1], c[2] = 0, 0
				}
				want += s.Area[k] * (g[0]*(c[0]*g[0]+c[1]*g[1]) + g[1]*(c[1]*g[0]+c[2]*g[1]))
			}
			if got := dot(u, r); math.Abs(got-want) > 1e-12*want {
				t.Errorf("dim %d: uᵀAu = %.15g, want %.15g", dim, got, want)
			}
			// The gradient of the interpolant of a linear function is exact.
			grad := make([][2]float64, m.NumCells())
			s.Gradient(u, grad)
			for k := range grad {
				if math.Abs(grad[k][0]-g[0]) > 1e-12 || math.Abs(grad[k][1]-g[1]) > 1e-12 {
					t.Fatalf("dim %d: gradient on cell %d is %v, want %v", dim, k, grad[k], g)
				}
			}
		}
		// ∫ ∇u · ∇φ_i (FluxLoad) equals (A u)_i for the Laplacian.
		a := s.NewMatrix()
		s.Stiffness(nil, a)
		u := make([]float64, s.NumNodes())
		for i := range u {
			u[i] = rng.Float64()
		}
		grad := make([][2]float64, m.NumCells())
		s.Gradient(u, grad)
		fl := make([]float64, s.NumNodes())
		s.FluxLoad(grad, fl)
		au := make([]float64, s.NumNodes())
		a.MulVec(au, u)
		for i := range au {
			if math.Abs(au[i]-fl[i]) > 1e-12 {
				t.Fatalf("dim %d: FluxLoad %g, Au %g at node %d", dim, fl[i], au[i], i)
			}
		}
		// Mass: 1ᵀM1 = |Ω| = 1 and the load of f = 1 is M1.
		mm := s.NewMatrix()
		s.Mass(mm)
		one := make([]float64, s.NumNodes())
		for i := range one {
			one[i] = 1
		}
		m1 := make([]float64, s.NumNodes())
		mm.MulVec(m1, one)
		load := make([]float64, s.NumNodes())
		s.Load(func(x, y float64) float64 { return 1 }, s.Rule(2), load)
		total := 0.0
		for i := range m1 {
			total += m1[i]
			if math.Abs(m1[i]-load[i]) > 1e-14 {
				t.Fatalf("dim %d: load of 1 at node %d is %g, M1 is %g", dim, i, load[i], m1[i])
			}
		}
		if math.Abs(total-1) > 1e-13 {
			t.Errorf("dim %d: 1ᵀM1 = %g, want 1", dim, total)
		}
	}
}

func TestLoadValuesMatchesLoad(t *testing.T) {
	s, _ := NewP1(hierarchy(t, 2, 2, 2))
	f := func(x, y float64) float64 { return math.Sin(3*x) * math.Exp(y) }
	r := s.Rule(5)
	pts := make([]mesh.Point, s.Mesh.NumCells()*r.Len())
	s.QuadPoints(r, pts)
	vals := make([]float64, len(pts))
	for i, p := range pts {
		vals[i] = f(p.X, p.Y)
	}
	a, b := make([]float64, s.NumNodes()), make([]float64, s.NumNodes())
	s.Load(f, r, a)
	s.LoadValues(r, vals, b)
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("node %d: Load %g, LoadValues %g", i, a[i], b[i])
		}
	}
}

// Poisson problem −div(C∇u) = f on the unit square with the smooth
// solution u = sin(3x) eʸ + x² and its (nonlinear) boundary values.
func solvePoisson(t testing.TB, m *mesh.Mesh) (s *P1, u []float64, st Stats) {
	s, err := NewP1(m)
	if err != nil {
		t.Fatal(err)
	}
	exact := func(x, y float64) float64 { return math.Sin(3*x)*math.Exp(y) + x*x }
	f := func(x, y float64) float64 { return 8*math.Sin(3*x)*math.Exp(y) - 2 }
	a := s.NewMatrix()
	s.Stiffness(nil, a)
	u = make([]float64, s.NumNodes())
	s.Interpolate(exact, u)
	load := make([]float64, s.NumNodes())
	s.Load(f, s.Rule(4), load)
	b := make([]float64, s.NumFree())
	s.ToFree(load, b)
	s.Lift(nil, u, b)
	mg, err := NewMultigrid(s)
	if err != nil {
		t.Fatal(err)
	}
	if err := mg.Update(a); err != nil {
		t.Fatal(err)
	}
	x := make([]float64, s.NumFree())
	st, err = PCG(context.Background(), a, mg, b, x, 1e-10, 200)
	if err != nil {
		t.Fatal(err)
	}
	s.FromFree(x, u)
	return s, u, st
}

func TestPoissonConvergenceRates(t *testing.T) {
	exact := func(x, y float64) float64 { return math.Sin(3*x)*math.Exp(y) + x*x }
	grad := func(x, y float64) (float64, float64) {
		return 3*math.Cos(3*x)*math.Exp(y) + 2*x, math.Sin(3*x) * math.Exp(y)
	}
	var l2, h1 []float64
	for lev := 0; lev < 5; lev++ { // 4 to 64 cells per side
		s, u, st := solvePoisson(t, hierarchy(t, 2, 4, lev))
		l2 = append(l2, s.L2Error(u, exact, Triangle(6)))
		h1 = append(h1, s.H1Error(u, grad, Triangle(6)))
		t.Logf("n=%3d  L2 %.3e  H1 %.3e  PCG %d iterations", 4<<lev, l2[lev], h1[lev], st.Iterations)
	}
	// Expected O(h²) in L² and O(h) in H¹ (Ciarlet, The Finite Element
	// Method for Elliptic Problems, 1978, Thm 3.2.2 and Aubin–Nitsche).
	for i := 1; i < len(l2); i++ {
		r2, r1 := math.Log2(l2[i-1]/l2[i]), math.Log2(h1[i-1]/h1[i])
		t.Logf("rates: L2 %.3f  H1 %.3f", r2, r1)
		if i >= 2 && (math.Abs(r2-2) > 0.1 || math.Abs(r1-1) > 0.1) {
			t.Errorf("level %d: rates L2 %.3f (want 2), H1 %.3f (want 1)", i, r2, r1)
		}
	}
}

// TestWithBoundaryMatchesNewP1 checks that the space built by WithBoundary
// on a copy of the mesh with other boundary flags is the space NewP1
// builds on that copy: same free numbering, same pattern and the same
// stiffness matrix for random coefficients (bit for bit: the same
// geometry and the same assembly order), on meshes of both dimensions;
// and that a mesh with other cells falls back to NewP1.
func TestWithBoundaryMatchesNewP1(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	for _, m := range []*mesh.Mesh{hierarchy(t, 1, 6, 1), hierarchy(t, 2, 4, 1)} {
		s, err := NewP1(m)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range []*mesh.Mesh{floating(m), pinOne(m)} {
			got, err := s.WithBoundary(c)
			if err != nil {
				t.Fatal(err)
			}
			want, err := NewP1(c)
			if err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(got.Free, want.Free) || !slices.Equal(got.pattern.RowPtr, want.pattern.RowPtr) || !slices.Equal(got.pattern.Col, want.pattern.Col) || !slices.Equal(got.pos, want.pos) {
				t.Fatalf("dim %d: numbering or pattern differs from NewP1", m.Dim)
			}
			coef := randomSPD(rng, m.NumCells())
			a, b := got.NewMatrix(), want.NewMatrix()
			if err := got.Stiffness(coef, a); err != nil {
				t.Fatal(err)
			}
			if err := want.Stiffness(coef, b); err != nil {
				t.Fatal(err)
			}
			if !slices.Equal(a.Val, b.Val) {
				t.Errorf("dim %d: stiffness matrices differ", m.Dim)
			}
		}
	}
	other, err := NewP1(hierarchy(t, 2, 2, 0))
	if err != nil {
		t.Fatal(err)
	}
	m := hierarchy(t, 2, 4, 0)
	got, err := other.WithBoundary(m)
	if err != nil || len(got.Area) != m.NumCells() {
		t.Errorf("another mesh: %v, %d areas for %d cells", err, len(got.Area), m.NumCells())
	}
}

// pinOne returns a copy of m in which only node 0 is a boundary node.
func pinOne(m *mesh.Mesh) *mesh.Mesh {
	c := *m
	c.Boundary = make([]bool, m.NumNodes())
	c.Boundary[0] = true
	return &c
}
