package convex

import (
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// gaussN is the number of Gauss–Legendre points per panel of the scalar gap.
// On a panel [c, 2c] a singularity at 0 sits at Bernstein-ellipse parameter
// ρ = 3 + √8, so the rule converges like ρ^{−2n} ≈ 4e-19 for n = 12.
const gaussN = 12

// gaussX, gaussW are the Gauss–Legendre nodes and weights on [0, 1]
// (gonum's quad.Legendre).
var gaussX, gaussW = legendre01()

func legendre01() (x, w [gaussN]float64) {
	xs, ws := make([]float64, gaussN), make([]float64, gaussN)
	quad.Legendre{}.FixedLocations(xs, ws, 0, 1)
	copy(x[:], xs)
	copy(w[:], ws)
	return x, w
}

// maxPanels caps the geometric grading of gaussGap; the piece below
// b·2^{−maxPanels} contributes less than a rounding error.
const maxPanels = 60

// gaussGap returns d(t, s) = ∫_τ^t (g'(r) − s) dr, τ = (g*)'(s), by composite
// 12-point Gauss–Legendre quadrature on panels graded geometrically toward
// r = 0: [b/2, b], [b/4, b/2], ... down to min(t, τ). Each panel [c, e] has
// e ≤ 2c, so a profile g' that is not smooth at 0 (r^{α−1}, α < 2) or has
// a complex singularity near 0 (regularised power) is still integrated to
// rounding. When t and τ are close (the case that matters for the error
// bounds) there is a single panel. The integrand g'(r) − s is formed in
// floating point; the resulting error, relative to d, is about
// 2ε_mach s/(g”(τ)|t − τ|), the same order as the change of d caused by
// rounding t itself, so nothing is lost beyond the conditioning of d.
func gaussGap(G Potential, t, s float64) float64 {
	if s == 0 {
		g, _, _ := G.Profile(t)
		return g
	}
	gs, tau := G.Conjugate(s)
	if t == 0 || math.IsInf(gs, 1) {
		return gs
	}
	a, b, sign := tau, t, 1.0
	if t < tau {
		a, b, sign = t, tau, -1
	}
	if math.IsInf(b, 0) || math.IsNaN(a+b) {
		g, _, _ := G.Profile(t)
		return g + gs - t*s
	}
	var sum float64
	hi := b
	for k := 0; k < maxPanels && hi > 2*a; k++ {
		sum += panel(G, s, hi/2, hi)
		hi /= 2
	}
	sum += panel(G, s, a, hi)
	d := sign * sum
	if d < 0 {
		return 0
	}
	return d
}

// panel integrates g'(r) − s over [c, e] with the 12-point Gauss rule.
func panel(G Potential, s, c, e float64) float64 {
	h := e - c
	var sum float64
	for i := range gaussX {
		_, g1, _ := G.Profile(c + h*gaussX[i])
		sum += gaussW[i] * (g1 - s)
	}
	return h * sum
}

// invertSlope solves g'(τ) = s for τ ≥ 0 by safeguarded Newton: a bracket
// [lo, hi] with hi ≤ 2 lo (or lo = 0) is found by doubling or halving from
// guess, then Newton steps are taken and replaced by bisection whenever they
// leave the bracket (common practice, no source; e.g. the rtsafe scheme of
// numerical-methods textbooks). Returns NaN if g' is NaN on the way.
func invertSlope(prof func(t float64) (g, g1, g2 float64), s, guess float64) float64 {
	switch {
	case s == 0:
		return 0
	case !(s > 0):
		return math.NaN()
	case math.IsInf(s, 1):
		return math.Inf(1)
	}
	if !(guess > 0) || math.IsInf(guess, 0) {
		guess = 1
	}
	slope := func(t float64) float64 { _, g1, _ := prof(t); return g1 }
	lo, hi := 0.0, guess
	if v := slope(guess); math.IsNaN(v) {
		return math.NaN()
	} else if v < s {
		lo = guess
		for hi = 2 * guess; ; hi *= 2 {
			if math.IsInf(hi, 1) {
				return math.Inf(1)
			}
			v := slope(hi)
			if math.IsNaN(v) {
				return math.NaN()
			}
			if v >= s {
				break
			}
			lo = hi
		}
	} else {
		for lo = guess / 2; lo > 0; lo /= 2 {
			v := slope(lo)
			if math.IsNaN(v) {
				return math.NaN()
			}
			if v < s {
				break
			}
			hi = lo
		}
	}
	// The guess is an end of the bracket; starting Newton there (rather than
	// at the midpoint) keeps a good guess from being thrown away.
	t := guess
	if !(t >= lo && t <= hi) {
		t = lo + 0.5*(hi-lo)
	}
	for it := 0; it < 200; it++ {
		_, g1, g2 := prof(t)
		r := g1 - s
		if r == 0 {
			return t
		}
		if r > 0 {
			hi = t
		} else {
			lo = t
		}
		next := t - r/g2
		if !(next >= lo && next <= hi) {
			next = lo + 0.5*(hi-lo)
		}
		if math.Abs(next-t) <= 2*eps*next || hi-lo <= 2*eps*hi {
			return next
		}
		t = next
	}
	return t
}

const eps = 0x1p-52
