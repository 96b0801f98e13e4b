package estimate

import (
	"context"
	"fmt"
	"math"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/problem"
)

// fluxBuilder builds a flux for the invariant suite; the equilibrated and
// minimised fluxes of this package slot in here as further entries.
type fluxBuilder struct {
	name  string
	build func(s *fem.P1, G convex.Potential, m *manufactured, f func(x, y float64) float64, v []float64) (Flux, error)
}

var fluxBuilders = []fluxBuilder{
	{"averaged", func(s *fem.P1, G convex.Potential, _ *manufactured, _ func(x, y float64) float64, v []float64) (Flux, error) {
		return NewAveraged(s, G, v)
	}},
	// The exact flux plus a divergence-free perturbation: equilibrated, so
	// the residual vanishes and only the oscillation-free part is tested.
	{"exact+curl", func(s *fem.P1, G convex.Potential, m *manufactured, f func(x, y float64) float64, _ []float64) (Flux, error) {
		return &exactFlux{s: s, G: G, m: m, delta: 0.05, f: f}, nil
	}},
	{"equilibrated-rt0", func(s *fem.P1, G convex.Potential, _ *manufactured, f func(x, y float64) float64, v []float64) (Flux, error) {
		return Equilibrate(context.Background(), s, G, v, FuncSource(s.Mesh, f), EquilibrateOptions{})
	}},
	{"equilibrated-rt1", func(s *fem.P1, G convex.Potential, _ *manufactured, f func(x, y float64) float64, v []float64) (Flux, error) {
		return Equilibrate(context.Background(), s, G, v, FuncSource(s.Mesh, f), EquilibrateOptions{Order: 1})
	}},
}

// TestErrorIdentity checks (E-ID) μ(v) + μ*(y*) = ∫D_G(∇v, y*) + ∫ r(u − v)
// (docs/math.md §4; docs/checks.md item 15: an identity, proof by integration by parts)
// with the non-equilibrated averaged flux, and that EvaluateTerms' D agrees
// with the high-order value.
func TestErrorIdentity(t *testing.T) {
	for _, d := range domains() {
		m := newManufactured(d)
		for _, alpha := range []float64{1.5, 2, 3, 4} {
			t.Run(fmt.Sprintf("%s/p=%g", d.name, alpha), func(t *testing.T) {
				G := must(convex.Power(alpha))
				f := m.source(G)
				s := must(fem.NewP1(d.mesh(1)))
				v := perturbed(s, m.u, 0.05, 1)
				y := must(NewAveraged(s, G, v))
				tr := exactTerms(s, G, m, f, v, y)
				lhs, rhs := tr.mu+tr.dual, tr.d+tr.ru
				scale := tr.mu + tr.dual + tr.d + math.Abs(tr.ru)
				if math.Abs(lhs-rhs) > 1e-9*scale {
					t.Errorf("E-ID: μ + μ* = %.15g, D + ∫r(u−v) = %.15g (scale %g)", lhs, rhs, scale)
				}
				if tr.ru == 0 || math.Abs(tr.ru) < 1e-6*scale {
					t.Errorf("the residual term %g is negligible: the test does not exercise a non-equilibrated flux", tr.ru)
				}
				terms := must(EvaluateTerms(s, problem.Steady(G, f, nil), v, y, 0, nil))
				if math.Abs(terms.D-tr.d) > 1e-7*tr.d {
					t.Errorf("D = %.12g by degree %d, %.12g by the reference rule", terms.D, terms.Degree, tr.d)
				}
			})
		}
	}
}

