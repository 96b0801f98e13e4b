package convex

import (
	"math"
	"math/rand/v2"
	"testing"
)

// samplePair draws (ξ, ζ) from a mix meant to find violations: independent
// vectors at very different scales, near-collinear pairs with relative
// differences down to 1e-8, near-opposite pairs, and pairs with one tiny end.
func samplePair(rng *rand.Rand) (xi, zeta [2]float64) {
	xi = randVec(rng)
	switch k := rng.IntN(10); {
	case k < 4:
		zeta = randVec(rng)
	case k < 7:
		d := math.Pow(10, -8*rng.Float64())
		th := d * (2*rng.Float64() - 1)
		c := 1 + d*(2*rng.Float64()-1)
		zeta = [2]float64{c * (math.Cos(th)*xi[0] - math.Sin(th)*xi[1]), c * (math.Sin(th)*xi[0] + math.Cos(th)*xi[1])}
	case k < 9:
		c := -math.Pow(10, 6*rng.Float64()-3)
		th := 1e-3 * (2*rng.Float64() - 1)
		zeta = [2]float64{c * (math.Cos(th)*xi[0] - math.Sin(th)*xi[1]), c * (math.Sin(th)*xi[0] + math.Cos(th)*xi[1])}
	default:
		zeta = [2]float64{1e-9 * rng.NormFloat64(), 0}
	}
	if rng.IntN(2) == 0 {
		xi, zeta = zeta, xi
	}
	return xi, zeta
}

// TestModulusSampling: the primal modulus D_G(ξ, ∂G(ζ)) ≥ Lower(ξ, ζ) and
// the dual modulus D_G(ζ, η) ≥ DualLower(η, ∂G(ζ)) on 10^5 pairs per
// exponent. Constants: c_α = 1/(2^{α−1} − 1) for α ≥ 2 (Lindqvist, Notes on
// the p-Laplace equation, §10 (I); docs/checks.md item 6) and (α − 1)/2 in D_G
// scaling, i.e. α(α − 1)/2 for |·|^α, for α < 2 (docs/checks.md item 7).
func TestModulusSampling(t *testing.T) {
	n := 100000
	if testing.Short() {
		n = 10000
	}
	pots := []Potential{}
	for _, a := range []float64{1.1, 1.3, 1.5, 1.9, 2, 3, 4, 6, 10} {
		pots = append(pots, must(Power(a)))
	}
	pots = append(pots, must(RegPower(1.3, 0.05)), must(RegPower(1.9, 2)), must(RegPower(3, 0.3)),
		must(Quadratic(0.3)), must(PowerSum(0.5, 2, 3)))
	for pi, G := range pots {
		n := n
		if _, ok := G.(powerPot); !ok {
			n /= 5 // Newton conjugates and graded quadrature cost more
		}
		m, dm := G.Modulus(), G.DualModulus()
		if m.Label != Guaranteed || len(m.Bounds) == 0 {
			t.Fatalf("%v: modulus %+v, want a guaranteed one", G, m)
		}
		rng := rand.New(rand.NewPCG(uint64(pi), 77))
		var worst, worstDual float64 // largest Lower/D seen
		for i := 0; i < n; i++ {
			xi, zeta := samplePair(rng)
			eta0 := Flux(G, zeta)
			d := Gap(G, xi, eta0)
			// Rounding ∂G(ζ) moves D by about |ξ − ζ| ε|∂G(ζ)| (D is
			// stationary in η only at ξ = ζ); where the bound is an
			// equality (α = 2) that is all that separates them.
			r := norm([2]float64{xi[0] - zeta[0], xi[1] - zeta[1]})
			round := 32 * eps * r * norm(eta0)
			if lo := m.Lower(xi, zeta); lo > 0 {
				worst = math.Max(worst, lo/d)
				if lo > d*(1+1e-9)+round {
					t.Fatalf("%v: modulus violated at ξ=%v ζ=%v: D = %.17g < bound %.17g", G, xi, zeta, d, lo)
				}
			}
			if len(dm.Bounds) == 0 {
				continue
			}
			// Dual: D_G(ζ, η) is the Bregman distance of G* between η and ∂G(ζ).
			eta := zeta
			dd := Gap(G, xi, eta)
			if math.IsInf(dd, 1) {
				continue
			}
			theta := Flux(G, xi)
			roundDual := 32 * eps * norm([2]float64{eta[0] - theta[0], eta[1] - theta[1]}) * norm(xi)
			if lo := dm.Lower(eta, theta); lo > 0 {
				worstDual = math.Max(worstDual, lo/dd)
				if lo > dd*(1+1e-9)+roundDual {
					t.Fatalf("%v: dual modulus violated at ζ=%v η=%v: D = %.17g < bound %.17g", G, xi, eta, dd, lo)
				}
			}
		}
		t.Logf("%v: largest bound/D = %.4f (primal), %.4f (dual)", G, worst, worstDual)
		if worst < 0.05 {
			t.Errorf("%v: the primal bound was never within a factor 20 of D: the sampling cannot have tested it", G)
		}
	}
}

