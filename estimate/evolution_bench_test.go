package estimate

import (
	"context"
	"fmt"
	"testing"
	"time"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/problem"
)

// BenchmarkEvolution times implicit Euler on the unit square (n × n
// squares, two triangles each) with the bounds of (P-MAJ) accumulated per
// step (f sampled once per load point and step for the solver and the
// bounds, EvolveOptions.Load), for two equilibrated fluxes: rt0, RT0
// constant in time (one stream solve per step), and rt1, RT1 linear in time
// (two per step, the sharpest). Metrics: dofs (free nodes), newton (Newton
// steps in total), bounds-s and solve-s (seconds per run in the bounds and
// in the solver) and ratio = bounds-s / solve-s.
func BenchmarkEvolution(b *testing.B) {
	fluxes := []struct {
		name   string
		order  int
		inTime TimeFlux
	}{{"rt0", 0, ConstantInTime}, {"rt1", 1, LinearInTime}}
	for _, fl := range fluxes {
		for _, alpha := range []float64{2, 3} {
			for _, n := range []int{16, 32, 64} {
				for _, steps := range []int{4, 16} {
					b.Run(fmt.Sprintf("flux=%s/p=%g/n=%d/steps=%d", fl.name, alpha, n, steps), func(b *testing.B) {
						G := must(convex.Power(alpha))
						man := must(problem.Manufacture("(1+t)*(x + 0.5*y) + exp(-t)*x*(1-x)*y*(1-y)", G))
						m := must(mesh.Rectangle(0, 1, 0, 1, n, n))
						s := must(fem.NewP1(m))
						f := func(x, y, t float64) float64 { return man.Source(x, y, t) }
						uD := func(x, y, t float64) float64 { return man.U(x, y, t) }
						u0 := func(x, y float64) float64 { return man.U(x, y, 0) }
						var bounds, total time.Duration
						var newton int
						for range b.N {
							pb := must(NewEvolution(s, problem.Evolution(G, f, nil, u0, 0, 0),
								EvolutionOptions{InTime: fl.inTime, Equilibrate: EquilibrateOptions{Order: fl.order}}))
							step := func(ctx context.Context, t0, t1 float64, v0, v1 []float64) error {
								start := time.Now()
								err := pb.Step(ctx, t0, t1, v0, v1)
								bounds += time.Since(start)
								return err
							}
							start := time.Now()
							ev, err := nonlinear.Evolve(context.Background(), m, problem.Evolution(G, f, uD, u0, 0, 0.25), nonlinear.EvolveOptions{Steps: steps, Load: pb.LoadSamples}, step)
							if err != nil {
								b.Fatal(err)
							}
							bs := time.Now()
							if _, err := pb.Bounds(); err != nil {
								b.Fatal(err)
							}
							bounds += time.Since(bs)
							total += time.Since(start)
							newton = ev.Newton
						}
						solve := total - bounds
						b.ReportMetric(float64(s.NumFree()), "dofs")
						b.ReportMetric(float64(newton), "newton")
						b.ReportMetric(bounds.Seconds()/float64(b.N), "bounds-s")
						b.ReportMetric(solve.Seconds()/float64(b.N), "solve-s")
						b.ReportMetric(float64(bounds)/float64(solve), "ratio")
					})
				}
			}
		}
	}
}
