package nonlinear

import (
	"context"
	"errors"
	"fmt"
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

func power(t *testing.T, a float64) convex.Potential {
	t.Helper()
	G, err := convex.Power(a)
	if err != nil {
		t.Fatal(err)
	}
	return G
}

// refined returns m refined k times (keeping the hierarchy).
func refined(t testing.TB, m *mesh.Mesh, err error, k int) *mesh.Mesh {
	t.Helper()
	if err != nil {
		t.Fatal(err)
	}
	for range k {
		if m, err = m.Refine(); err != nil {
			t.Fatal(err)
		}
	}
	return m
}

// checkHistory asserts that J never increases within a stage (same level
// and continuation parameter), up to rounding of the energy.
func checkHistory(t *testing.T, h []Step) {
	t.Helper()
	if len(h) == 0 {
		t.Fatal("empty history")
	}
	for i := 1; i < len(h); i++ {
		a, b := h[i-1], h[i]
		if a.Level == b.Level && a.Epsilon == b.Epsilon && b.Energy > a.Energy+1e-13*math.Abs(a.Energy) {
			t.Errorf("energy rose from %.17g to %.17g at step %d", a.Energy, b.Energy, i)
		}
	}
}

// Closed form of docs/checks.md item 9 (1-D, f = 1 on (0, 1), u(0) = u(1) = 0):
// u = ((p − 1)/p)((1/2)^{p'} − |x − 1/2|^{p'}), ∫u = (1/2)^{p'}/(p' + 1)
// [derived; docs/checks.md status D, N].
func TestInterval(t *testing.T) {
	for _, p := range []float64{1.5, 2, 3, 4} {
		t.Run(fmt.Sprint("p=", p), func(t *testing.T) {
			q := p / (p - 1)
			exact := func(x float64) float64 { return (p - 1) / p * (math.Pow(0.5, q) - math.Pow(math.Abs(x-0.5), q)) }
			intU := math.Pow(0.5, q) / (q + 1)
			var errs, ints []float64
			for _, k := range []int{4, 5, 6} { // 32, 64, 128 cells
				m, err := mesh.Interval(0, 1, 2)
				m = refined(t, m, err, k)
				r, err := Solve(context.Background(), m, problem.Steady(power(t, p), func(x, y float64) float64 { return 1 }, nil), Options{})
				if err != nil {
					t.Fatal(err)
				}
				checkHistory(t, r.History)
				e, integral := 0.0, 0.0
				for i, n := range m.Nodes {
					e = math.Max(e, math.Abs(r.U[i]-exact(n.X)))
				}
				for _, c := range m.Cells {
					integral += (m.Nodes[c[1]].X - m.Nodes[c[0]].X) * (r.U[c[0]] + r.U[c[1]]) / 2
				}
				errs, ints = append(errs, e), append(ints, math.Abs(integral-intU))
			}
			if p == 2 {
				// For p = 2 in 1-D, P1 is exact at the nodes (common
				// practice, no source: the Green's function is piecewise
				// linear).
				if errs[2] > 1e-13 {
					t.Errorf("nodal error %g, want rounding", errs[2])
				}
				return
			}
			// Observed nodal rates: 2.0 (p = 1.5), about 1.5 (p = 3, 4:
			// u' = ψ(1/2 − x) with ψ(s) = |s|^{p'−1} sign s is not smooth at
			// x = 1/2, so the midpoint-rule error of the node values is
			// O(h^{p'})).
			for i := 1; i < len(errs); i++ {
				rate := math.Log2(errs[i-1] / errs[i])
				ir := math.Log2(ints[i-1] / ints[i])
				t.Logf("nodal error %.3e rate %.2f, ∫u error %.3e rate %.2f", errs[i], rate, ints[i], ir)
				if rate < math.Min(q, 2)-0.2 || ir < math.Min(q, 2)-0.2 {
					t.Errorf("rate %.2f (∫u %.2f), want about %.2f", rate, ir, math.Min(q, 2))
				}
			}
		})
	}
}

// The disk problem of docs/checks.md item 9 on inscribed polygons: the exact
// solution restricted to the polygon, with its own (non-linear) boundary
// values, interpolated. The H¹ error falls like h.
func TestDisk(t *testing.T) {
	for _, p := range []float64{1.5, 3} {
		t.Run(fmt.Sprint("p=", p), func(t *testing.T) {
			q := p / (p - 1)
			c := (p - 1) / p * math.Pow(2, -1/(p-1))
			u := func(x, y float64) float64 { return c * (1 - math.Pow(x*x+y*y, q/2)) }
			grad := func(x, y float64) (float64, float64) {
				r := math.Hypot(x, y)
				if r == 0 {
					return 0, 0
				}
				d := -c * q * math.Pow(r, q-2)
				return d * x, d * y
			}
			var errs []float64
			for _, h := range []float64{0.2, 0.1, 0.05} {
				m, err := mesh.Disk(1, 24, h)
				if err != nil {
					t.Fatal(err)
				}
				r, err := Solve(context.Background(), m, problem.Steady(power(t, p), func(x, y float64) float64 { return 1 }, u), Options{})
				if err != nil {
					t.Fatal(err)
				}
				checkHistory(t, r.History)
				s, _ := fem.NewP1(m)
				errs = append(errs, s.H1Error(r.U, grad, s.Rule(6)))
			}
			for i := 1; i < len(errs); i++ {
				rate := math.Log2(errs[i-1] / errs[i])
				t.Logf("H1 error %.3e rate %.2f", errs[i], rate)
				if rate < 0.8 {
					t.Errorf("H1 rate %.2f, want about 1", rate)
				}
			}
		})
	}
}

// Manufactured smooth solutions whose gradient never vanishes:
// ∇(sin(x + 2y) + x) = (cos s + 1, 2 cos s) ≠ 0. Observed rates, P1 on
// uniform refinements: H¹ 1.0, L² 2.0 for every α (common practice, no
// source: the a priori rates for smooth solutions with non-degenerate
// gradients).
func TestManufacturedRates(t *testing.T) {
	const src = "sin(x + 2*y) + x"
	domains := []struct {
		name string
		mesh func(k int) *mesh.Mesh
	}{
		{"square", func(k int) *mesh.Mesh { m, err := mesh.Rectangle(0, 1, 0, 1, 2, 2); return refined(t, m, err, k) }},
		{"lshape", func(k int) *mesh.Mesh { m, err := mesh.LShape(1); return refined(t, m, err, k) }},
	}
	for _, d := range domains {
		for _, a := range []float64{1.5, 2, 3, 4} {
			t.Run(fmt.Sprintf("%s/p=%g", d.name, a), func(t *testing.T) {
				man, err := problem.Manufacture(src, power(t, a))
				if err != nil {
					t.Fatal(err)
				}
				f, u, grad := man.At(0)
				var h1, l2 []float64
				for _, k := range []int{3, 4, 5} {
					m := d.mesh(k)
					r, err := Solve(context.Background(), m, problem.Steady(man.G, f, u), Options{})
					if err != nil {
						t.Fatal(err)
					}
					checkHistory(t, r.History)
					s, _ := fem.NewP1(m)
					h1 = append(h1, s.H1Error(r.U, grad, s.Rule(6)))
					l2 = append(l2, s.L2Error(r.U, u, s.Rule(6)))
				}
				for i := 1; i < len(h1); i++ {
					r1, r0 := math.Log2(h1[i-1]/h1[i]), math.Log2(l2[i-1]/l2[i])
					t.Logf("H1 %.3e rate %.2f, L2 %.3e rate %.2f", h1[i], r1, l2[i], r0)
					if math.Abs(r1-1) > 0.1 || math.Abs(r0-2) > 0.2 {
						t.Errorf("rates H1 %.2f, L2 %.2f; want 1 and 2", r1, r0)
					}
				}
			})
		}
	}
}

// The extreme exponents of the brief converge to the tolerances.
func TestExtremeExponents(t *testing.T) {
	for _, a := range []float64{1.1, 1.3, 10} {
		t.Run(fmt.Sprint("p=", a), func(t *testing.T) {
			man, err := problem.Manufacture("sin(x + 2*y) + x", power(t, a))
			if err != nil {
				t.Fatal(err)
			}
			f, u, grad := man.At(0)
			m, err := mesh.Rectangle(0, 1, 0, 1, 2, 2)
			m = refined(t, m, err, 4)
			r, err := Solve(context.Background(), m, problem.Steady(man.G, f, u), Options{})
			if err != nil {
				t.Fatal(err)
			}
			checkHistory(t, r.History)
			last := r.History[len(r.History)-1]
			switch {
			case a < 2 && !(last.Gap > 0 && last.Gap <= 1e-10):
				// Below α = 2 the certificate is the duality gap.
				t.Errorf("stopped at relative duality gap %g", last.Gap)
			case a >= 2 && (last.Decrement > 1e-10 || last.Residual > 1e-8):
				t.Errorf("stopped at decrement %g, residual %g", last.Decrement, last.Residual)
			}
			s, _ := fem.NewP1(m)
			if e := s.H1Error(r.U, grad, s.Rule(6)); e > 0.08 {
				t.Errorf("H1 error %g on 32×32", e)
			}
		})
	}
}

// With G = |ξ|^α/α, u_D = 0 and f = 1, testing the discrete equation with
// the solution itself gives α∫G(∇u_h) = ∫u_h, hence J(u_h) = −∫u_h/α' (the
// flow-rate identity of docs/math.md §4, exact for the discrete minimiser): its
// defect measures how far the returned solution is from the minimiser. The
// relative duality gap bounds the relative energy error; the identity's
// defect is of the order of its square root (common practice, no source:
// the energy error is quadratic in the error of w, the identity linear).
// α = 1.1 on the square once stopped at a relative energy error of 1e-3
// with a relative Newton decrement of 1e-10.
func TestFlowRateIdentity(t *testing.T) {
	for _, a := range []float64{1.1, 1.5, 3, 10} {
		for _, dom := range []string{"square", "lshape"} {
			t.Run(fmt.Sprintf("%s/p=%g", dom, a), func(t *testing.T) {
				m := unitLoadMesh(t, dom)
				G := power(t, a)
				r, err := Solve(context.Background(), m, problem.Steady(G, func(x, y float64) float64 { return 1 }, nil), Options{})
				if err != nil {
					t.Fatal(err)
				}
				checkHistory(t, r.History)
				s, _ := fem.NewP1(m)
				load := make([]float64, s.NumNodes())
				s.Load(func(x, y float64) float64 { return 1 }, s.Rule(1), load)
				q := 0.0
				for i := range load {
					q += load[i] * r.U[i]
				}
				grad := make([][2]float64, m.NumCells())
				s.Gradient(r.U, grad)
				e := 0.0
				for k, g := range grad {
					e += s.Area[k] * convex.Value(G, g)
				}
				defect := math.Abs(a*e-q) / q
				t.Logf("J = %.15e, ∫u = %.6e, defect %.2e, %d Newton steps", r.Energy, q, defect, r.Newton)
				if defect > 1e-5 || math.Abs(r.Energy-(e-q))/q > 1e-12 {
					t.Errorf("α∫G(∇u) = %.15e, ∫u = %.15e: relative defect %.2e", a*e, q, defect)
				}
			})
		}
	}
}

func unitLoadMesh(t *testing.T, dom string) *mesh.Mesh {
	if dom == "square" {
		m, err := mesh.Rectangle(0, 1, 0, 1, 2, 2)
		return refined(t, m, err, 4)
	}
	m, err := mesh.LShape(2)
	return refined(t, m, err, 3)
}

// A user formula near α = 1.1 (g” finite at 0, so no continuation) goes the
// primal-dual way with a numerical conjugate and must agree with the
// catalogue's RegPower(1.1, 0.01), ((t² + ε²)^{α/2} − ε^α)/α.
func TestCustomSingular(t *testing.T) {
	const a, eps = 1.1, 0.01
	custom, err := convex.Custom("((t^2+1e-4)^0.55 - 0.01^1.1)/1.1", func(t float64) (float64, float64, float64) {
		r := t*t + eps*eps
		return (math.Pow(r, a/2) - math.Pow(eps, a)) / a, t * math.Pow(r, a/2-1), math.Pow(r, a/2-1) + (a-2)*t*t*math.Pow(r, a/2-2)
	}, a)
	if err != nil {
		t.Fatal(err)
	}
	reg, err := convex.RegPower(a, eps)
	if err != nil {
		t.Fatal(err)
	}
	for _, dom := range []string{"square", "lshape"} {
		t.Run(dom, func(t *testing.T) {
			m := unitLoadMesh(t, dom)
			var us [][]float64
			for _, G := range []convex.Potential{custom, reg} {
				r, err := Solve(context.Background(), m, problem.Steady(G, func(x, y float64) float64 { return 1 }, nil), Options{Tol: 1e-13})
				if err != nil {
					t.Fatal(err)
				}
				if last := r.History[len(r.History)-1]; !(last.Gap > -1e-15 && last.Gap <= 1e-13) {
					t.Errorf("%v: relative duality gap %g", G, last.Gap)
				}
				us = append(us, r.U)
			}
			worst, top := 0.0, 0.0
			for i := range us[0] {
				worst = math.Max(worst, math.Abs(us[0][i]-us[1][i]))
				top = math.Max(top, math.Abs(us[1][i]))
			}
			if worst > 1e-6*top {
				t.Errorf("max difference %g of max %g", worst, top)
			}
		})
	}
}

// For α = 2 (G = |ξ|²/2), with and without a mass term, the solution is that
// of the linear system (K + cM) w = b + cMv − (lift), solved densely by
// gonum's LU.
func TestDenseQuadratic(t *testing.T) {
	m, err := mesh.Rectangle(0, 1, 0, 2, 3, 5)
	m = refined(t, m, err, 1)
	s, _ := fem.NewP1(m)
	f := func(x, y float64) float64 { return math.Exp(x) * math.Cos(3*y) }
	ud := func(x, y float64) float64 { return x*x - y + 0.5 }
	ref := make([]float64, s.NumNodes())
	s.Interpolate(func(x, y float64) float64 { return math.Sin(5 * x * y) }, ref)
	for _, c := range []float64{0, 7} {
		t.Run(fmt.Sprint("mass=", c), func(t *testing.T) {
			nf := s.NumFree()
			K, M := s.NewMatrix(), s.NewMatrix()
			s.Stiffness(nil, K)
			s.Mass(M)
			load := make([]float64, s.NumNodes())
			s.Load(f, s.Rule(DefaultLoadDegree), load)
			g := make([]float64, s.NumNodes())
			s.Interpolate(ud, g)
			rhs := make([]float64, nf)
			s.ToFree(load, rhs)
			s.Lift(nil, g, rhs)
			a := mat.NewDense(nf, nf, K.Dense())
			if c > 0 {
				// Mass term with the reference vector; its boundary part
				// (w − v = g − v there) also enters the free equations.
				d := make([]float64, s.NumNodes())
				for i := range d {
					if s.Free[i] < 0 {
						d[i] = g[i] - ref[i]
					} else {
						d[i] = -ref[i]
					}
				}
				md := fullMass(s, d)
				for i, n := range s.FreeNodes {
					rhs[i] -= c * md[n]
				}
				a.Add(a, scaled(c, mat.NewDense(nf, nf, M.Dense())))
			}
			var x mat.VecDense
			if err := x.SolveVec(a, mat.NewVecDense(nf, rhs)); err != nil {
				t.Fatal(err)
			}
			G, _ := convex.Quadratic(1)
			p := discrete{G: G, F: f, Dirichlet: ud}
			if c > 0 {
				p.Mass, p.Ref = c, ref
			}
			r, err := solve(context.Background(), m, p, Options{ResTol: 1e-12}, nil)
			if err != nil {
				t.Fatal(err)
			}
			worst := 0.0
			for i, n := range s.FreeNodes {
				worst = math.Max(worst, math.Abs(r.U[n]-x.AtVec(i)))
			}
			if worst > 1e-10 {
				t.Errorf("max difference to the dense solve %g", worst)
			}
		})
	}
}

func scaled(c float64, a *mat.Dense) *mat.Dense {
	a.Scale(c, a)
	return a
}

// fullMass returns M d over all nodes, element by element (|T|(1+δ_ij)/12).
func fullMass(s *fem.P1, d []float64) []float64 {
	out := make([]float64, len(d))
	for k, c := range s.Mesh.Cells {
		for i := range 3 {
			for j := range 3 {
				w := s.Area[k] / 12
				if i == j {
					w *= 2
				}
				out[c[i]] += w * d[c[j]]
			}
		}
	}
	return out
}

// A user formula equal to a catalogue potential gives the same solution:
// g(t) = t²/2 + t⁴/4 is PowerSum(1, 1, 4).
func TestCustomPotential(t *testing.T) {
	custom, err := convex.Custom("t^2/2 + t^4/4", func(t float64) (float64, float64, float64) {
		return t*t/2 + t*t*t*t/4, t + t*t*t, 1 + 3*t*t
	}, 4)
	if err != nil {
		t.Fatal(err)
	}
	sum, _ := convex.PowerSum(1, 1, 4)
	m, err := mesh.LShape(2)
	m = refined(t, m, err, 2)
	var us [][]float64
	for _, G := range []convex.Potential{custom, sum} {
		r, err := Solve(context.Background(), m, problem.Steady(G, func(x, y float64) float64 { return 10 }, nil), Options{ResTol: 1e-12})
		if err != nil {
			t.Fatal(err)
		}
		us = append(us, r.U)
	}
	for i := range us[0] {
		if d := math.Abs(us[0][i] - us[1][i]); d > 1e-12 {
			t.Fatalf("node %d: %g vs %g", i, us[0][i], us[1][i])
		}
	}
}

func TestNotConverged(t *testing.T) {
	m, err := mesh.Rectangle(0, 1, 0, 1, 2, 2)
	m = refined(t, m, err, 3)
	p := problem.Steady(power(t, 3), func(x, y float64) float64 { return 1 }, nil)
	_, err = Solve(context.Background(), m, p, Options{MaxIter: 1})
	var nc *NotConvergedError
	if !errors.As(err, &nc) {
		t.Fatalf("got %v, want a NotConvergedError", err)
	}
	if len(nc.History) == 0 || nc.U == nil {
		t.Errorf("error carries %d steps and U %v", len(nc.History), nc.U != nil)
	}

	// Cancellation from the progress callback after three steps.
	ctx, cancel := context.WithCancel(context.Background())
	steps := 0
	_, err = Solve(ctx, m, p, Options{Progress: func(Step) {
		if steps++; steps == 3 {
			cancel()
		}
	}})
	if !errors.Is(err, context.Canceled) || steps != 3 {
		t.Errorf("after cancel: %v, %d steps", err, steps)
	}

	// Bad input is refused with a message, not a panic.
	if _, err := solve(context.Background(), m, discrete{G: p.G, Mass: 1}, Options{}, nil); err == nil {
		t.Error("mass term without reference accepted")
	}
	if _, err := Solve(context.Background(), m, problem.Steady(p.G, func(x, y float64) float64 { return math.Inf(1) }, nil), Options{}); err == nil {
		t.Error("infinite source accepted")
	}
}

// negCurvature is a potential whose reported Hessian is negative definite:
// the Newton system has no descent direction, and Solve must say so with
// the cause NoDescent rather than loop or panic.
type negCurvature struct{ convex.Potential }

func (negCurvature) Profile(t float64) (g, g1, g2 float64) { return -t * t / 2, -t, -1 }

func TestSolveNoDescent(t *testing.T) {
	m, _ := mesh.Rectangle(0, 1, 0, 1, 4, 4)
	G, _ := convex.Quadratic(1)
	_, err := Solve(context.Background(), m, problem.Steady(negCurvature{G}, func(x, y float64) float64 { return 1 }, nil), Options{})
	var nc *NotConvergedError
	if !errors.As(err, &nc) || nc.Cause != NoDescent || !strings.Contains(err.Error(), "no descent direction") {
		t.Fatalf("got %v; want a NotConvergedError with cause NoDescent", err)
	}
}
