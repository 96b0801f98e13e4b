package convex

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gonum.org/v1/gonum/optimize"
)

func must(p Potential, err error) Potential {
	if err != nil {
		panic(err)
	}
	return p
}

// entropy is g(t) = (1+t)log(1+t) − t, whose conjugate is known in closed
// form: g*(s) = e^s − 1 − s, (g*)'(s) = e^s − 1 (Legendre transform of the
// entropy, common practice, no source; checked below against gonum too).
func entropy(t float64) (g, g1, g2 float64) {
	l := math.Log1p(t)
	if t < 0.1 {
		// (1+t)log(1+t) − t = Σ_{k≥2} (−1)^k t^k/(k(k−1)) without cancellation.
		p := t * t
		for k := 2; k < 30; k++ {
			g += p / float64(k*(k-1))
			p *= -t
		}
		return g, l, 1 / (1 + t)
	}
	return (1+t)*l - t, l, 1 / (1 + t)
}

func catalogue() []Potential {
	return []Potential{
		must(Power(1.1)), must(Power(1.5)), must(Power(2)), must(Power(3)), must(Power(10)),
		must(Quadratic(2.5)),
		must(RegPower(1.3, 0.1)), must(RegPower(3, 0.5)), must(RegPower(1.5, 0)),
		must(PowerSum(1, 2, 3)), must(PowerSum(0.1, 1, 4.5)),
		must(Custom("entropy", entropy, 1.1)),
		must(Custom("quartic sum", func(t float64) (g, g1, g2 float64) {
			return t*t/2 + t*t*t*t/4, t + t*t*t, 1 + 3*t*t
		}, 4)),
	}
}

func TestLabelString(t *testing.T) {
	for _, c := range []struct {
		l     Label
		want  string
		valid bool
	}{{Guaranteed, "guaranteed", true}, {Estimate, "estimate", true}, {Reference, "reference", true}, {"", "", false}, {"sure", "sure", false}} {
		if got := c.l.String(); got != c.want || c.l.Valid() != c.valid {
			t.Errorf("Label %q: String %q, Valid %v; want %q, %v", string(c.l), got, c.l.Valid(), c.want, c.valid)
		}
	}
}

func TestConstructorErrors(t *testing.T) {
	cases := []struct {
		name string
		err  error
		want []string
	}{
		{"power α=1", second(Power(1)), []string{"p = 1", "> 1"}},
		{"power α=NaN", second(Power(math.NaN())), []string{"NaN", "> 1"}},
		{"quadratic κ=0", second(Quadratic(0)), []string{"κ = 0", "> 0"}},
		{"regpower ε<0", second(RegPower(2, -1)), []string{"ε = -1", "≥ 0"}},
		{"regpower α=0.5", second(RegPower(0.5, 1)), []string{"p = 0.5"}},
		{"powersum α=2", second(PowerSum(1, 1, 2)), []string{"p = 2", "> 2"}},
		{"powersum a=0", second(PowerSum(0, 1, 3)), []string{"a = 0", "> 0"}},
		{"powersum b=-1", second(PowerSum(1, -1, 3)), []string{"b = -1", "> 0"}},
		{"custom nil", second(Custom("f", nil, 2)), []string{`"f"`, "no formula"}},
		{"custom g(0)≠0", second(Custom("cosh", func(t float64) (float64, float64, float64) {
			return math.Cosh(t / 100), math.Sinh(t/100) / 100, math.Cosh(t/100) / 1e4
		}, 2)), []string{"g(0) = 1"}},
		{"custom g'(0)≠0", second(Custom("lin", func(t float64) (float64, float64, float64) {
			return t + t*t, 1 + 2*t, 2
		}, 2)), []string{"g'(0) = 1"}},
		{"custom not convex", second(Custom("bump", func(t float64) (float64, float64, float64) {
			return t*t/2 + 0.4*math.Sin(t)*math.Sin(t)*t*t/(1+t*t), 0, -1 // derivative values deliberately wrong
		}, 2)), []string{"not convex", "g''(0) = -1"}},
		{"custom concave part", second(Custom("dip", func(t float64) (float64, float64, float64) {
			// g'' = 1 − 2 e^{−(t−5)²} < 0 near t = 5
			e := math.Exp(-(t - 5) * (t - 5))
			e0 := math.Exp(-25.0)
			g1 := t - math.Sqrt(math.Pi)*(math.Erf(t-5)+math.Erf(5))
			_ = e0
			return t * t / 2, g1, 1 - 2*e
		}, 2)), []string{"not"}},
		{"custom NaN", second(Custom("root", func(t float64) (float64, float64, float64) {
			return math.Sqrt(t-1) + 0*t, 0, 0
		}, 2)), []string{"not a finite number", "t = 0"}},
		{"custom linear growth", second(Custom("hyperbola", func(t float64) (float64, float64, float64) {
			r := math.Sqrt(1 + t*t)
			return r - 1, t / r, 1 / (r * r * r)
		}, 2)), []string{"not superlinear", "g'(1000)"}},
		{"custom α=1", second(Custom("q", func(t float64) (float64, float64, float64) { return t * t / 2, t, 1 }, 1)), []string{"p = 1"}},
	}
	for _, c := range cases {
		if c.err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		for _, w := range c.want {
			if !strings.Contains(c.err.Error(), w) {
				t.Errorf("%s: error %q does not mention %q", c.name, c.err, w)
			}
		}
	}
}

