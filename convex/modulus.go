package convex

import "math"

// BoundKind distinguishes the two shapes of modulus (docs/math.md §3).
type BoundKind int

const (
	// PowerBound is D ≥ K |ξ − ζ|^q (power growth q ≥ 2).
	PowerBound BoundKind = iota
	// WeightedBound is D ≥ K |ξ − ζ|² / (w(ξ) + w(ζ))^{2−q} with
	// w(ξ) = √(Lift² + |ξ|²) (growth 1 < q < 2).
	WeightedBound
)

// Bound is one lower bound of a Bregman distance D(ξ, ζ), valid for all ξ, ζ.
// For a primal modulus D(ξ, ζ) = D_G(ξ, ∂G(ζ)); for a dual modulus
// D(η, θ) = D_G(∂G*(θ), η), the Bregman distance of G*.
type Bound struct {
	Kind BoundKind
	// Exponent is q: the norm ‖·‖_q that Norm bounds.
	Exponent float64
	// K is the constant in front.
	K float64
	// Lift is ε of the weight √(ε² + |ξ|²) (0 for the plain |ξ|).
	Lift float64
}

// powerBound returns the modulus of |ξ|^q/q lifted by eps (docs/math.md §3):
// q ≥ 2: K = c_q/q, c_q = 1/(2^{q−1} − 1) (Lindqvist §10 (I), docs/checks.md 6);
// q < 2: K = (q − 1)/2 with weight |ξ| + |ζ| (docs/checks.md 7, Hessian bound).
func powerBound(q, lift float64) Bound {
	if q >= 2 {
		return Bound{Kind: PowerBound, Exponent: q, K: 1 / ((math.Pow(2, q-1) - 1) * q)}
	}
	return Bound{Kind: WeightedBound, Exponent: q, K: (q - 1) / 2, Lift: lift}
}

// Weight returns w(ξ) = √(Lift² + |ξ|²).
func (b Bound) Weight(xi [2]float64) float64 {
	if b.Lift == 0 {
		return norm(xi)
	}
	return math.Hypot(b.Lift, norm(xi))
}

// Lower returns the bound's value at (ξ, ζ).
func (b Bound) Lower(xi, zeta [2]float64) float64 {
	r := norm([2]float64{xi[0] - zeta[0], xi[1] - zeta[1]})
	if b.Kind == PowerBound {
		return b.K * math.Pow(r, b.Exponent)
	}
	if r == 0 {
		return 0
	}
	w := b.Weight(xi) + b.Weight(zeta)
	return b.K * r * r / math.Pow(w, 2-b.Exponent)
}

// Norm turns an integrated error measure μ ≥ ∫ D into a bound X ≥ ‖ξ − ζ‖_q
// (docs/math.md §3), ξ, ζ now fields on Ω.
//
// PowerBound: μ ≥ K X^q, so X = (μ/K)^{1/q}; n is ignored.
//
// WeightedBound: Hölder with exponents 2/q and 2/(2−q) gives
// X² ≤ (μ/K) ‖w(ξ) + w(ζ)‖_q^{2−q} ≤ (μ/K)(2n + X)^{2−q}, where
// n = ‖w(ξ)‖_q for the known field (for the plain weight ‖∇v‖_q) and
// ‖w(ζ)‖_q ≤ n + X since w is 1-Lipschitz. X²/(2n + X)^{2−q} increases in
// X, so the admissible X form an interval [0, X(μ)]; X(μ) is found by
// bisection and the upper end of the final bracket is returned, so the
// result is never below the exact root.
func (b Bound) Norm(mu, n float64) float64 {
	q := b.Exponent
	switch {
	case math.IsNaN(mu) || math.IsNaN(n) || mu < 0 || n < 0 || !(b.K > 0):
		return math.NaN()
	case mu == 0:
		return 0
	case math.IsInf(mu, 1):
		return math.Inf(1)
	}
	if b.Kind == PowerBound {
		return math.Pow(mu/b.K, 1/q)
	}
	a := mu / b.K
	h := func(x float64) float64 { return x * x / math.Pow(2*n+x, 2-q) }
	lo, hi := 0.0, math.Max(2*n, math.Pow(math.Pow(2, 2-q)*a, 1/q))
	for h(hi) < a {
		hi *= 2 // guards rounding in the bracket estimate
		if math.IsInf(hi, 1) {
			return hi
		}
	}
	for i := 0; i < 2000 && hi-lo > 2*eps*hi; i++ {
		mid := lo + 0.5*(hi-lo)
		if h(mid) < a {
			lo = mid
		} else {
			hi = mid
		}
	}
	return hi
}

// Modulus collects the lower bounds of a Bregman distance that a potential
// guarantees. Every bound in Bounds is valid on its own; the first is in the
// norm of the potential's growth. An empty list means no guaranteed modulus
// (Label is then Estimate).
type Modulus struct {
	Bounds []Bound
	Label  Label
}

// Lower returns the largest of the bounds at (ξ, ζ), or 0 if there is none.
func (m Modulus) Lower(xi, zeta [2]float64) float64 {
	var v float64
	for _, b := range m.Bounds {
		v = math.Max(v, b.Lower(xi, zeta))
	}
	return v
}
