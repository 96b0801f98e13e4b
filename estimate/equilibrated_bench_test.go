package estimate

import (
	"context"
	"fmt"
	"math"
	"testing"
	"time"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// BenchmarkBoundsEquilibrated times Equilibrate (RT0 and RT1, one Newton
// step) on the unit square for u = sin(πx) sin(πy). The metric ratio is the
// flux time divided by the time of a comparable linear solve (P1 Laplacian,
// multigrid-preconditioned CG to 1e-10): the nonlinear solver is not used,
// and a Newton solve of the p-Laplacian costs several such solves.
func BenchmarkBoundsEquilibrated(b *testing.B) {
	for _, order := range []int{0, 1} {
		for _, alpha := range []float64{1.5, 2, 4} {
			for _, n := range []int{64, 256} {
				name := fmt.Sprintf("flux=equilibrated/k=%d/p=%g/n=%d", order, alpha, 2*n*n)
				b.Run(name, func(b *testing.B) {
					m := eqMust(mesh.Rectangle(0, 1, 0, 1, 4, 4))
					for l := 4; l < n; l *= 2 {
						m = eqMust(m.Refine())
					}
					s := eqMust(fem.NewP1(m))
					G := eqMust(convex.Power(alpha))
					_, f := eqSine(alpha)
					v := make([]float64, m.NumNodes())
					for i, p := range m.Nodes {
						v[i] = math.Sin(math.Pi*p.X) * math.Sin(math.Pi*p.Y)
					}
					solve := eqLinearSolveTime(b, s)
					src := FuncSource(m, f)
					b.ResetTimer()
					start := time.Now()
					for b.Loop() {
						if _, err := Equilibrate(context.Background(), s, G, v, src, EquilibrateOptions{Order: order, Newton: 1}); err != nil {
							b.Fatal(err)
						}
					}
					b.ReportMetric(time.Since(start).Seconds()/float64(b.N)/solve, "ratio")
				})
			}
		}
	}
}

// eqLinearSolveTime returns the seconds of one P1 Laplace solve with
// multigrid PCG, including assembly and multigrid setup.
func eqLinearSolveTime(b *testing.B, s *fem.P1) float64 {
	start := time.Now()
	const reps = 3
	for range reps {
		a := s.NewMatrix()
		if err := s.Stiffness(nil, a); err != nil {
			b.Fatal(err)
		}
		mg := eqMust(fem.NewMultigrid(s))
		if err := mg.Update(a); err != nil {
			b.Fatal(err)
		}
		rhs := make([]float64, s.NumFree())
		for i := range rhs {
			rhs[i] = 1
		}
		x := make([]float64, s.NumFree())
		if _, err := fem.PCG(context.Background(), a, mg, rhs, x, 1e-10, 1000); err != nil {
			b.Fatal(err)
		}
	}
	return time.Since(start).Seconds() / reps
}