func second(_ Potential, err error) error { return err }

// gonumSup computes sup_{t≥0} (s t − g(t)) and its maximiser with gonum's
// BFGS, started at the best point of a coarse logarithmic grid: a reference
// that shares nothing with Conjugate except g and g'.
func gonumSup(t *testing.T, G Potential, s float64) (sup, arg float64) {
	best, bestV := 0.0, 0.0
	for k := -800; k <= 800; k++ {
		x := math.Pow(10, float64(k)/20)
		g, _, _ := G.Profile(x)
		if v := s*x - g; v > bestV {
			best, bestV = x, v
		}
	}
	// t = x², so the constraint t ≥ 0 disappears.
	p := optimize.Problem{
		Func: func(x []float64) float64 { g, _, _ := G.Profile(x[0] * x[0]); return g - s*x[0]*x[0] },
		Grad: func(grad, x []float64) { _, g1, _ := G.Profile(x[0] * x[0]); grad[0] = 2 * x[0] * (g1 - s) },
	}
	res, err := optimize.Minimize(p, []float64{math.Sqrt(best)}, &optimize.Settings{GradientThreshold: 1e-300}, &optimize.BFGS{})
	if err != nil && res == nil {
		t.Fatalf("%v: gonum: %v", G, err)
	}
	if -res.F < bestV {
		return bestV, best
	}
	return -res.F, res.X[0] * res.X[0]
}

func TestConjugateAgainstGonum(t *testing.T) {
	for _, G := range catalogue() {
		for _, s := range []float64{1e-3, 0.1, 0.7, 1, 3, 20} {
			gs, ds := G.Conjugate(s)
			ref, arg := gonumSup(t, G, s)
			if math.Abs(gs-ref) > 1e-12*math.Abs(ref) {
				t.Errorf("%v: g*(%g) = %.17g, gonum sup %.17g (rel %.2g)", G, s, gs, ref, (gs-ref)/ref)
			}
			// The maximiser is only determined to √ε_mach by the sup.
			if math.Abs(ds-arg) > 1e-6*arg {
				t.Errorf("%v: (g*)'(%g) = %.17g, gonum argmax %.17g", G, s, ds, arg)
			}
			// Newton accuracy: g'((g*)'(s)) = s to a few ulps.
			_, g1, _ := G.Profile(ds)
			if math.Abs(g1-s) > 8*eps*s*math.Max(1, 1/(G.Growth()-1)) {
				t.Errorf("%v: g'((g*)'(%g)) − s = %.3g", G, s, g1-s)
			}
		}
	}
}

