package convex

import "math"

// PiAlpha returns π_α = 2π/(α sin(π/α)), the half period of the generalised
// sine of the one-dimensional α-Laplacian (docs/checks.md item 1); π_2 = π.
func PiAlpha(alpha float64) float64 {
	return 2 * math.Pi / (alpha * math.Sin(math.Pi/alpha))
}

// FriedrichsWidth returns ℓ/((α − 1)^{1/α} π_α), a guaranteed bound (label
// Guaranteed) of the Friedrichs constant C in ‖w‖_α ≤ C‖∇w‖_α on
// W^{1,α}_0(Ω) for Ω inside a strip of width ℓ: the sharp constant of the
// interval (0, ℓ) (Bognár & Došlý 2010, eqs. (1.1)–(1.2)), which bounds the
// strip by slicing along the normal direction.
func FriedrichsWidth(alpha, width float64) float64 {
	return width / (math.Pow(alpha-1, 1/alpha) * PiAlpha(alpha))
}

// PoincareConvex returns diam/((α − 1)^{1/α} π_α), a guaranteed bound (label
// Guaranteed) of the Poincaré constant in min_c ‖w − c‖_α ≤ C‖∇w‖_α on a
// convex cell of diameter diam (Ferone, Nitsch & Trombetti 2012; docs/checks.md
// item 5). It holds for the best constant c, not for the mean when α > 6.
func PoincareConvex(alpha, diam float64) float64 {
	return FriedrichsWidth(alpha, diam)
}
