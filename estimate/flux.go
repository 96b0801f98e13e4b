// Package estimate reconstructs fluxes from a discrete solution and turns
// them into guaranteed, labelled error bounds for nonlinear diffusion
// problems: the compound-functional error identity, the largest-root
// majorant, norm bounds, minorants, energy and flow-rate intervals, local
// indicators and adaptive refinement (docs/math.md §4–§6).
package estimate

// Flux is a reconstructed flux y* on a mesh, evaluated cell by cell. Every
// bound of this package is valid for any Flux; its quality depends on the
// flux (docs/math.md §5).
//
// lam holds the barycentric coordinates of the point in cell k (in 1-D only
// lam[0] and lam[1] are used, and y[1] is 0). Implementations must not
// allocate in At: it sits inside quadrature loops.
type Flux interface {
	// At returns y*(x) and div y*(x) at the point of cell k with barycentric
	// coordinates lam.
	At(k int, lam [3]float64) (y [2]float64, div float64)
	// Degree is the polynomial degree of y* on each cell, so that callers
	// can choose quadrature rules.
	Degree() int
}