// TestPragerSynge checks ‖∇(u−v)‖² + ‖∇u − y‖² = ‖∇v − y‖² for div y + f = 0
// (Prager & Synge, Quart. Appl. Math. 5 (1947); docs/checks.md item 13) with the
// equilibrated test flux, and that EvaluateTerms sees a zero residual and
// D = ½‖∇v − y‖² for G = |ξ|²/2.
func TestPragerSynge(t *testing.T) {
	G := must(convex.Power(2))
	for _, d := range domains() {
		t.Run(d.name, func(t *testing.T) {
			m := newManufactured(d)
			f := m.source(G)
			s := must(fem.NewP1(d.mesh(1)))
			v := perturbed(s, m.u, 0.1, 2)
			y := &exactFlux{s: s, G: G, m: m, delta: 0.1, f: f}
			tr := exactTerms(s, G, m, f, v, y)
			if math.Abs(tr.ps[0]+tr.ps[1]-tr.ps[2]) > 1e-10*tr.ps[2] {
				t.Errorf("Prager–Synge: %.15g + %.15g ≠ %.15g", tr.ps[0], tr.ps[1], tr.ps[2])
			}
			terms := must(EvaluateTerms(s, problem.Steady(G, f, nil), v, y, 0, nil))
			// Tolerance: this y* (trigonometric) is smooth but far from
			// polynomial on the coarse cells, where the degree-8 rule is off
			// by up to 1e-7 per cell (either sign; not covered by the margin,
			// which concerns cells where y* nears zero).
			if math.Abs(terms.D-tr.ps[2]/2) > 1e-7*tr.ps[2] {
				t.Errorf("D = %.15g (margin %.3g), ½‖∇v − y‖² = %.15g", terms.D, terms.Quadrature.GapError, tr.ps[2]/2)
			}
			if terms.Residual > 1e-12 {
				t.Errorf("‖f + div y‖ = %g for an equilibrated flux", terms.Residual)
			}
			// The hypercircle for the nonlinear potentials: r = 0 makes (E-ID)
			// μ + μ* = D.
			for _, alpha := range []float64{1.5, 3, 4} {
				Gp := must(convex.Power(alpha))
				fp := m.source(Gp)
				yp := &exactFlux{s: s, G: Gp, m: m, delta: 0.1, f: fp}
				tp := exactTerms(s, Gp, m, fp, v, yp)
				if math.Abs(tp.mu+tp.dual-tp.d) > 1e-9*tp.d {
					t.Errorf("p=%g hypercircle: μ + μ* = %.15g, D = %.15g", alpha, tp.mu+tp.dual, tp.d)
				}
			}
		})
	}
}

// TestMajorantInvariant is the invariant of docs/math.md §5: μ̄ ≥ μ(v) on every
// case of the suite (α × domain × v × flux × mesh size), together with the
// norm and dual bounds; no tolerance. v is the perturbed interpolant on the
// coarse mesh and nonlinear.Solve's discrete solution on the finer one (any
// v must work; the discrete one is what users bound).
func TestMajorantInvariant(t *testing.T) {
	cases := 0
	for _, d := range domains() {
		m := newManufactured(d)
		for _, alpha := range []float64{1.3, 1.5, 2, 3, 4, 6} {
			G := must(convex.Power(alpha))
			f := m.source(G)
			for level := range 2 {
				msh := d.mesh(level)
				s := must(fem.NewP1(msh))
				c := must(WidthConstant(msh, alpha))
				v, kind := perturbed(s, m.u, 0.05, uint64(level+3)), "perturbed"
				// For the discrete solution the bounds are also computed with
				// the solver's samples of f (degree 5) in the terms with f.
				var shared *Samples
				if level == 1 {
					sol, err := nonlinear.Solve(context.Background(), msh, problem.Steady(G, f, m.u), nonlinear.Options{})
					if err != nil {
						t.Fatalf("%s/p=%g: %v", d.name, alpha, err)
					}
					v, kind = sol.U, "discrete"
					shared = must(SamplesOf(s, f, sol.LoadDegree, sol.Load))
				}
				for _, fb := range fluxBuilders {
					cases++
					name := fmt.Sprintf("%s/p=%g/n=%d/v=%s/flux=%s", d.name, alpha, msh.NumCells(), kind, fb.name)
					y, err := fb.build(s, G, m, f, v)
					if err != nil {
						t.Fatalf("%s: %v", name, err)
					}
					r, err := Estimate(s, problem.Steady(G, f, m.u), v, y, Options{Friedrichs: c})
					if err != nil {
						t.Fatalf("%s: %v", name, err)
					}
					tr := exactTerms(s, G, m, f, v, y)
					results := []*Result{r}
					if shared != nil {
						rs, err := Estimate(s, problem.Steady(G, f, m.u), v, y, Options{Friedrichs: c, Samples: shared})
						if err != nil {
							t.Fatalf("%s (shared samples): %v", name, err)
						}
						if rs.Quadrature.ResidualDegree != 5 || !rs.Quadrature.Shared {
							t.Fatalf("%s: shared samples not used: %+v", name, rs.Quadrature)
						}
						results = append(results, rs)
					}
					for i, r := range results {
						if !(r.Majorant.Value >= tr.mu) {
							t.Errorf("%s (%d): majorant %.6g < μ(v) = %.6g", name, i, r.Majorant.Value, tr.mu)
						}
						if !(r.Norm.Value >= tr.norm) {
							t.Errorf("%s (%d): norm bound %.6g < ‖∇(u−v)‖ = %.6g", name, i, r.Norm.Value, tr.norm)
						}
						if !(r.Dual.Value >= tr.dual) {
							t.Errorf("%s (%d): dual bound %.6g < μ* = %.6g", name, i, r.Dual.Value, tr.dual)
						}
					}
					if r.Label != convex.Guaranteed || len(r.Assumptions) < 3 {
						t.Errorf("%s: label %v, assumptions %q", name, r.Label, r.Assumptions)
					}
					var sum float64
					for _, e := range r.Indicators {
						sum += e
					}
					if math.Abs(sum-r.Majorant.Value) > 1e-9*r.Majorant.Value {
						t.Errorf("%s: indicators sum to %.12g, majorant %.12g", name, sum, r.Majorant.Value)
					}
					if testing.Verbose() {
						t.Logf("%-40s I_eff %8.3f  R %-6s θ %.3f", name, r.Majorant.Value/tr.mu, r.Form, r.Theta)
					}
				}
			}
		}
	}
	if cases < 190 {
		t.Errorf("only %d cases", cases)
	}
}

