package nonlinear

import (
	"context"
	"fmt"
	"math"
	"testing"
	"time"

	"gapbook/convex"
	"gapbook/mesh"
	"gapbook/problem"
)

// BenchmarkSolverSuite solves the convergence suite of the estimate tests
// (p from 1.1 to 20; boundary data of a p-harmonic function with f = 0,
// and a manufactured solution) at 128 cells per side on the square, the
// L-shape and the disk polygon, and reports Newton steps, the matrix-vector
// products of CG, matvec equivalents (the fastest solve over the time of one
// stiffness product; the budget of the solver table is 2,000 per solve) and
// the ratio of Newton steps to those at p = 3 (target ≤ 2).
func BenchmarkSolverSuite(b *testing.B) {
	type dom struct {
		name string
		mesh func() (*mesh.Mesh, error)
	}
	doms := []dom{
		{"square", func() (*mesh.Mesh, error) { return mesh.Rectangle(0, 1, 0, 1, 128, 128) }},
		{"lshape", func() (*mesh.Mesh, error) { return mesh.LShape(64) }},
		{"disk", func() (*mesh.Mesh, error) { return mesh.Disk(1, 32, 2.0/128) }},
	}
	for _, d := range doms {
		m, err := d.mesh()
		if err != nil {
			b.Fatal(err)
		}
		mv := matvecTime(b, m)
		for _, kind := range []string{"harmonic", "manufactured"} {
			steps3 := 0
			for _, p := range []float64{3, 1.1, 1.5, 2, 5, 8, 12, 20} {
				G, err := convex.Power(p)
				if err != nil {
					b.Fatal(err)
				}
				var prob *problem.Problem
				if kind == "harmonic" {
					src := "0.5*log((x + 1.6)^2 + (y + 1.7)^2)"
					if p != 2 {
						src = fmt.Sprintf("((x + 1.6)^2 + (y + 1.7)^2)^(%.17g/2)", (p-2)/(p-1))
					}
					man, err := problem.Manufacture(src, G)
					if err != nil {
						b.Fatal(err)
					}
					_, u, _ := man.At(0)
					prob = problem.Steady(G, func(x, y float64) float64 { return 0 }, u)
				} else {
					man, err := problem.Manufacture("x + 0.5*y + 0.5*(1 - x*x)*(1 - y*y)*exp(x)", G)
					if err != nil {
						b.Fatal(err)
					}
					f, u, _ := man.At(0)
					prob = problem.Steady(G, f, u)
				}
				b.Run(fmt.Sprintf("%s/%s/p=%g", d.name, kind, p), func(b *testing.B) {
					var r *Result
					best := time.Duration(math.MaxInt64)
					for b.Loop() {
						start := time.Now()
						if r, err = Solve(context.Background(), m, prob, Options{}); err != nil {
							b.Fatal(err)
						}
						best = min(best, time.Since(start))
					}
					b.ReportMetric(float64(best)/float64(mv), "matvec-equiv")
					if p == 3 {
						steps3 = r.Newton
					}
					b.ReportMetric(float64(r.Newton), "newton")
					b.ReportMetric(float64(r.MatVecs), "cg-matvecs")
					if steps3 > 0 {
						b.ReportMetric(float64(r.Newton)/float64(steps3), "steps/p3")
					}
				})
			}
		}
	}
}
