package estimate

import (
	"context"
	"math"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// TestEquilibratorShift checks the reuse of one equilibrator across loads:
// the quadratic model of the stream minimisation depends on v only and its
// minimiser is affine in the load, so the flux for f built by shifting the
// flux for f − df must be the flux Equilibrate builds for f from scratch
// (identity of the method, up to the CG tolerance), with div y* = −Π_k f
// for the whole load to rounding. A second flux on the same equilibrator (α = 2: same weights, so
// no new assembly) must equal a fresh one as well.
func TestEquilibratorShift(t *testing.T) {
	m := eqMust(mesh.Rectangle(0, 1, 0, 1, 4, 4))
	m = eqMust(m.Refine())
	m = eqMust(m.Refine())
	s := eqMust(fem.NewP1(m))
	v := make([]float64, m.NumNodes())
	dv := make([]float64, m.NumNodes())
	for i, p := range m.Nodes {
		v[i] = math.Sin(2*p.X+p.Y) + p.X*p.Y
		dv[i] = math.Cos(3*p.X) * p.Y
	}
	f0 := func(x, y float64) float64 { return math.Exp(x) * math.Cos(2*y) }
	src0 := FuncSource(m, f0)
	df := func(k int, lam [3]float64) float64 {
		c := m.Cells[k]
		return lam[0]*dv[c[0]] + lam[1]*dv[c[1]] + lam[2]*dv[c[2]]
	}
	src1 := func(k int, lam [3]float64) float64 { return src0(k, lam) + df(k, lam) }
	r := fem.Triangle(8)
	for _, c := range []struct {
		alpha float64
		order int
	}{{2, 0}, {2, 1}, {3, 0}, {3, 1}, {1.5, 1}} {
		G := eqMust(convex.Power(c.alpha))
		opt := EquilibrateOptions{Order: c.order, Tol: 1e-10}
		if err := opt.defaults(); err != nil {
			t.Fatal(err)
		}
		q := eqMust(newEquilibrator(s, c.order))
		y0 := eqMust(q.flux(context.Background(), G, v, src0, opt))
		y1 := eqMust(q.shift(context.Background(), G, y0, v, df, src1, opt))
		want := eqMust(Equilibrate(context.Background(), s, G, v, src1, opt))
		again := eqMust(q.flux(context.Background(), G, v, src1, opt))
		var diff, diffAgain, norm, moment float64
		for k := range m.Cells {
			for i, p := range r.Points {
				lam := [3]float64{1 - p[0] - p[1], p[0], p[1]}
				w := 2 * s.Area[k] * r.Weights[i]
				a, da := y1.At(k, lam)
				b, _ := want.At(k, lam)
				g, _ := again.At(k, lam)
				diff += w * (math.Pow(a[0]-b[0], 2) + math.Pow(a[1]-b[1], 2))
				diffAgain += w * (math.Pow(g[0]-b[0], 2) + math.Pow(g[1]-b[1], 2))
				norm += w * (b[0]*b[0] + b[1]*b[1])
				// div y* = −Π_k f pointwise, Π_k f of the whole load.
				moment = math.Max(moment, math.Abs(da+y1.Projected(k, lam))+math.Abs(y1.Projected(k, lam)-want.Projected(k, lam)))
			}
		}
		rel := math.Sqrt(diff / norm)
		relAgain := math.Sqrt(diffAgain / norm)
		if rel > 1e-7 || relAgain > 1e-7 {
			t.Errorf("α = %g, k = %d: shifted flux differs from a fresh one by %.2e (relative L²), a second flux by %.2e", c.alpha, c.order, rel, relAgain)
		}
		if moment > 1e-10 {
			t.Errorf("α = %g, k = %d: shifted flux has |div y* + Π_k f| + |Π_k f − fresh Π_k f| up to %.2e", c.alpha, c.order, moment)
		}
		if q.owner != again {
			t.Errorf("α = %g, k = %d: the equilibrator does not hold the model of its latest flux", c.alpha, c.order)
		}
	}
}