// TestYoungForm checks the Legendre-duality claim of docs/math.md §5: the
// largest root equals the Young form at the reported θ divided by 1 − θ, and
// no θ on a grid does better (α ≥ 2 type moduli).
func TestYoungForm(t *testing.T) {
	d := domains()[1]
	m := newManufactured(d)
	for _, alpha := range []float64{2, 3, 4, 6} {
		G := must(convex.Power(alpha))
		f := m.source(G)
		msh := d.mesh(0)
		s := must(fem.NewP1(msh))
		v := perturbed(s, m.u, 0.05, 9)
		y := must(NewAveraged(s, G, v))
		r := must(Estimate(s, problem.Steady(G, f, nil), v, y, Options{Friedrichs: must(WidthConstant(msh, alpha))}))
		mu := r.Majorant.Value
		if math.IsNaN(r.YoungRHS) || !(r.Theta > 0 && r.Theta < 1) {
			t.Fatalf("p=%g: θ = %g, Young form %g", alpha, r.Theta, r.YoungRHS)
		}
		if got := r.YoungRHS / (1 - r.Theta); math.Abs(got-mu) > 1e-9*mu {
			t.Errorf("p=%g: Young form at θ = %.6f gives %.15g, root %.15g", alpha, r.Theta, got, mu)
		}
		c := G.Modulus().Bounds[0].K * alpha
		for i := 1; i < 200; i++ {
			th := float64(i) / 200
			if b := YoungForm(r.D, r.R.Value, c, alpha, th) / (1 - th); b < mu*(1-1e-12) {
				t.Errorf("p=%g: θ = %g gives %.15g below the root %.15g", alpha, th, b, mu)
			}
		}
	}
}

// TestLabels: an estimated constant or an estimated modulus makes every
// number an estimate; a custom potential without a modulus is refused.
func TestLabels(t *testing.T) {
	d := domains()[1]
	m := newManufactured(d)
	G := must(convex.Power(3))
	f := m.source(G)
	msh := d.mesh(0)
	s := must(fem.NewP1(msh))
	v := perturbed(s, m.u, 0.05, 4)
	y := must(NewAveraged(s, G, v))
	c := must(WidthConstant(msh, 3))
	est := c
	est.Label = convex.Estimate
	r := must(Estimate(s, problem.Steady(G, f, nil), v, y, Options{Friedrichs: est}))
	for _, n := range []Number{r.Majorant, r.Dual, r.Norm, r.R} {
		if n.Label != convex.Estimate {
			t.Errorf("estimated constant: a number is labelled %v", n.Label)
		}
	}
	custom := must(convex.Custom("cubic", func(t float64) (float64, float64, float64) { return t * t * t / 3, t * t, 2 * t }, 3))
	if _, err := Estimate(s, problem.Steady(custom, f, nil), v, y, Options{Friedrichs: c}); err == nil {
		t.Error("a custom potential without a modulus gave bounds")
	}
	sampled := convex.Modulus{Bounds: G.Modulus().Bounds, Label: convex.Estimate}
	r = must(Estimate(s, problem.Steady(custom, f, nil), v, y, Options{Friedrichs: c, Modulus: &sampled}))
	if r.Majorant.Label != convex.Estimate || r.Label != convex.Estimate {
		t.Errorf("estimated modulus: majorant labelled %v", r.Majorant.Label)
	}
	// Same potential, so the numbers equal those of the guaranteed run.
	rg := must(Estimate(s, problem.Steady(G, f, nil), v, y, Options{Friedrichs: c}))
	if math.Abs(rg.Majorant.Value-r.Majorant.Value) > 1e-6*rg.Majorant.Value || rg.Label != convex.Guaranteed {
		t.Errorf("custom t³/3 majorant %g vs power %g (%v)", r.Majorant.Value, rg.Majorant.Value, rg.Label)
	}
	// Dirichlet data that are not linear on boundary edges are reported.
	r = must(Estimate(s, problem.Steady(G, f, func(x, y float64) float64 { return x * x }), v, y, Options{Friedrichs: c}))
	if last := r.Assumptions[len(r.Assumptions)-1]; last[:4] != "data" {
		t.Errorf("nonlinear boundary data not reported: %q", r.Assumptions)
	}
}

