package fem

import (
	"context"
	"math"
	"testing"

	"gapbook/mesh"
)

// lShape returns a uniform mesh of (−1, 1)² \ [0, 1) × (−1, 0] with n
// squares per unit length, each cut along a diagonal.
func lShape(t testing.TB, n int) *mesh.Mesh {
	t.Helper()
	m := &mesh.Mesh{Dim: 2}
	N := 2 * n
	id := make([]int32, (N+1)*(N+1))
	inside := func(i, j int) bool { return !(i > n && j < n) } // removed: x > 0, y < 0
	for j := 0; j <= N; j++ {
		for i := 0; i <= N; i++ {
			id[j*(N+1)+i] = -1
			if inside(i, j) {
				x, y := -1+float64(i)/float64(n), -1+float64(j)/float64(n)
				id[j*(N+1)+i] = int32(len(m.Nodes))
				m.Nodes = append(m.Nodes, mesh.Point{X: x, Y: y})
				onB := i == 0 || j == 0 || i == N || j == N || (i >= n && j == n) || (i == n && j <= n)
				m.Boundary = append(m.Boundary, onB)
			}
		}
	}
	for j := 0; j < N; j++ {
		for i := 0; i < N; i++ {
			if i >= n && j < n {
				continue
			}
			a, b, c, d := id[j*(N+1)+i], id[j*(N+1)+i+1], id[(j+1)*(N+1)+i+1], id[(j+1)*(N+1)+i]
			m.Cells = append(m.Cells, [3]int32{b, c, a}, [3]int32{d, a, c})
		}
	}
	return m
}

// lowerBound applies Liu's guaranteed bound λ ≥ λ_CR / (1 + (0.1893 h)² λ_CR)
// (docs/checks.md item 4; Liu, Appl. Math. Comput. 267 (2015)), with the
// discrete eigenvalue lowered by its Krylov–Weinstein radius.
func lowerBound(ev Eigen, h float64) float64 {
	l := ev.Value - ev.Radius
	return l / (1 + (0.1893*h)*(0.1893*h)*l)
}

func TestEigenvalueBounds(t *testing.T) {
	sq, _ := mesh.Rectangle(0, 1, 0, 1, 16, 16)
	cases := []struct {
		name  string
		m     *mesh.Mesh
		h     float64
		exact float64
	}{
		// docs/checks.md item 2: 2π², separation of variables (textbook).
		{"unit square", sq, math.Sqrt2 / 16, 2 * math.Pi * math.Pi},
		// docs/checks.md item 3: Betcke & Trefethen, SIAM Review 47 (2005) [M],
		// confirmed there by finite element extrapolation.
		{"L-shape", lShape(t, 8), math.Sqrt2 / 8, 9.6397238440219},
	}
	for _, c := range cases {
		cr, err := NewCR(c.m)
		if err != nil {
			t.Fatal(err)
		}
		ev, err := cr.FirstEigenvalue(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		if !(ev.Radius < 1e-10*ev.Value) {
			t.Errorf("%s: eigenvalue radius %g not at full accuracy", c.name, ev.Radius)
		}
		lo := lowerBound(ev, c.h)
		p1, _ := NewP1(c.m)
		up, err := p1.FirstEigenvalue(context.Background())
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("%s: CR %.10f (radius %.1e, %d steps, %d PCG its)  lower bound %.10f  exact %.10f  P1 %.10f",
			c.name, ev.Value, ev.Radius, ev.Outer, ev.Stats.Iterations, lo, c.exact, up.Value)
		if !(lo < c.exact) {
			t.Errorf("%s: lower bound %.12f is not below %.12f", c.name, lo, c.exact)
		}
		if !(up.Value > c.exact) {
			t.Errorf("%s: P1 eigenvalue %.12f is not above %.12f", c.name, up.Value, c.exact)
		}
		// Both are close: the check cannot pass with a wrong matrix.
		if math.Abs(ev.Value/c.exact-1) > 0.03 || math.Abs(up.Value/c.exact-1) > 0.05 {
			t.Errorf("%s: CR %.6f or P1 %.6f far from %.6f", c.name, ev.Value, up.Value, c.exact)
		}
	}
}

// For linear u, the CR interpolant is exact, so its energy is ∫|∇u|².
func TestCRStiffnessExactForLinear(t *testing.T) {
	m := hierarchy(t, 2, 3, 1)
	s, err := newCR(m, false)
	if err != nil {
		t.Fatal(err)
	}
	a, mm := s.NewMatrix(), s.NewMatrix()
	s.Stiffness(a)
	s.Mass(mm)
	u := make([]float64, s.NumFree())
	s.Interpolate(func(x, y float64) float64 { return 2*x - 0.5*y + 1 }, u)
	au := make([]float64, len(u))
	a.MulVec(au, u)
	if got, want := dot(u, au), (4+0.25)*1.0; math.Abs(got-want) > 1e-12 {
		t.Errorf("uᵀAu = %.15g, want %.15g", got, want)
	}
	// ∫ u² for u = x: the midpoint rule is exact for quadratics, = 1/3.
	s.Interpolate(func(x, y float64) float64 { return x }, u)
	mm.MulVec(au, u)
	if got := dot(u, au); math.Abs(got-1.0/3) > 1e-13 {
		t.Errorf("∫x² = %.15g, want 1/3", got)
	}
}
