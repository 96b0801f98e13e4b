package convex

import (
	"fmt"
	"math"
	"strconv"
)

func fmtG(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }

func checkAlpha(who string, alpha float64) error {
	if !(alpha > 1) || math.IsInf(alpha, 0) {
		return fmt.Errorf("%s: growth exponent p = %s is not allowed; p must be a finite number > 1", who, fmtG(alpha))
	}
	return nil
}

// powerPot is g(t) = t^α/α; hess and dual are t^{α−2} and s^{1/(α−1)}.
type powerPot struct {
	alpha, conj float64
	hess, dual  FastPow
}

// Power returns the power potential G(ξ) = |ξ|^α/α, α > 1, whose flux is the
// α-Laplacian's |ξ|^{α−2}ξ; G*(η) = |η|^{α'}/α', α' = α/(α−1).
func Power(alpha float64) (Potential, error) {
	if err := checkAlpha("power potential", alpha); err != nil {
		return nil, err
	}
	return powerPot{alpha: alpha, conj: alpha / (alpha - 1), hess: NewFastPow(alpha - 2), dual: NewFastPow(1 / (alpha - 1))}, nil
}

func (p powerPot) Profile(t float64) (g, g1, g2 float64) {
	if t == 0 {
		return 0, 0, (p.alpha - 1) * math.Pow(0, p.alpha-2)
	}
	q := p.hess.Of(t)
	g1 = q * t
	return g1 * t / p.alpha, g1, (p.alpha - 1) * q
}

func (p powerPot) Conjugate(s float64) (gs, ds float64) {
	ds = p.dual.Of(s)
	return ds * s / p.conj, ds
}

// FastPow evaluates t^e for t ≥ 0 and a fixed exponent e. Whole and
// half-whole exponents of size up to 8 (α = 3: t^1 and s^{1/2}; α = 3/2:
// t^{−1/2} and s^2; α = 4: t^2, ...) use products, one square root and at
// most one division, several times cheaper than math.Pow and within a few
// ulp of it; other exponents, and t outside [1e-30, 1e30] (0, ∞ and NaN
// included) where the products could lose range, go to math.Pow.
type FastPow struct {
	e     float64
	whole int
	half  bool
	neg   bool
	fast  bool
}

// NewFastPow prepares t^e.
func NewFastPow(e float64) FastPow {
	p := FastPow{e: e}
	a := math.Abs(e)
	if h := 2 * a; h == math.Trunc(h) && a <= 8 {
		p.fast, p.whole, p.half, p.neg = true, int(math.Floor(a)), h != 2*math.Floor(a), e < 0
	}
	return p
}

// Of returns t^e.
func (p FastPow) Of(t float64) float64 {
	if !p.fast || !(t >= 1e-30 && t <= 1e30) {
		return math.Pow(t, p.e)
	}
	r := 1.0
	for range p.whole {
		r *= t
	}
	if p.half {
		r *= math.Sqrt(t)
	}
	if p.neg {
		return 1 / r
	}
	return r
}

func (p powerPot) Growth() float64 { return p.alpha }
func (p powerPot) String() string  { return "power(p=" + fmtG(p.alpha) + ")" }
func (p powerPot) Modulus() Modulus {
	return Modulus{Bounds: []Bound{powerBound(p.alpha, 0)}, Label: Guaranteed}
}
func (p powerPot) DualModulus() Modulus {
	return Modulus{Bounds: []Bound{powerBound(p.conj, 0)}, Label: Guaranteed}
}

// scalarGap for the power potential: with τ = s^{1/(α−1)}, x = t/τ,
// d = τ^α φ(x), φ(x) = ∫_1^x (r^{α−1} − 1) dr. For x ∈ [½, 2] the integrand
// is formed as expm1((α−1) log1p(v)), exact to rounding, and integrated by
// the 12-point Gauss rule (analytic there, nearest singularity at v = −1).
// Elsewhere the closed form d = s^{α'}/α' + t s expm1((α−1)ln t − ln s − ln α)
// loses at most a factor 8 to cancellation.
func (p powerPot) scalarGap(t, s float64) float64 {
	a := p.alpha
	if s == 0 {
		g, _, _ := p.Profile(t)
		return g
	}
	if t == 0 {
		gs, _ := p.Conjugate(s)
		return gs
	}
	tau := math.Pow(s, 1/(a-1))
	if tau > 0 && !math.IsInf(tau, 0) {
		x := t / tau
		if x >= 0.5 && x <= 2 {
			u := x - 1
			var sum float64
			for i := range gaussX {
				sum += gaussW[i] * math.Expm1((a-1)*math.Log1p(u*gaussX[i]))
			}
			// τ^α u Σ: multiply in an order that avoids spurious overflow.
			return tau * s * u * sum
		}
	}
	gs, _ := p.Conjugate(s)
	d := gs + t*s*math.Expm1((a-1)*math.Log(t)-math.Log(s)-math.Log(a))
	if d < 0 {
		return 0
	}
	return d
}