// TestEnergyAndFlowRate uses the 1-D closed form of docs/checks.md item 9
// (f = 1 on (0, 1): u = ((p−1)/p)((1/2)^{p'} − |x − 1/2|^{p'}),
// ∫u = (1/2)^{p'}/(p'+1), J(u) = −∫u/p'): the energy of the interpolant
// minus J(u) equals μ(v) computed as ∫ D_G; J(u) lies in the energy interval
// with the minorant of a finer interpolant; ∫u lies in the flow-rate
// interval. The exact flux −(x − 1/2) is equilibrated.
func TestEnergyAndFlowRate(t *testing.T) {
	for _, p := range []float64{1.5, 3, 4, 6} {
		G := must(convex.Power(p))
		q := p / (p - 1)
		u := func(x, _ float64) float64 { return (p - 1) / p * (math.Pow(0.5, q) - math.Pow(math.Abs(x-0.5), q)) }
		Q := math.Pow(0.5, q) / (q + 1)
		Ju := -Q / q
		one := func(_, _ float64) float64 { return 1 }
		msh := must(mesh.Interval(0, 1, 16))
		s := must(fem.NewP1(msh))
		v := make([]float64, s.NumNodes())
		s.Interpolate(u, v)
		// A shifted flux keeps div y* = −1 but makes μ*(y*) > 0, so the
		// majorant is strictly above μ; y* vanishes inside a cell, where the
		// default rule alone under-integrates |y*|^{α'} (1e-4 relative at
		// p = 4) and the safeguard of EvaluateTerms must subdivide.
		y := &linearFlux{s: s, f: 1, shift: 0.02}
		r := must(Estimate(s, problem.Steady(G, one, nil), v, y, Options{Friedrichs: must(WidthConstant(msh, p))}))
		if r.Quadrature.Subdivided == 0 {
			t.Errorf("p=%g: the cell where y* vanishes was not subdivided", p)
		}
		// μ(v) = ∫ D_G(v', p*) with p* = −(x − 1/2), by a high-order rule.
		var mu float64
		rule := fem.Line(40)
		grad := make([][2]float64, msh.NumCells())
		s.Gradient(v, grad)
		subs := subCells(1, 8)
		for k := range msh.Cells {
			for _, sc := range subs {
				for i, pt := range rule.Points {
					l := sc[0][1] + pt[0]*(sc[1][1]-sc[0][1])
					x, _ := physical(s, k, [3]float64{1 - l, l, 0})
					mu += rule.Weights[i] * s.Area[k] / float64(len(subs)) * convex.Gap(G, grad[k], [2]float64{0.5 - x, 0})
				}
			}
		}
		// Tolerance: the integrand of μ is not smooth at x = 1/2 (Gauss rules
		// converge algebraically there; 256 sub-intervals per cell).
		if math.Abs((r.Energy-Ju)-mu) > 1e-6*mu {
			t.Errorf("p=%g: J(v) − J(u) = %.12g, ∫D_G = %.12g", p, r.Energy-Ju, mu)
		}
		if !(r.Majorant.Value >= mu) || r.Majorant.Value > 10*mu {
			t.Errorf("p=%g: equilibrated majorant %.12g, μ = %.12g", p, r.Majorant.Value, mu)
		}
		fine := must(mesh.Interval(0, 1, 128))
		sf := must(fem.NewP1(fine))
		w := make([]float64, sf.NumNodes())
		sf.Interpolate(u, w)
		jw, rw := EnergyRounded(sf, G, one, w, 0)
		low := Minorant(r.Energy, r.EnergyRound, jw, rw)
		if !(low > 0.5*mu && low <= mu) {
			t.Errorf("p=%g: minorant %g for μ = %g", p, low, mu)
		}
		e := EnergyInterval(r, low)
		if !(e.Lo <= Ju && Ju <= e.Hi) {
			t.Errorf("p=%g: J(u) = %.12g outside [%.12g, %.12g]", p, Ju, e.Lo, e.Hi)
		}
		fr := must(FlowRate(e, p, 1))
		if !(fr.Lo <= Q && Q <= fr.Hi) || fr.Hi-fr.Lo > 0.05*Q {
			t.Errorf("p=%g: ∫u = %.12g, flow-rate interval [%.12g, %.12g]", p, Q, fr.Lo, fr.Hi)
		}
	}
	if _, err := FlowRate(Interval{}, 2, 0); err == nil {
		t.Error("FlowRate accepted f = 0")
	}
}

// linearFlux is y* = −f (x − 1/2) + shift in 1-D, div y* = −f.
type linearFlux struct {
	s        *fem.P1
	f, shift float64
}

func (l *linearFlux) At(k int, lam [3]float64) ([2]float64, float64) {
	x, _ := physical(l.s, k, lam)
	return [2]float64{-l.f*(x-0.5) + l.shift, 0}, -l.f
}
func (l *linearFlux) Degree() int { return 1 }
