package estimate

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

func eqMust[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

// eqMeshes are the 2-D domains of the balance test.
func eqMeshes(t *testing.T) map[string]*mesh.Mesh {
	t.Helper()
	sq := eqMust(mesh.Rectangle(0, 1, 0, 1, 4, 4))
	sq = eqMust(sq.Refine())
	return map[string]*mesh.Mesh{
		"square": sq,
		"lshape": eqMust(mesh.LShape(4)),
		"disk":   eqMust(mesh.Disk(1, 24, 0.2)),
	}
}

// eqOutward returns the outward unit normal of edge i (opposite vertex i)
// of cell k.
func eqOutward(m *mesh.Mesh, k, i int) (n [2]float64, length float64) {
	c := m.Cells[k]
	a, b, o := m.Nodes[c[(i+1)%3]], m.Nodes[c[(i+2)%3]], m.Nodes[c[i]]
	dx, dy := b.X-a.X, b.Y-a.Y
	length = math.Hypot(dx, dy)
	n = [2]float64{dy / length, -dx / length}
	if n[0]*(a.X-o.X)+n[1]*(a.Y-o.Y) < 0 {
		n = [2]float64{-n[0], -n[1]}
	}
	return n, length
}

// TestEquilibratedBalance checks, independently of the construction, that
// y* is an H(div) field whose divergence balances f in the sense of RT_k:
// (1) the normal component y*·n agrees from both sides of every interior
// edge; (2) the divergence theorem ∮_∂T y*·n = ∫_T div y* holds; (3) the
// moments ∫_T (div y* + f) φ vanish for φ ∈ P_k(T). The source is not a
// polynomial and v is a rough function, so nothing is balanced by luck.
func TestEquilibratedBalance(t *testing.T) {
	G := eqMust(convex.Power(3))
	f := func(x, y float64) float64 { return math.Exp(x) * math.Cos(3*y) }
	line := fem.Line(6)
	tri := fem.Triangle(8) // the projection's rule: moments vanish to rounding
	for name, m := range eqMeshes(t) {
		for _, order := range []int{0, 1} {
			s := eqMust(fem.NewP1(m))
			rng := rand.New(rand.NewPCG(7, uint64(order)))
			v := make([]float64, m.NumNodes())
			for i, p := range m.Nodes {
				if !m.Boundary[i] {
					v[i] = math.Sin(3*p.X)*p.Y + 0.1*rng.Float64()
				}
			}
			y, err := Equilibrate(context.Background(), s, G, v, FuncSource(m, f), EquilibrateOptions{Order: order, Degree: 8})
			if err != nil {
				t.Fatalf("%s k=%d: %v", name, order, err)
			}
			var scale float64
			for k := range m.Cells {
				yy, _ := y.At(k, [3]float64{1.0 / 3, 1.0 / 3, 1.0 / 3})
				scale = math.Max(scale, math.Hypot(yy[0], yy[1]))
			}
			// Normal fluxes per edge from each side, keyed by node pair.
			seen := map[[2]int32][]float64{}
			var worstJump, worstGauss, worstMoment float64
			for k, c := range m.Cells {
				var boundaryFlux float64
				for i := range 3 {
					n, l := eqOutward(m, k, i)
					a, b := (i+1)%3, (i+2)%3
					key := [2]int32{c[a], c[b]}
					pts := make([]float64, len(line.Points))
					for q, p := range line.Points {
						// Points ordered from the lower node number up.
						tq := p[0]
						if c[a] > c[b] {
							key = [2]int32{c[b], c[a]}
							tq = 1 - p[0]
						}
						var lam [3]float64
						lam[a], lam[b] = 1-tq, tq
						yy, _ := y.At(k, lam)
						yn := yy[0]*n[0] + yy[1]*n[1]
						boundaryFlux += l * line.Weights[q] * yn
						pts[q] = yn
					}
					if other, ok := seen[key]; ok {
						// The outward normals are opposite: y·n must cancel.
						for q := range pts {
							worstJump = math.Max(worstJump, math.Abs(pts[q]+other[q]))
						}
					} else {
						seen[key] = pts
					}
				}
				var divInt float64
				var moment [3]float64
				for q, p := range tri.Points {
					lam := [3]float64{1 - p[0] - p[1], p[0], p[1]}
					_, d := y.At(k, lam)
					x, yc := eqPoint(m, k, lam)
					w := 2 * s.Area[k] * tri.Weights[q]
					divInt += w * d
					for a := range 3 {
						phi := 1.0
						if order == 1 {
							phi = lam[a]
						}
						moment[a] += w * (d + f(x, yc)) * phi
					}
				}
				worstGauss = math.Max(worstGauss, math.Abs(boundaryFlux-divInt)/s.Area[k])
				for a := range 3 {
					worstMoment = math.Max(worstMoment, math.Abs(moment[a])/s.Area[k])
				}
			}
			t.Logf("%s k=%d: normal jump %.1e, divergence theorem %.1e, moment %.1e (|y*| up to %.2g)", name, order, worstJump, worstGauss, worstMoment, scale)
			const tol = 1e-11
			if worstJump > tol*scale || worstGauss > tol*scale || worstMoment > tol*(scale+1) {
				t.Errorf("%s k=%d: normal jump %.2e, divergence theorem %.2e, moment %.2e (scale %.2e)", name, order, worstJump, worstGauss, worstMoment, scale)
			}
		}
	}
}

// eqIdentity returns μ(v) = ∫ D_G(∇v, ∂G(∇u)), μ*(y*) = ∫ D_G(∇u, y*) and
// D = ∫ D_G(∇v, y*) by the rule r, with ∇u given.
func eqIdentity(s *fem.P1, G convex.Potential, v []float64, grad func(x, y float64) [2]float64, y Flux, r fem.Rule) (mu, muStar, D float64) {
	m := s.Mesh
	gv := make([][2]float64, m.NumCells())
	s.Gradient(v, gv)
	for k := range m.Cells {
		for q, p := range r.Points {
			lam := [3]float64{1 - p[0] - p[1], p[0], p[1]}
			w := 2 * s.Area[k] * r.Weights[q]
			if m.Dim == 1 {
				lam = [3]float64{1 - p[0], p[0], 0}
				w = s.Area[k] * r.Weights[q]
			}
			x, yc := eqPoint(m, k, lam)
			gu := grad(x, yc)
			ys, _ := y.At(k, lam)
			mu += w * convex.Gap(G, gv[k], convex.Flux(G, gu))
			muStar += w * convex.Gap(G, gu, ys)
			D += w * convex.Gap(G, gv[k], ys)
		}
	}
	return mu, muStar, D
}

// TestEquilibratedPragerSynge checks ‖∇(u−v)‖² + ‖∇u − y‖² = ‖∇v − y‖² (Prager &
// Synge, Quart. Appl. Math. 5 (1947); docs/checks.md item 13) for G = |ξ|²/2,
// i.e. μ + μ* = D with the halves, for v = the interpolant of u plus a
// random interior perturbation (any v with v = u on ∂Ω is allowed) and f a
// polynomial of degree ≤ k, so that the residual vanishes:
// u = xy on the unit square (f = 0, linear on every boundary edge) and
// u = xy(1 − x − y) on the unit triangle (f = 2(x + y), zero on ∂Ω).
func TestEquilibratedPragerSynge(t *testing.T) {
	G := eqMust(convex.Power(2))
	sq := eqMust(mesh.Rectangle(0, 1, 0, 1, 8, 8))
	tri := eqMust(mesh.Polygon([]mesh.Point{{X: 0, Y: 0}, {X: 1, Y: 0}, {X: 0, Y: 1}}, 0.1))
	cases := []struct {
		name  string
		m     *mesh.Mesh
		order int
		u     func(x, y float64) float64
		grad  func(x, y float64) [2]float64
		f     func(x, y float64) float64
	}{
		{"square/xy/RT0", sq, 0, func(x, y float64) float64 { return x * y },
			func(x, y float64) [2]float64 { return [2]float64{y, x} }, func(x, y float64) float64 { return 0 }},
		{"square/xy/RT1", sq, 1, func(x, y float64) float64 { return x * y },
			func(x, y float64) [2]float64 { return [2]float64{y, x} }, func(x, y float64) float64 { return 0 }},
		{"triangle/cubic/RT1", tri, 1, func(x, y float64) float64 { return x * y * (1 - x - y) },
			func(x, y float64) [2]float64 { return [2]float64{y * (1 - 2*x - y), x * (1 - x - 2*y)} },
			func(x, y float64) float64 { return 2 * (x + y) }},
	}
	for _, c := range cases {
		s := eqMust(fem.NewP1(c.m))
		v := make([]float64, c.m.NumNodes())
		rng := rand.New(rand.NewPCG(3, 4))
		for i, p := range c.m.Nodes {
			v[i] = c.u(p.X, p.Y)
			if !c.m.Boundary[i] {
				v[i] += 0.01 * (rng.Float64() - 0.5)
			}
		}
		y, err := Equilibrate(context.Background(), s, G, v, FuncSource(c.m, c.f), EquilibrateOptions{Order: c.order})
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		// Integrands are polynomials of degree ≤ 4: the degree-8 rule is exact.
		mu, muStar, D := eqIdentity(s, G, v, c.grad, y, fem.Triangle(8))
		rel := math.Abs(mu+muStar-D) / D
		t.Logf("%s: μ = %.6e, μ* = %.6e, D = %.6e, |μ + μ* − D|/D = %.1e", c.name, mu, muStar, D, rel)
		if rel > 1e-12 {
			t.Errorf("%s: Prager–Synge fails: μ + μ* = %.15e, D = %.15e", c.name, mu+muStar, D)
		}
	}
}

// TestEquilibratedHypercircle checks the nonlinear hypercircle (E-ID with r = 0,
// docs/math.md §4; Bartels & Kaltenbach, arXiv:2402.06429, docs/checks.md item 15) on
// the radial problem −div(|∇u|^{α−2}∇u) = 1 in the unit disk (docs/checks.md item
// 9: u = ((α−1)/α) 2^{−1/(α−1)} (1 − r^{α'}), exact flux −x/2). The mesh is
// a polygon inscribed in the disk, on whose boundary u ≠ 0 = v, so the
// identity carries its boundary term:
// μ + μ* = D + ∫_∂Ω (u − v)(p* − y*)·n.
func TestEquilibratedHypercircle(t *testing.T) {
	m := eqMust(mesh.Disk(1, 24, 0.2))
	s := eqMust(fem.NewP1(m))
	for _, alpha := range []float64{1.5, 3, 4} {
		for _, order := range []int{0, 1} {
			G := eqMust(convex.Power(alpha))
			ap := alpha / (alpha - 1)
			u := func(x, y float64) float64 {
				return (alpha - 1) / alpha * math.Pow(2, -1/(alpha-1)) * (1 - math.Pow(math.Hypot(x, y), ap))
			}
			grad := func(x, y float64) [2]float64 { return convex.DualFlux(G, [2]float64{-x / 2, -y / 2}) }
			v := make([]float64, m.NumNodes())
			for i, p := range m.Nodes {
				if !m.Boundary[i] {
					v[i] = u(p.X, p.Y)
				}
			}
			y, err := Equilibrate(context.Background(), s, G, v, FuncSource(m, func(x, y float64) float64 { return 1 }), EquilibrateOptions{Order: order, Newton: 2})
			if err != nil {
				t.Fatal(err)
			}
			mu, muStar, D := eqIdentity(s, G, v, grad, y, fem.Collapsed(16))
			bt := eqBoundaryTerm(m, u, v, y)
			rel := math.Abs(mu+muStar-D-bt) / D
			t.Logf("α=%g k=%d: μ = %.6e, μ* = %.6e, D = %.6e, boundary term %.2e, identity defect %.1e", alpha, order, mu, muStar, D, bt, rel)
			if rel > 1e-6 {
				t.Errorf("α=%g k=%d: μ + μ* = %.12e but D + boundary term = %.12e", alpha, order, mu+muStar, D+bt)
			}
		}
	}
}

// eqBoundaryTerm returns ∫_∂Ω (u − v)(p* − y*)·n with p* = −x/2.
func eqBoundaryTerm(m *mesh.Mesh, u func(x, y float64) float64, v []float64, y Flux) float64 {
	line := fem.Line(20)
	count := map[[2]int32]int{}
	for _, c := range m.Cells {
		for i := range 3 {
			a, b := c[(i+1)%3], c[(i+2)%3]
			count[[2]int32{min(a, b), max(a, b)}]++
		}
	}
	var sum float64
	for k, c := range m.Cells {
		for i := range 3 {
			a, b := (i+1)%3, (i+2)%3
			if count[[2]int32{min(c[a], c[b]), max(c[a], c[b])}] != 1 {
				continue
			}
			n, l := eqOutward(m, k, i)
			for q, p := range line.Points {
				var lam [3]float64
				lam[a], lam[b] = 1-p[0], p[0]
				x, yc := eqPoint(m, k, lam)
				ys, _ := y.At(k, lam)
				vv := lam[a]*v[c[a]] + lam[b]*v[c[b]]
				pn := (-x/2-ys[0])*n[0] + (-yc/2-ys[1])*n[1]
				sum += l * line.Weights[q] * (u(x, yc) - vv) * pn
			}
		}
	}
	return sum
}

// TestEquilibrated1D checks the 1-D flux on (0, 1) with f = 1 and the exact
// solution of docs/checks.md item 9 (u = ((α−1)/α)((1/2)^{α'} − |x − 1/2|^{α'})):
// y*' = −1 exactly, the hypercircle μ + μ* = D (v = u at both ends), and
// that the constant of y* minimises D (shifting it either way increases D).
func TestEquilibrated1D(t *testing.T) {
	m := eqMust(mesh.Interval(0, 1, 40))
	s := eqMust(fem.NewP1(m))
	for _, alpha := range []float64{1.5, 2, 3, 4} {
		for _, order := range []int{0, 1} {
			G := eqMust(convex.Power(alpha))
			ap := alpha / (alpha - 1)
			u := func(x float64) float64 {
				return (alpha - 1) / alpha * (math.Pow(0.5, ap) - math.Pow(math.Abs(x-0.5), ap))
			}
			grad := func(x, _ float64) [2]float64 { return convex.DualFlux(G, [2]float64{0.5 - x, 0}) }
			v := make([]float64, m.NumNodes())
			for i, p := range m.Nodes {
				// A non-symmetric perturbation, so the optimal constant is not 1/2.
				v[i] = u(p.X) + 0.002*math.Sin(math.Pi*p.X)*p.X
			}
			f := func(k int, lam [3]float64) float64 { return 1 }
			y, err := Equilibrate(context.Background(), s, G, v, f, EquilibrateOptions{Order: order})
			if err != nil {
				t.Fatal(err)
			}
			for k := range m.Cells {
				for _, l := range []float64{0, 0.3, 1} {
					if _, d := y.At(k, [3]float64{1 - l, l, 0}); math.Abs(d+1) > 1e-12 {
						t.Fatalf("α=%g k=%d: y*' = %g in cell %d, want −1", alpha, order, d, k)
					}
				}
			}
			r := fem.Line(40)
			mu, muStar, D := eqIdentity(s, G, v, grad, y, r)
			rel := math.Abs(mu+muStar-D) / D
			shifted := func(c float64) float64 {
				_, _, d := eqIdentity(s, G, v, grad, shiftFlux{y, c}, r)
				return d
			}
			dPlus, dMinus := shifted(1e-4), shifted(-1e-4)
			t.Logf("α=%g k=%d: μ = %.4e, μ* = %.4e, D = %.4e, identity defect %.1e; D(c ± 1e-4) − D = %.1e, %.1e", alpha, order, mu, muStar, D, rel, dPlus-D, dMinus-D)
			if rel > 1e-8 || !(dPlus > D) || !(dMinus > D) {
				t.Errorf("α=%g k=%d: identity defect %.1e; D = %.12e, shifted %.12e, %.12e", alpha, order, rel, D, dPlus, dMinus)
			}
		}
	}
}

// shiftFlux adds a constant to the first component of a flux.
type shiftFlux struct {
	y Flux
	c float64
}

func (s shiftFlux) At(k int, lam [3]float64) ([2]float64, float64) {
	y, d := s.y.At(k, lam)
	y[0] += s.c
	return y, d
}
func (s shiftFlux) Degree() int { return s.y.Degree() }

// eqSine is u = sin(πx) sin(πy) on the unit square with the source
// f = −div(|∇u|^{α−2}∇u) = −|∇u|^{α−2}(Δu + (α−2) ∇uᵀD²u∇u / |∇u|²).
func eqSine(alpha float64) (grad func(x, y float64) [2]float64, f func(x, y float64) float64) {
	grad = func(x, y float64) [2]float64 {
		return [2]float64{math.Pi * math.Cos(math.Pi*x) * math.Sin(math.Pi*y), math.Pi * math.Sin(math.Pi*x) * math.Cos(math.Pi*y)}
	}
	f = func(x, y float64) float64 {
		g := grad(x, y)
		sx, cx, sy, cy := math.Sin(math.Pi*x), math.Cos(math.Pi*x), math.Sin(math.Pi*y), math.Cos(math.Pi*y)
		p2 := math.Pi * math.Pi
		hxx, hxy, hyy := -p2*sx*sy, p2*cx*cy, -p2*sx*sy
		n2 := g[0]*g[0] + g[1]*g[1]
		if n2 == 0 {
			return 0
		}
		q := g[0]*(hxx*g[0]+hxy*g[1]) + g[1]*(hxy*g[0]+hyy*g[1])
		return -math.Pow(n2, alpha/2-1) * (hxx + hyy + (alpha-2)*q/n2)
	}
	return grad, f
}

// TestEquilibratedEfficiency reports D/μ for v = the P1 interpolant of
// u = sin(πx) sin(πy) on the unit square (not the discrete solution: the
// nonlinear solver is not used here). By (E-ID) D/μ = 1 + (μ* − ∫ r(u − v))/μ,
// so with the oscillation r = f − Π_k f it may dip below 1. It asserts that
// for RT1 at α = 2 the index approaches 1 under refinement, and that it
// at n = 32 stays within [0.99, 1.8] (RT0) and [0.99, 1.05] (RT1).
func TestEquilibratedEfficiency(t *testing.T) {
	if testing.Short() {
		t.Skip("efficiency table")
	}
	for _, alpha := range []float64{1.3, 1.5, 2, 3, 4, 6} {
		G := eqMust(convex.Power(alpha))
		grad, f := eqSine(alpha)
		for _, order := range []int{0, 1} {
			prev := math.Inf(1)
			for _, n := range []int{8, 16, 32} {
				m := eqMust(mesh.Rectangle(0, 1, 0, 1, 4, 4))
				for l := 4; l < n; l *= 2 {
					m = eqMust(m.Refine())
				}
				s := eqMust(fem.NewP1(m))
				v := make([]float64, m.NumNodes())
				for i, p := range m.Nodes {
					v[i] = math.Sin(math.Pi*p.X) * math.Sin(math.Pi*p.Y)
				}
				y, err := Equilibrate(context.Background(), s, G, v, FuncSource(m, f), EquilibrateOptions{Order: order, Newton: 1})
				if err != nil {
					t.Fatal(err)
				}
				mu, _, D := eqIdentity(s, G, v, grad, y, fem.Triangle(6))
				idx := D / mu
				t.Logf("α=%g RT%d n=%d: μ = %.3e, D = %.3e, D/μ = %.4f", alpha, order, n, mu, D, idx)
				if dev := math.Abs(idx - 1); order == 1 && alpha == 2 && !(dev < prev) {
					t.Errorf("α=2 RT1: |D/μ − 1| = %g did not fall under refinement (was %g)", dev, prev)
				} else {
					prev = dev
				}
				if hi := []float64{1.8, 1.05}[order]; n == 32 && (idx > hi || idx < 0.99) {
					t.Errorf("α=%g RT%d n=%d: D/μ = %g is far from 1", alpha, order, n, idx)
				}
			}
		}
	}
}

// TestEquilibratorPowerWeights checks the closed forms that gradients and
// weights use for the power potential against the general route: σ equals
// convex.Flux and the model weight equals the inverse of convex.Hessian
// (identities that must hold to rounding), for gradients above, at and
// below the regularisation radius, zero included, and for exponents on
// both sides of 2.
func TestEquilibratorPowerWeights(t *testing.T) {
	m := eqMust(mesh.Rectangle(0, 1, 0, 1, 4, 4))
	s := eqMust(fem.NewP1(m))
	for _, alpha := range []float64{1.3, 1.5, 2, 3, 4.5} {
		G := eqMust(convex.Power(alpha))
		q, err := newEquilibrator(s, 0)
		if err != nil {
			t.Fatal(err)
		}
		v := make([]float64, m.NumNodes())
		for i, p := range m.Nodes {
			// Steep, flat and vanishing gradients on different cells.
			v[i] = 3*p.X*p.X - p.Y + 1e-3*p.X*p.Y
			if p.X > 0.7 {
				v[i] = 0
			}
		}
		gmax := q.gradients(G, v)
		reg := 0.05 * gmax
		w := make([][3]float64, m.NumCells())
		q.weights(G, reg, w)
		for k, g := range q.grad {
			sig := convex.Flux(G, g)
			want := inv2(convex.Hessian(G, g, reg))
			for d := range 2 {
				if math.Abs(q.sigma[k][d]-sig[d]) > 1e-13*(1+math.Abs(sig[d])) {
					t.Errorf("α=%g cell %d ∇v=%v: σ = %v, convex.Flux %v", alpha, k, g, q.sigma[k], sig)
				}
			}
			for j := range 3 {
				if math.Abs(w[k][j]-want[j]) > 1e-12*(math.Abs(want[0])+math.Abs(want[2])) {
					t.Errorf("α=%g cell %d ∇v=%v: weight %v, inverse Hessian %v", alpha, k, g, w[k], want)
				}
			}
		}
	}
}

// TestCellMatrixPattern checks the pattern of the RT1 stream matrix
// against the set of coupled dof pairs built by brute force: rows sorted
// without repeats, exactly the coupled pairs stored, and every local
// position pointing at its pair (pinned dofs, −1, have none).
func TestCellMatrixPattern(t *testing.T) {
	for name, m := range eqMeshes(t) {
		s := eqMust(fem.NewP1(m))
		q, err := newEquilibrator(s, 1)
		if err != nil {
			t.Fatal(err)
		}
		st := q.st
		want := map[[2]int32]bool{}
		for _, d := range st.dof {
			for _, x := range d {
				for _, y := range d {
					if x >= 0 && y >= 0 {
						want[[2]int32{x, y}] = true
					}
				}
			}
		}
		a := st.a
		if a.NNZ() != len(want) {
			t.Errorf("%s: %d entries, want %d coupled pairs", name, a.NNZ(), len(want))
		}
		for i := range a.Rows {
			for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
				if p > a.RowPtr[i] && a.Col[p] <= a.Col[p-1] {
					t.Fatalf("%s: row %d not strictly increasing at %d", name, i, p)
				}
				if !want[[2]int32{int32(i), a.Col[p]}] {
					t.Errorf("%s: entry (%d, %d) couples no cell's dofs", name, i, a.Col[p])
				}
			}
		}
		for k, d := range st.dof {
			for x, dx := range d {
				for y, dy := range d {
					p := st.pos[k][6*x+y]
					switch {
					case dx < 0 || dy < 0:
						if p != -1 {
							t.Errorf("%s: cell %d local (%d, %d) pinned but position %d", name, k, x, y, p)
						}
					case p < a.RowPtr[dx] || p >= a.RowPtr[dx+1] || a.Col[p] != dy:
						t.Errorf("%s: cell %d local (%d, %d) → position %d, not entry (%d, %d)", name, k, x, y, p, dx, dy)
					}
				}
			}
		}
	}
}