// quadratic is g(t) = κt²/2.
type quadratic struct{ kappa float64 }

// Quadratic returns G(ξ) = κ|ξ|²/2, κ > 0 (linear diffusion with
// conductivity κ); G*(η) = |η|²/(2κ).
func Quadratic(kappa float64) (Potential, error) {
	if !(kappa > 0) || math.IsInf(kappa, 0) {
		return nil, fmt.Errorf("quadratic potential: κ = %s is not allowed; κ must be a finite number > 0", fmtG(kappa))
	}
	return quadratic{kappa}, nil
}

func (q quadratic) Profile(t float64) (g, g1, g2 float64) {
	return q.kappa * t * t / 2, q.kappa * t, q.kappa
}
func (q quadratic) Conjugate(s float64) (gs, ds float64) {
	return s * s / (2 * q.kappa), s / q.kappa
}
func (q quadratic) Growth() float64 { return 2 }
func (q quadratic) String() string  { return "quadratic(κ=" + fmtG(q.kappa) + ")" }
func (q quadratic) Modulus() Modulus {
	return Modulus{Bounds: []Bound{{Kind: PowerBound, Exponent: 2, K: q.kappa / 2}}, Label: Guaranteed}
}
func (q quadratic) DualModulus() Modulus {
	return Modulus{Bounds: []Bound{{Kind: PowerBound, Exponent: 2, K: 1 / (2 * q.kappa)}}, Label: Guaranteed}
}

// scalarGap: d(t, s) = (κt − s)²/(2κ) exactly.
func (q quadratic) scalarGap(t, s float64) float64 {
	r := q.kappa*t - s
	return r * r / (2 * q.kappa)
}

// regPower is g(t) = ((ε²+t²)^{α/2} − ε^α)/α.
type regPower struct{ alpha, eps, epsA float64 }

// RegPower returns the regularised power potential
// g(t) = ((ε² + t²)^{α/2} − ε^α)/α, α > 1, ε ≥ 0 (ε = 0 is Power(α)). It is
// the power potential of the vector (ε, ξ) in R^{d+1} minus a constant, so it
// inherits the power moduli (docs/math.md §3). Its conjugate is computed by
// safeguarded Newton.
func RegPower(alpha, epsilon float64) (Potential, error) {
	if err := checkAlpha("regularised power potential", alpha); err != nil {
		return nil, err
	}
	if !(epsilon >= 0) || math.IsInf(epsilon, 0) {
		return nil, fmt.Errorf("regularised power potential: ε = %s is not allowed; ε must be a finite number ≥ 0", fmtG(epsilon))
	}
	return regPower{alpha, epsilon, math.Pow(epsilon, alpha)}, nil
}

func (p regPower) Profile(t float64) (g, g1, g2 float64) {
	a, e := p.alpha, p.eps
	r2 := e*e + t*t
	q := math.Pow(r2, a/2-2) // (ε²+t²)^{α/2−2}
	if r2 == 0 {
		return 0, 0, (a - 1) * math.Pow(0, a-2)
	}
	g1 = t * q * r2
	g2 = q * (e*e + (a-1)*t*t)
	if t < e {
		// (ε²+t²)^{α/2} − ε^α cancels for t ≪ ε.
		z := t / e
		g = p.epsA * math.Expm1(a/2*math.Log1p(z*z)) / a
	} else {
		g = (q*r2*r2 - p.epsA) / a
	}
	return g, g1, g2
}

func (p regPower) guess(s float64) float64 {
	a, e := p.alpha, p.eps
	t1 := math.Pow(s, 1/(a-1))
	if e == 0 {
		return t1
	}
	t2 := s * math.Pow(e, 2-a)
	// g'(t) lies above both asymptotes for α ≥ 2 and below both for α < 2.
	if a >= 2 {
		return math.Min(t1, t2)
	}
	return math.Max(t1, t2)
}

func (p regPower) Conjugate(s float64) (gs, ds float64) {
	return conjugateFrom(p.Profile, s, invertSlope(p.Profile, s, p.guess(s)))
}