func TestConjugateClosedForms(t *testing.T) {
	E := must(Custom("entropy", entropy, 1.1))
	R0 := must(RegPower(1.7, 0))
	P := must(Power(1.7))
	for _, s := range []float64{1e-8, 1e-3, 0.5, 1, 4, 30} {
		gs, ds := E.Conjugate(s)
		want := math.Expm1(s) - s
		if s < 1 { // e^s − 1 − s = Σ_{k≥2} s^k/k! without cancellation
			want = 0
			for k, p := 2, s*s/2; k < 40; k, p = k+1, p*s/float64(k+1) {
				want += p
			}
		}
		if math.Abs(gs-want) > 16*eps*want {
			t.Errorf("entropy g*(%g) = %.17g, closed form %.17g", s, gs, want)
		}
		if want := math.Expm1(s); math.Abs(ds-want) > 8*eps*want {
			t.Errorf("entropy (g*)'(%g) = %.17g, closed form %.17g", s, ds, want)
		}
		g1, d1 := R0.Conjugate(s)
		g2, d2 := P.Conjugate(s)
		// math.Pow carries tens of ulps at large |y log x|; the two
		// profiles are evaluated through different powers.
		if math.Abs(g1-g2) > 64*eps*g2 || math.Abs(d1-d2) > 64*eps*d2 {
			t.Errorf("RegPower(1.7, 0) conjugate at %g: %g, %g; Power: %g, %g", s, g1, d1, g2, d2)
		}
	}
}

// TestFenchelYoung: D_G ≥ 0 everywhere, = 0 on the graph η = ∂G(ξ), and equal
// to the naive G + G* − ξ·η where that has no cancellation (an identity).
func TestFenchelYoung(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, G := range catalogue() {
		for i := 0; i < 2000; i++ {
			xi := randVec(rng)
			eta := randVec(rng)
			d := Gap(G, xi, eta)
			if math.IsInf(Dual(G, eta), 1) {
				if d != math.Inf(1) {
					t.Fatalf("%v: G*(%v) = +Inf but D_G = %g", G, eta, d)
				}
				continue
			}
			naive := Value(G, xi) + Dual(G, eta) - xi[0]*eta[0] - xi[1]*eta[1]
			scale := Value(G, xi) + Dual(G, eta) + math.Abs(xi[0]*eta[0]+xi[1]*eta[1])
			if !(d >= 0) {
				t.Fatalf("%v: D_G(%v, %v) = %g", G, xi, eta, d)
			}
			if math.Abs(d-naive) > 1e-13*scale+1e-12*d {
				t.Fatalf("%v: D_G(%v, %v) = %.17g, naive %.17g", G, xi, eta, d, naive)
			}
			f := Flux(G, xi)
			if z := Gap(G, xi, f); z > 1e-14*(Value(G, xi)+Dual(G, f)) {
				t.Fatalf("%v: D_G(ξ, ∂G(ξ)) = %g at ξ = %v", G, z, xi)
			}
		}
	}
}

// randVec draws vectors whose length spans 1e-3 .. 1e3.
func randVec(rng *rand.Rand) [2]float64 {
	r := math.Pow(10, 6*rng.Float64()-3)
	th := 2 * math.Pi * rng.Float64()
	return [2]float64{r * math.Cos(th), r * math.Sin(th)}
}