// TestModulusConstants checks the constants themselves against docs/checks.md and
// the sharp constants found by scanning collinear pairs with our Gap.
func TestModulusConstants(t *testing.T) {
	for _, c := range []struct {
		alpha float64
		kind  BoundKind
		k     float64 // constant in D_G scaling
		sharp float64 // best constant in |·|^α scaling, docs/checks.md items 6, 7 [N]
	}{
		{1.1, WeightedBound, 0.05, 0.092549},
		{1.5, WeightedBound, 0.25, 0.494106},
		{1.9, WeightedBound, 0.45, 0.899937},
		{2, PowerBound, 0.5, 1},
		{3, PowerBound, 1.0 / 9, 2 - math.Sqrt2},
		{4, PowerBound, 1.0 / 28, 1.0 / 3},
	} {
		b := must(Power(c.alpha)).Modulus().Bounds[0]
		if b.Kind != c.kind || math.Abs(b.K-c.k) > 1e-15 || b.Exponent != c.alpha {
			t.Errorf("α=%g: bound %+v, want kind %d, K %g", c.alpha, b, c.kind, c.k)
		}
		// A constant α − 1 (|·|^α scaling) would be wrong for α < 2: the sharp
		// value is below it (docs/checks.md item 7).
		if c.alpha < 2 && !(c.alpha*b.K < c.sharp && c.sharp < c.alpha-1) {
			t.Errorf("α=%g: αK = %g, sharp %g, α−1 = %g: expected αK < sharp < α−1", c.alpha, c.alpha*b.K, c.sharp, c.alpha-1)
		}
		// Scan ζ = (1, 0), ξ = ±r(1, 0): the infimum sits on these lines.
		G := must(Power(c.alpha))
		best := math.Inf(1)
		for i := 0; i <= 4000; i++ {
			r := math.Pow(10, -3+5*float64(i)/4000)
			for _, sgn := range []float64{1, -1} {
				xi := [2]float64{sgn * r, 0}
				d := c.alpha * Gap(G, xi, Flux(G, [2]float64{1, 0}))
				e := math.Abs(sgn*r - 1)
				if e == 0 {
					continue
				}
				var v float64
				if c.alpha < 2 {
					v = d * math.Pow(r+1, 2-c.alpha) / (e * e)
				} else {
					v = d / math.Pow(e, c.alpha)
				}
				best = math.Min(best, v)
			}
		}
		if best < c.sharp*(1-1e-6) || best > c.sharp*(1+1e-4) {
			t.Errorf("α=%g: scanned best constant %.7g, docs/checks.md %.7g", c.alpha, best, c.sharp)
		}
	}
	// Dual exponents: α' = α/(α − 1).
	if b := must(Power(3)).DualModulus().Bounds[0]; b.Kind != WeightedBound || math.Abs(b.Exponent-1.5) > 1e-15 || math.Abs(b.K-0.25) > 1e-15 {
		t.Errorf("Power(3) dual bound %+v, want weighted, α' = 1.5, K = 0.25", b)
	}
	if b := must(Power(1.5)).DualModulus().Bounds[0]; b.Kind != PowerBound || b.Exponent != 3 || math.Abs(b.K-1.0/9) > 1e-15 {
		t.Errorf("Power(1.5) dual bound %+v, want power, α' = 3, K = 1/9", b)
	}
	if m := must(Custom("q", func(t float64) (float64, float64, float64) { return t * t / 2, t, 1 }, 2)).Modulus(); len(m.Bounds) != 0 || m.Label != Estimate {
		t.Errorf("custom modulus %+v, want none labelled estimate", m)
	}
}

