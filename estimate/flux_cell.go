package estimate

// cellFlux is implemented by fluxes that evaluate all the points of one
// cell at once, reading the cell's coefficients once instead of at every
// point; EvaluateTerms uses it when the flux has it. ys and divs have the
// length of lams.
type cellFlux interface {
	cellAt(k int, lams [][3]float64, ys [][2]float64, divs []float64)
}

func (a *Averaged) cellAt(k int, lams [][3]float64, ys [][2]float64, divs []float64) {
	c := &a.cells[k]
	var n [3][2]float64
	for i := range a.dim + 1 {
		n[i] = a.Nodal[c[i]]
	}
	d := a.div[k]
	for q, lam := range lams {
		ys[q] = [2]float64{lam[0]*n[0][0] + lam[1]*n[1][0] + lam[2]*n[2][0], lam[0]*n[0][1] + lam[1]*n[1][1] + lam[2]*n[2][1]}
		divs[q] = d
	}
}

func (e *Equilibrated) cellAt(k int, lams [][3]float64, ys [][2]float64, divs []float64) {
	c := &e.coef[k]
	d := e.div[k]
	for q, lam := range lams {
		ys[q] = quadForm(c, lam)
		divs[q] = lam[0]*d[0] + lam[1]*d[1] + lam[2]*d[2]
	}
}

// quadForm evaluates Σ_i λ_i² C_i + Σ_{i<j} λ_i λ_j C_ij, the storage of an
// Equilibrated flux on one cell, at lam.
func quadForm(c *[6][2]float64, lam [3]float64) (y [2]float64) {
	w := [6]float64{lam[0] * lam[0], lam[1] * lam[1], lam[2] * lam[2], lam[1] * lam[2], lam[0] * lam[2], lam[0] * lam[1]}
	for i := range 6 {
		y[0] += w[i] * c[i][0]
		y[1] += w[i] * c[i][1]
	}
	return y
}

// atPoints evaluates y at the points lams of cell k, by cellAt when y has
// it.
func atPoints(y Flux, k int, lams [][3]float64, ys [][2]float64, divs []float64) {
	if c, ok := y.(cellFlux); ok {
		c.cellAt(k, lams, ys, divs)
		return
	}
	for q, lam := range lams {
		ys[q], divs[q] = y.At(k, lam)
	}
}
