package estimate

import (
	"context"
	"fmt"
	"testing"

	"gapbook/fem"
	"gapbook/nonlinear"
	"gapbook/problem"
)

// BenchmarkEvaluateTerms times EvaluateTerms alone (averaged and RT0
// fluxes built once) on the problem of BenchmarkBounds, and reports the
// cost per quadrature point of the base rule (wall and CPU time); f=cheap replaces the source
// by a polynomial to show the share of the user's f.
func BenchmarkEvaluateTerms(b *testing.B) {
	for _, name := range []string{"averaged", "equilibrated"} {
		for _, src := range []string{"bench", "cheap"} {
			b.Run(fmt.Sprintf("flux=%s/f=%s/p=3/n=128", name, src), func(b *testing.B) {
				m, G, f, u := benchBoundsProblem(b, 3, 128)
				sol, err := nonlinear.Solve(context.Background(), m, problem.Steady(G, f, u), nonlinear.Options{})
				if err != nil {
					b.Fatal(err)
				}
				s := eqMust(fem.NewP1(m))
				var y Flux
				if name == "averaged" {
					y = eqMust(NewAveraged(s, G, sol.U))
				} else {
					y = eqMust(Equilibrate(context.Background(), s, G, sol.U, FuncSource(m, f), EquilibrateOptions{}))
				}
				if src == "cheap" {
					f = func(x, y float64) float64 { return x*y + 1 }
				}
				var t *Terms
				cpu := cpuSeconds()
				for b.Loop() {
					if t, err = EvaluateTerms(s, problem.Steady(G, f, nil), sol.U, y, 0, nil); err != nil {
						b.Fatal(err)
					}
				}
				pts := float64(m.NumCells() * t.Quadrature.Points)
				b.ReportMetric(b.Elapsed().Seconds()/float64(b.N)/pts*1e9, "ns/point")
				b.ReportMetric((cpuSeconds()-cpu)/float64(b.N)/pts*1e9, "cpu-ns/point")
			})
		}
	}
}