func (p regPower) Growth() float64 { return p.alpha }
func (p regPower) String() string {
	return "regularised power(p=" + fmtG(p.alpha) + ", ε=" + fmtG(p.eps) + ")"
}
func (p regPower) Modulus() Modulus {
	return Modulus{Bounds: []Bound{powerBound(p.alpha, p.eps)}, Label: Guaranteed}
}

// DualModulus: the Bregman distance of G* equals that of the power
// conjugate in R^{d+1} at the lifted fluxes, whose distance is at least that
// of their last d components, so the unweighted bound (α ≤ 2, α' ≥ 2)
// carries over. The weighted bound (α > 2) would need an upper bound of the
// lifted flux length; none is offered.
func (p regPower) DualModulus() Modulus {
	if p.eps == 0 || p.alpha <= 2 {
		return Modulus{Bounds: []Bound{powerBound(p.alpha/(p.alpha-1), 0)}, Label: Guaranteed}
	}
	return Modulus{Label: Estimate}
}

// powerSum is g(t) = a t²/2 + b t^α/α.
type powerSum struct{ a, b, alpha float64 }

// PowerSum returns g(t) = a t²/2 + b t^α/α with a, b > 0 and α > 2 (a fluid
// with a Newtonian floor and power-law thickening). Conjugate by safeguarded
// Newton.
func PowerSum(a, b, alpha float64) (Potential, error) {
	if !(alpha > 2) || math.IsInf(alpha, 0) {
		return nil, fmt.Errorf("power sum potential: p = %s is not allowed; p must be a finite number > 2", fmtG(alpha))
	}
	if !(a > 0) || math.IsInf(a, 0) {
		return nil, fmt.Errorf("power sum potential: a = %s is not allowed; a must be a finite number > 0", fmtG(a))
	}
	if !(b > 0) || math.IsInf(b, 0) {
		return nil, fmt.Errorf("power sum potential: b = %s is not allowed; b must be a finite number > 0", fmtG(b))
	}
	return powerSum{a, b, alpha}, nil
}

func (p powerSum) Profile(t float64) (g, g1, g2 float64) {
	q := math.Pow(t, p.alpha-2)
	return p.a*t*t/2 + p.b*q*t*t/p.alpha, p.a*t + p.b*q*t, p.a + p.b*(p.alpha-1)*q
}

func (p powerSum) Conjugate(s float64) (gs, ds float64) {
	guess := math.Min(s/p.a, math.Pow(s/p.b, 1/(p.alpha-1)))
	return conjugateFrom(p.Profile, s, invertSlope(p.Profile, s, guess))
}

func (p powerSum) Growth() float64 { return p.alpha }
func (p powerSum) String() string {
	return "power sum(a=" + fmtG(p.a) + ", b=" + fmtG(p.b) + ", p=" + fmtG(p.alpha) + ")"
}

// Modulus: the Bregman distance is the sum of those of the two terms, so both
// b(c_α/α)|ξ−ζ|^α (first, in the growth norm) and a|ξ−ζ|²/2 hold.
func (p powerSum) Modulus() Modulus {
	pb := powerBound(p.alpha, 0)
	pb.K *= p.b
	return Modulus{Bounds: []Bound{pb, {Kind: PowerBound, Exponent: 2, K: p.a / 2}}, Label: Guaranteed}
}

// DualModulus: none is offered (the conjugate of a sum is an infimal
// convolution; no proven lower bound is implemented).
func (p powerSum) DualModulus() Modulus { return Modulus{Label: Estimate} }

// custom is a user profile checked for convexity.
type custom struct {
	name  string
	g     func(t float64) (g, g1, g2 float64)
	alpha float64
}

