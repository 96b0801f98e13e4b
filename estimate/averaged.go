package estimate

import (
	"fmt"

	"gapbook/convex"
	"gapbook/fem"
)

// Averaged is the averaged flux of docs/math.md §5: the continuous piecewise
// linear vector field whose value at each node is the cell-area weighted
// mean of the cellwise constant ∂G(∇v) over the cells around the node. It
// is cheap and its residual f + div y* does not vanish, so alone it gives
// bounds that do not converge; it is the starting point of better fluxes.
type Averaged struct {
	// Nodal holds y* at every node.
	Nodal [][2]float64
	cells [][3]int32
	div   []float64
	dim   int
}

// NewAveraged builds the averaged flux of ∂G(∇v) for the P1 function v.
func NewAveraged(s *fem.P1, G convex.Potential, v []float64) (*Averaged, error) {
	if s == nil || G == nil {
		return nil, fmt.Errorf("averaged flux: need a P1 space and a potential")
	}
	if len(v) != s.NumNodes() {
		return nil, fmt.Errorf("averaged flux: v has %d values for %d nodes", len(v), s.NumNodes())
	}
	m := s.Mesh
	nv := m.Dim + 1
	a := &Averaged{Nodal: make([][2]float64, m.NumNodes()), cells: m.Cells,
		div: make([]float64, m.NumCells()), dim: m.Dim}
	weight := make([]float64, m.NumNodes())
	grad := make([][2]float64, m.NumCells())
	s.Gradient(v, grad)
	for k, c := range m.Cells {
		p := convex.Flux(G, grad[k])
		for _, n := range c[:nv] {
			a.Nodal[n][0] += s.Area[k] * p[0]
			a.Nodal[n][1] += s.Area[k] * p[1]
			weight[n] += s.Area[k]
		}
	}
	for n, w := range weight {
		if w > 0 {
			a.Nodal[n][0] /= w
			a.Nodal[n][1] /= w
		}
	}
	for k, c := range m.Cells {
		for i, n := range c[:nv] {
			a.div[k] += a.Nodal[n][0]*s.Grad[k][i][0] + a.Nodal[n][1]*s.Grad[k][i][1]
		}
	}
	return a, nil
}

// At returns y*(x) and its (cellwise constant) divergence.
func (a *Averaged) At(k int, lam [3]float64) (y [2]float64, div float64) {
	c := &a.cells[k]
	for i := range a.dim + 1 {
		p := &a.Nodal[c[i]]
		y[0] += lam[i] * p[0]
		y[1] += lam[i] * p[1]
	}
	return y, a.div[k]
}

// Degree returns 1.
func (a *Averaged) Degree() int { return 1 }