// TestMonotonicity: (∂G(a) − ∂G(b))·(a − b) ≥ 2^{2−α}|a − b|^α for α ≥ 2
// (Lindqvist §10 (VII), docs/checks.md item 8), sharp at b = −a; it checks Flux
// and bounds the symmetrised modulus from above.
func TestMonotonicity(t *testing.T) {
	rng := rand.New(rand.NewPCG(9, 9))
	for _, a := range []float64{2, 3, 4, 6, 10} {
		G := must(Power(a))
		for i := 0; i < 20000; i++ {
			x, y := samplePair(rng)
			fx, fy := Flux(G, x), Flux(G, y)
			lhs := (fx[0]-fy[0])*(x[0]-y[0]) + (fx[1]-fy[1])*(x[1]-y[1])
			r := norm([2]float64{x[0] - y[0], x[1] - y[1]})
			rhs := math.Pow(2, 2-a) * math.Pow(r, a)
			if lhs < rhs*(1-1e-12) {
				t.Fatalf("α=%g a=%v b=%v: %g < %g", a, x, y, lhs, rhs)
			}
		}
		// At b = −a the monotonicity is an equality and the symmetrised
		// Bregman distance equals it; our modulus must stay below.
		x := [2]float64{0.3, -1.2}
		y := [2]float64{-0.3, 1.2}
		m := G.Modulus()
		sym := Gap(G, x, Flux(G, y)) + Gap(G, y, Flux(G, x))
		exact := math.Pow(2, 2-a) * math.Pow(2*norm(x), a)
		if math.Abs(sym-exact) > 1e-13*exact || m.Lower(x, y)+m.Lower(y, x) > exact {
			t.Errorf("α=%g: symmetrised gap %g, monotonicity %g, modulus sum %g", a, sym, exact, m.Lower(x, y)+m.Lower(y, x))
		}
	}
}

func TestQuadraticGapIdentity(t *testing.T) {
	// docs/math.md §2: D_G(ξ, η) = |κξ − η|²/(2κ) for G = κ|ξ|²/2.
	rng := rand.New(rand.NewPCG(5, 5))
	G := must(Quadratic(3.5))
	for i := 0; i < 1000; i++ {
		xi, eta := randVec(rng), randVec(rng)
		dx, dy := 3.5*xi[0]-eta[0], 3.5*xi[1]-eta[1]
		want := (dx*dx + dy*dy) / 7
		if got := Gap(G, xi, eta); math.Abs(got-want) > 1e-13*want {
			t.Fatalf("ξ=%v η=%v: %g, want %g", xi, eta, got, want)
		}
	}
}

func TestNorm(t *testing.T) {
	pb := Bound{Kind: PowerBound, Exponent: 3, K: 1.0 / 9}
	if x := pb.Norm(1e-6, 0); math.Abs(x-math.Cbrt(9e-6)) > 1e-15 {
		t.Errorf("power type X(1e-6) = %g, want (αμ/c)^{1/α} = %g", x, math.Cbrt(9e-6))
	}
	for _, q := range []float64{1.1, 1.5, 1.9} {
		b := Bound{Kind: WeightedBound, Exponent: q, K: (q - 1) / 2}
		for _, c := range []struct{ mu, n float64 }{{1e-12, 1}, {1e-4, 0.3}, {1, 1}, {10, 1e-3}, {1e-3, 0}} {
			x := b.Norm(c.mu, c.n)
			// The root of X² = (μ/K)(2N + X)^{2−q} (an identity), from above.
			a := c.mu / b.K
			lhs, rhs := x*x, a*math.Pow(2*c.n+x, 2-q)
			if lhs < rhs*(1-4*eps) || lhs > rhs*(1+1e-12) {
				t.Errorf("q=%g μ=%g N=%g: X = %g, X² = %g, (μ/K)(2N+X)^{2−q} = %g", q, c.mu, c.n, x, lhs, rhs)
			}
			if c.n == 0 {
				if want := math.Pow(a, 1/q); math.Abs(x-want) > 1e-12*want {
					t.Errorf("q=%g N=0: X = %g, closed form (μ/K)^{1/q} = %g", q, x, want)
				}
			}
			// For small μ the root approaches √((μ/K)(2N)^{2−q}).
			if c.mu == 1e-12 {
				want := math.Sqrt(a * math.Pow(2*c.n, 2-q))
				if math.Abs(x-want) > 1e-5*want {
					t.Errorf("q=%g small μ: X = %g, leading term %g", q, x, want)
				}
			}
		}
		if x := b.Norm(-1, 1); !math.IsNaN(x) {
			t.Errorf("negative μ gave %g, want NaN", x)
		}
		if x := b.Norm(0, 1); x != 0 {
			t.Errorf("μ = 0 gave %g", x)
		}
	}
}