// Custom wraps a user profile g (returning g, g', g”) with declared growth
// α. It samples g at 401 points of [0, 1000] (0, 200 linearly spaced, 200
// log-spaced from 1e-6) and refuses a g that is NaN/Inf, has g(0) ≠ 0 or
// g'(0) ≠ 0, is not increasing, not convex (g” < 0 or g' decreasing beyond
// rounding), or not superlinear (the local exponent 1 + log10(g'(1000)/g'(100))
// below 1 + (α−1)/4). No modulus is guaranteed (docs/math.md §3): Modulus and
// DualModulus are empty and labelled Estimate.
func Custom(name string, g func(t float64) (g, g1, g2 float64), alpha float64) (Potential, error) {
	who := "potential " + strconv.Quote(name)
	if g == nil {
		return nil, fmt.Errorf("%s: no formula given", who)
	}
	if err := checkAlpha(who, alpha); err != nil {
		return nil, err
	}
	ts := make([]float64, 0, 401)
	ts = append(ts, 0)
	for i := 0; i < 200; i++ {
		ts = append(ts, 1e-6*math.Pow(1e9, float64(i)/199))
	}
	for i := 1; i <= 200; i++ {
		ts = append(ts, 5*float64(i))
	}
	sortFloats(ts)
	type sample struct{ t, g, g1, g2 float64 }
	ss := make([]sample, len(ts))
	var scale1, scale2 float64
	for i, t := range ts {
		v, v1, v2 := g(t)
		if math.IsNaN(v) || math.IsInf(v, 0) || math.IsNaN(v1) || math.IsInf(v1, 0) || math.IsNaN(v2) || math.IsInf(v2, 0) {
			return nil, fmt.Errorf("%s: g(t), g'(t) or g''(t) is not a finite number at t = %s (values %s, %s, %s)", who, fmtG(t), fmtG(v), fmtG(v1), fmtG(v2))
		}
		ss[i] = sample{t, v, v1, v2}
		scale1 = math.Max(scale1, math.Abs(v1))
		scale2 = math.Max(scale2, math.Abs(v2))
	}
	scale0 := math.Abs(ss[len(ss)-1].g)
	if math.Abs(ss[0].g) > 1e-14*scale0 {
		return nil, fmt.Errorf("%s: g(0) = %s, but a potential must have g(0) = 0", who, fmtG(ss[0].g))
	}
	if math.Abs(ss[0].g1) > 1e-14*scale1 {
		return nil, fmt.Errorf("%s: g'(0) = %s, but a potential must have g'(0) = 0", who, fmtG(ss[0].g1))
	}
	tol1, tol2 := 1e-12*scale1, 1e-10*scale2
	for i, s := range ss {
		if s.g1 < -tol1 {
			return nil, fmt.Errorf("%s: not increasing: g'(%s) = %s < 0", who, fmtG(s.t), fmtG(s.g1))
		}
		if s.g2 < -tol2 {
			return nil, fmt.Errorf("%s: not convex: g''(%s) = %s < 0", who, fmtG(s.t), fmtG(s.g2))
		}
		if i > 0 && s.g1 < ss[i-1].g1-tol1 {
			return nil, fmt.Errorf("%s: not convex: g' decreases from %s at t = %s to %s at t = %s", who, fmtG(ss[i-1].g1), fmtG(ss[i-1].t), fmtG(s.g1), fmtG(s.t))
		}
		if i > 0 && s.g < ss[i-1].g-1e-14*scale0 {
			return nil, fmt.Errorf("%s: not increasing: g(%s) = %s < g(%s) = %s", who, fmtG(s.t), fmtG(s.g), fmtG(ss[i-1].t), fmtG(ss[i-1].g))
		}
	}
	_, d100, _ := g(100)
	_, d1000, _ := g(1000)
	if !(d100 > 0) || !(1+math.Log10(d1000/d100) >= 1+(alpha-1)/4) {
		return nil, fmt.Errorf("%s: not superlinear with growth p = %s: g'(100) = %s, g'(1000) = %s, expected a ratio near 10^(p−1) = %s", who, fmtG(alpha), fmtG(d100), fmtG(d1000), fmtG(math.Pow(10, alpha-1)))
	}
	return custom{name, g, alpha}, nil
}

func sortFloats(x []float64) {
	for i := 1; i < len(x); i++ {
		for j := i; j > 0 && x[j] < x[j-1]; j-- {
			x[j], x[j-1] = x[j-1], x[j]
		}
	}
}

func (c custom) Profile(t float64) (g, g1, g2 float64) { return c.g(t) }
func (c custom) Conjugate(s float64) (gs, ds float64) {
	return conjugateFrom(c.g, s, invertSlope(c.g, s, 1))
}
func (c custom) Growth() float64      { return c.alpha }
func (c custom) String() string       { return c.name }
func (c custom) Modulus() Modulus     { return Modulus{Label: Estimate} }
func (c custom) DualModulus() Modulus { return Modulus{Label: Estimate} }

// conjugateFrom returns g*(s) = sτ − g(τ) and τ, with g*(s) = +Inf when
// τ = +Inf (g' bounded by s on the representable range).
func conjugateFrom(prof func(t float64) (g, g1, g2 float64), s, tau float64) (gs, ds float64) {
	if math.IsInf(tau, 1) {
		return tau, tau
	}
	g, _, _ := prof(tau)
	return s*tau - g, tau
}

// IsPower reports whether G is the power potential |ξ|^α/α of Power, and
// its α, so that callers may use the closed forms of that family.
func IsPower(G Potential) (alpha float64, ok bool) {
	p, ok := G.(powerPot)
	return p.alpha, ok
}