// TestGapSecondOrder: D_G(ξ, ∂G(ξ) + δ) = ½ δᵀ D²G*(η) δ + O(|δ|³) with
// D²G*(η) = (D²G(ξ))^{-1} (inverse function theorem), down to
// |δ| = 1e-7 |∂G(ξ)|, where the naive formula has lost its digits.
func TestGapSecondOrder(t *testing.T) {
	xis := [][2]float64{{0.8, 0.3}, {1e-3, 2e-3}, {40, -7}, {2, 0}}
	dirs := [][2]float64{{1, 0}, {0, 1}, {0.6, -0.8}}
	for _, G := range catalogue() {
		for _, xi := range xis {
			eta := Flux(G, xi)
			h := Hessian(G, xi, 0)
			det := h[0]*h[2] - h[1]*h[1]
			inv := [3]float64{h[2] / det, -h[1] / det, h[0] / det}
			for _, u := range dirs {
				ne := norm(eta)
				// δ along u (rotated to the frame of η so both radial and tangential directions are hit).
				c, s := eta[0]/ne, eta[1]/ne
				w := [2]float64{c*u[0] - s*u[1], s*u[0] + c*u[1]}
				var worstNaive, ours float64
				for _, rel := range []float64{1e-3, 1e-4, 1e-5, 1e-6, 1e-7} {
					d := [2]float64{rel * ne * w[0], rel * ne * w[1]}
					e2 := [2]float64{eta[0] + d[0], eta[1] + d[1]}
					taylor := 0.5 * (inv[0]*d[0]*d[0] + 2*inv[1]*d[0]*d[1] + inv[2]*d[1]*d[1])
					got := Gap(G, xi, e2)
					naive := Value(G, xi) + Dual(G, e2) - xi[0]*e2[0] - xi[1]*e2[1]
					errOurs := math.Abs(got-taylor) / taylor
					// Taylor's own error is O(rel); rounding of ξ, η adds ε/rel.
					tol := 50*rel + 1e-15/rel + 1e-9
					if errOurs > tol {
						t.Errorf("%v ξ=%v dir=%v δ=%g|η|: D_G = %.12g, Taylor %.12g (rel err %.2g > %.2g)", G, xi, u, rel, got, taylor, errOurs, tol)
					}
					if rel == 1e-7 {
						worstNaive = math.Abs(naive-taylor) / taylor
						ours = errOurs
					}
				}
				if worstNaive < 100*ours && worstNaive < 1e-3 {
					t.Errorf("%v ξ=%v: naive formula unexpectedly accurate at δ=1e-7|η| (%.2g vs ours %.2g): the test no longer shows cancellation", G, xi, worstNaive, ours)
				}
			}
		}
	}
}

// TestPowerScalarGap compares the power family's closed-form/scaled path
// with the generic graded Gauss rule (two independent evaluations of
// ∫_τ^t (r^{α−1} − s) dr), including t ≪ τ and t ≫ τ where r^{α−1} is not
// smooth at 0, and with the naive sum where it has no cancellation.
func TestPowerScalarGap(t *testing.T) {
	for _, a := range []float64{1.05, 1.1, 1.5, 1.9, 2, 3, 10} {
		P := must(Power(a)).(powerPot)
		for _, s := range []float64{1e-3, 1, 50} {
			_, tau := P.Conjugate(s)
			for _, x := range []float64{0, 1e-8, 1e-3, 0.1, 0.3, 0.5, 0.7, 0.999, 1.001, 1.5, 2, 2.5, 10, 1e3, 1e6} {
				tt := x * tau
				ours := P.scalarGap(tt, s)
				gen := gaussGap(P, tt, s)
				// The generic rule forms g'(r) − s in floating point: its
				// error is about 2ε τ/((α−1)|t − τ|) relative (see gaussGap).
				tol := 1e-13 + 8*eps/((a-1)*math.Abs(x-1))
				if math.Abs(ours-gen) > tol*gen {
					t.Errorf("α=%g s=%g t=%gτ: scaled %.17g, graded Gauss %.17g", a, s, x, ours, gen)
				}
				if x < 0.1 || x > 10 {
					g, _, _ := P.Profile(tt)
					gs, _ := P.Conjugate(s)
					naive := g + gs - tt*s
					if math.Abs(ours-naive) > 1e-13*(g+gs+tt*s) {
						t.Errorf("α=%g s=%g t=%gτ: %.17g, naive %.17g", a, s, x, ours, naive)
					}
				}
			}
		}
	}
}

