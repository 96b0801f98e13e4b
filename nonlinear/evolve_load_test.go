package nonlinear

import (
	"context"
	"math"
	"testing"

	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// TestEvolveLoadSamples checks that each step evaluates f once per point of
// the load rule and that the solver takes those samples instead of
// evaluating f again (the count would grow otherwise), that the samples
// handed to EvolveOptions.Load are f(·, t1) at fem.P1.QuadPoints.
func TestEvolveLoadSamples(t *testing.T) {
	G := power(t, 3)
	f := func(x, y, t float64) float64 { return math.Exp(-t) * (1 + x*y) }
	for _, c := range []struct {
		name string
		m    *mesh.Mesh
	}{{"1d", must1(mesh.Interval(0, 1, 12))}, {"2d", must1(mesh.Rectangle(0, 1, 0, 1, 6, 6))}} {
		t.Run(c.name, func(t *testing.T) {
			const steps = 3
			calls := 0
			counted := func(x, y, t float64) float64 { calls++; return f(x, y, t) }
			s := must1(fem.NewP1(c.m))
			r := s.Rule(DefaultLoadDegree)
			pts := make([]mesh.Point, c.m.NumCells()*r.Len())
			s.QuadPoints(r, pts)
			var bad int
			ev := problem.Evolution(G, counted, nil, func(x, y float64) float64 { return x * (1 - x) }, 0, 0.3)
			_, err := Evolve(context.Background(), c.m, ev, EvolveOptions{Steps: steps, Load: func(t1 float64, degree int, vals []float64) {
				for i, p := range pts {
					if degree != DefaultLoadDegree || vals[i] != f(p.X, p.Y, t1) {
						bad++
					}
				}
			}}, nil)
			if err != nil {
				t.Fatal(err)
			}
			if want := steps * len(pts); calls != want {
				t.Errorf("f evaluated %d times, want %d (once per load point and step)", calls, want)
			}
			if bad > 0 {
				t.Errorf("%d load samples differ from f(·, t1) at the load points", bad)
			}
		})
	}
}

func must1[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}
