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
		// quadForm written out: the call (too large to inline) cost 5 % of
		// the space-time bounds, where this runs at every point and step.
		a, b, dd := lam[0], lam[1], lam[2]
		w0, w1, w2, w3, w4, w5 := a*a, b*b, dd*dd, b*dd, a*dd, a*b
		ys[q] = [2]float64{
			w0*c[0][0] + w1*c[1][0] + w2*c[2][0] + w3*c[3][0] + w4*c[4][0] + w5*c[5][0],
			w0*c[0][1] + w1*c[1][1] + w2*c[2][1] + w3*c[3][1] + w4*c[4][1] + w5*c[5][1],
		}
		divs[q] = lam[0]*d[0] + lam[1]*d[1] + lam[2]*d[2]
	}
}

// quadForm evaluates Σ_i λ_i² C_i + Σ_{i<j} λ_i λ_j C_ij, the storage of an
// Equilibrated flux on one cell, at lam.
func quadForm(c *[6][2]float64, lam [3]float64) [2]float64 {
	a, b, d := lam[0], lam[1], lam[2]
	w0, w1, w2, w3, w4, w5 := a*a, b*b, d*d, b*d, a*d, a*b
	return [2]float64{
		w0*c[0][0] + w1*c[1][0] + w2*c[2][0] + w3*c[3][0] + w4*c[4][0] + w5*c[5][0],
		w0*c[0][1] + w1*c[1][1] + w2*c[2][1] + w3*c[3][1] + w4*c[4][1] + w5*c[5][1],
	}
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