func TestHessian(t *testing.T) {
	for _, G := range catalogue() {
		for _, xi := range [][2]float64{{0.8, 0.3}, {-2, 0.5}, {0.01, 0}} {
			h := Hessian(G, xi, 0)
			// Central differences of the flux (common practice, no source).
			for j := 0; j < 2; j++ {
				dh := 1e-6 * norm(xi)
				p, m := xi, xi
				p[j] += dh
				m[j] -= dh
				fp, fm := Flux(G, p), Flux(G, m)
				col := [2]float64{(fp[0] - fm[0]) / (2 * dh), (fp[1] - fm[1]) / (2 * dh)}
				want := [2]float64{h[0], h[1]}
				if j == 1 {
					want = [2]float64{h[1], h[2]}
				}
				sc := math.Abs(h[0]) + math.Abs(h[2])
				if math.Abs(col[0]-want[0]) > 1e-6*sc || math.Abs(col[1]-want[1]) > 1e-6*sc {
					t.Errorf("%v ξ=%v column %d: FD %v, Hessian %v", G, xi, j, col, want)
				}
			}
		}
	}
	// reg acts only below |ξ| = reg, with coefficients taken at radius reg.
	P := must(Power(1.5))
	const reg = 1e-2
	if a, b := Hessian(P, [2]float64{0.5, 0}, reg), Hessian(P, [2]float64{0.5, 0}, 0); a != b {
		t.Errorf("reg changed the Hessian at |ξ| = 0.5 > reg: %v vs %v", a, b)
	}
	h := Hessian(P, [2]float64{1e-5, 0}, reg)
	if want := 0.5 * math.Pow(reg, -0.5); math.Abs(h[0]-want) > 1e-14*want {
		t.Errorf("radial coefficient %g, want g''(reg) = %g", h[0], want)
	}
	if want := math.Pow(reg, -0.5); math.Abs(h[2]-want) > 1e-14*want {
		t.Errorf("tangential coefficient %g, want g'(reg)/reg = %g", h[2], want)
	}
	h0 := Hessian(P, [2]float64{}, reg)
	if want := 0.5 * math.Pow(reg, -0.5); h0[0] != h0[2] || h0[1] != 0 || math.Abs(h0[0]-want) > 1e-14*want {
		t.Errorf("Hessian at 0 = %v, want g''(reg) I = %g I", h0, want)
	}
	if h := Hessian(must(Power(3)), [2]float64{}, 0); h != [3]float64{} {
		t.Errorf("Power(3) Hessian at 0 without reg = %v, want 0", h)
	}
}

func TestDualFluxInverts(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, G := range catalogue() {
		for i := 0; i < 500; i++ {
			xi := randVec(rng)
			back := DualFlux(G, Flux(G, xi))
			tol := 16 * eps * math.Max(1, 1/(G.Growth()-1)) * norm(xi)
			if math.Abs(back[0]-xi[0]) > tol || math.Abs(back[1]-xi[1]) > tol {
				t.Fatalf("%v: ∂G*(∂G(%v)) = %v", G, xi, back)
			}
		}
	}
}

// TestPowerGapSeries checks the power scalar gap near t = τ against the
// binomial series d = τ^α Σ_{k≥2} C(α, k) u^k/α, u = t/τ − 1 (Newton's
// binomial theorem), summed independently in float64.
func TestPowerGapSeries(t *testing.T) {
	for _, a := range []float64{1.1, 1.3, 1.5, 2, 3, 4.5, 10} {
		P := must(Power(a)).(powerPot)
		for _, u := range []float64{-0.3, -0.1, -1e-3, -1e-6, 1e-6, 1e-3, 0.1, 0.3} {
			s := 0.7
			tau := math.Pow(s, 1/(a-1))
			tt := (1 + u) * tau
			uu := tt/tau - 1 // the u the code sees
			var sum float64
			c := a * (a - 1) / 2 // C(α, 2)
			p := uu * uu
			for k := 2; k < 200; k++ {
				sum += c * p
				c *= (a - float64(k)) / float64(k+1)
				p *= uu
			}
			want := math.Pow(tau, a) * sum / a
			got := P.scalarGap(tt, s)
			// Rounding of τ itself moves d by about 2ε/|u| relative.
			tol := 64*eps + 4*eps/math.Abs(uu)
			if math.Abs(got-want) > tol*want {
				t.Errorf("α=%g u=%g: d = %.17g, series %.17g (rel %.2g, tol %.2g)", a, u, got, want, (got-want)/want, tol)
			}
		}
	}
}
