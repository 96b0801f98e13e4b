// Package convex holds the convex potentials G(ξ) = g(|ξ|) of nonlinear
// diffusion, their conjugates, the compound functional (Fenchel–Young gap) D_G
// evaluated without cancellation, the moduli that turn D_G into norm bounds,
// and the width and Poincaré constants the error bounds need.
//
// Vectors are [2]float64; in 1-D the second component is 0. Every function on
// vectors is allocation free so that it can sit inside quadrature loops.
package convex

import "math"

// Label says how far a number can be trusted. It is the one label type of
// gapbook: the bounds carry it and the notebook shows and saves it as its
// text. The zero value is no label, which no result may carry.
type Label string

const (
	// Guaranteed numbers are true bounds up to floating point and the
	// reported quadrature.
	Guaranteed Label = "guaranteed"
	// Estimate numbers are computed approximations without a proof of bound.
	Estimate Label = "estimate"
	// Reference numbers are published or independently computed values used
	// for comparison (an exact solution, an input, exact geometry, a count).
	Reference Label = "reference"
)

// String returns "guaranteed", "estimate" or "reference".
func (l Label) String() string { return string(l) }

// Valid reports whether l is one of the three labels.
func (l Label) Valid() bool { return l == Guaranteed || l == Estimate || l == Reference }

// Potential is a radial convex potential G(ξ) = g(|ξ|) with g convex,
// increasing, g(0) = g'(0) = 0 and superlinear growth of order Growth().
//
// Implementations must make Profile and Conjugate allocation free.
type Potential interface {
	// Profile returns g(t), g'(t), g''(t) for t ≥ 0. At t = 0, g'' may be
	// +Inf (growth below 2) or 0 (growth above 2).
	Profile(t float64) (g, g1, g2 float64)
	// Conjugate returns g*(s) = sup_{t≥0}(s t − g(t)) and
	// (g*)'(s) = (g')^{-1}(s) for s ≥ 0.
	Conjugate(s float64) (gs, ds float64)
	// Growth returns the exponent α > 1 of c1 t^α − c0 ≤ g(t) ≤ c2 t^α + c0.
	Growth() float64
	// Modulus returns the lower bounds of the Bregman distance of G that
	// this potential guarantees (see Modulus).
	Modulus() Modulus
	// DualModulus returns the lower bounds of the Bregman distance of G*.
	DualModulus() Modulus
	// String names the potential with its parameters.
	String() string
}

// scalarGapper is implemented by potentials that evaluate the scalar gap
// d(t, s) more accurately or faster than the generic quadrature.
type scalarGapper interface {
	scalarGap(t, s float64) float64
}

// norm is |v|: the plain square root of the sum of squares where the
// squares can neither overflow nor underflow, math.Hypot otherwise.
func norm(v [2]float64) float64 {
	a, b := math.Abs(v[0]), math.Abs(v[1])
	if m := max(a, b); m < 1e150 && m > 1e-150 {
		return math.Sqrt(v[0]*v[0] + v[1]*v[1])
	}
	return math.Hypot(v[0], v[1])
}

// Value returns G(ξ) = g(|ξ|).
func Value(G Potential, xi [2]float64) float64 {
	g, _, _ := G.Profile(norm(xi))
	return g
}

// Flux returns ∂G(ξ) = g'(|ξ|) ξ/|ξ|, and 0 at ξ = 0.
func Flux(G Potential, xi [2]float64) [2]float64 {
	t := norm(xi)
	if t == 0 {
		return [2]float64{}
	}
	_, g1, _ := G.Profile(t)
	f := g1 / t
	return [2]float64{f * xi[0], f * xi[1]}
}

// Hessian returns the entries xx, xy, yy of
// D²G(ξ) = g”(|ξ|) n⊗n + (g'(|ξ|)/|ξ|)(I − n⊗n), n = ξ/|ξ| (docs/math.md §1).
//
// The regularisation reg ≥ 0 acts only where |ξ| < reg: there both
// coefficients are taken at radius reg instead of |ξ|, i.e. g”(reg) along n
// and g'(reg)/reg across n, which caps the blow-up of growth α < 2 and lifts
// the degeneracy of α > 2. At ξ = 0 exactly the direction n is undefined and
// the result is g”(ρ) I with ρ = reg (for reg = 0 this is the limit g”(0),
// possibly +Inf or 0). Where |ξ| ≥ reg the exact Hessian is returned, so a
// Newton method using it still solves the unregularised problem.
func Hessian(G Potential, xi [2]float64, reg float64) [3]float64 {
	t := norm(xi)
	rho := t
	if rho < reg {
		rho = reg
	}
	_, g1, g2 := G.Profile(rho)
	if t == 0 {
		return [3]float64{g2, 0, g2}
	}
	var tang float64
	if rho == 0 {
		tang = g2
	} else {
		tang = g1 / rho
	}
	nx, ny := xi[0]/t, xi[1]/t
	d := g2 - tang
	return [3]float64{tang + d*nx*nx, d * nx * ny, tang + d*ny*ny}
}

// Dual returns G*(η) = g*(|η|).
func Dual(G Potential, eta [2]float64) float64 {
	gs, _ := G.Conjugate(norm(eta))
	return gs
}

// DualFlux returns ∂G*(η) = (g*)'(|η|) η/|η|, the inverse of Flux.
func DualFlux(G Potential, eta [2]float64) [2]float64 {
	s := norm(eta)
	if s == 0 {
		return [2]float64{}
	}
	_, ds := G.Conjugate(s)
	f := ds / s
	return [2]float64{f * eta[0], f * eta[1]}
}

// Gap returns the compound functional D_G(ξ, η) = G(ξ) + G*(η) − ξ·η ≥ 0
// evaluated without cancellation (docs/math.md §2) as
//
//	D_G(ξ, η) = d(|ξ|, |η|) + ½|ξ||η| |ξ/|ξ| − η/|η||²,
//
// with the scalar gap d of ScalarGap. Both terms are non-negative sums, so
// the relative accuracy is that of d.
func Gap(G Potential, xi, eta [2]float64) float64 {
	t, s := norm(xi), norm(eta)
	d := ScalarGap(G, t, s)
	if t == 0 || s == 0 {
		return d
	}
	ux, uy := xi[0]/t-eta[0]/s, xi[1]/t-eta[1]/s
	return d + 0.5*t*s*(ux*ux+uy*uy)
}

// ScalarGap returns d(t, s) = g(t) + g*(s) − t s ≥ 0 for t, s ≥ 0 without
// cancellation: d(t, s) = ∫_τ^t (g'(r) − s) dr with τ = (g*)'(s), integrated by
// composite Gauss–Legendre quadrature (see gaussGap). The power and quadratic
// potentials use their own exact forms.
func ScalarGap(G Potential, t, s float64) float64 {
	if sg, ok := G.(scalarGapper); ok {
		return sg.scalarGap(t, s)
	}
	return gaussGap(G, t, s)
}
