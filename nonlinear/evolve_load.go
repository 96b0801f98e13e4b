package nonlinear

import (
	"fmt"

	"gapbook/fem"
	"gapbook/mesh"
)

// loadSamples holds f(·, t) at the points of the load rule of every cell,
// evaluated once per step by Evolve and handed to the solver (and, through
// EvolveOptions.Load, to error bounds) instead of being evaluated by each.
type loadSamples struct {
	degree int
	pts    []mesh.Point
	vals   []float64
}

func newLoadSamples(m *mesh.Mesh, degree int) (*loadSamples, error) {
	if degree <= 0 {
		degree = DefaultLoadDegree
	}
	s, err := fem.NewP1(m)
	if err != nil {
		return nil, fmt.Errorf("evolution: %w", err)
	}
	r := s.Rule(degree)
	ld := &loadSamples{degree: degree, pts: make([]mesh.Point, m.NumCells()*r.Len()), vals: make([]float64, m.NumCells()*r.Len())}
	s.QuadPoints(r, ld.pts)
	return ld, nil
}

// at evaluates f(·, t) at the load points and returns f(·, t) for the
// solver: the sample of the point the solver asks for next (its load
// assembly visits the points in the order of QuadPoints), or f itself for
// any other point, so that the solver sees f(·, t) whatever it asks.
func (ld *loadSamples) at(f func(x, y, t float64) float64, t float64) func(x, y float64) float64 {
	for i, p := range ld.pts {
		ld.vals[i] = f(p.X, p.Y, t)
	}
	next := 0
	return func(x, y float64) float64 {
		if next >= len(ld.pts) {
			next = 0
		}
		if p := ld.pts[next]; p.X == x && p.Y == y {
			next++
			return ld.vals[next-1]
		}
		return f(x, y, t)
	}
}
