package estimate

import (
	"context"
	"math"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/problem"
)

// TestAdaptSamples: with AdaptOptions.Samples the bounds of every mesh read
// f from the solver's samples of that mesh (and never from stale samples of
// the previous mesh); on the first mesh the majorant agrees with the one
// that evaluates f itself up to quadrature (1e-5 relative here).
func TestAdaptSamples(t *testing.T) {
	ctx := context.Background()
	G := must(convex.Power(3))
	f := func(x, y float64) float64 { return 1 + 0.5*math.Sin(3*x)*y }
	p := problem.Steady(G, f, nil)
	var samples *Samples
	stale := 0
	solve := func(ctx context.Context, s *fem.P1) ([]float64, error) {
		r, err := nonlinear.Solve(ctx, s.Mesh, problem.Steady(G, f, nil), nonlinear.Options{})
		if err != nil {
			return nil, err
		}
		samples = must(SamplesOf(s, f, r.LoadDegree, r.Load))
		return r.U, nil
	}
	flux := func(ctx context.Context, s *fem.P1, v []float64) (Flux, error) {
		return Equilibrate(ctx, s, G, v, FuncSource(s.Mesh, f), EquilibrateOptions{})
	}
	hook := func(s *fem.P1) *Samples {
		if !samples.On(s) {
			stale++
		}
		return samples
	}
	with := must(Adapt(ctx, must(mesh.LShape(2)), p, solve, flux, AdaptOptions{MaxSteps: 3, Samples: hook}))
	without := must(Adapt(ctx, must(mesh.LShape(2)), p, solve, flux, AdaptOptions{MaxSteps: 1}))
	if stale != 0 {
		t.Errorf("the hook saw samples of another mesh %d times", stale)
	}
	for _, st := range with.Steps {
		if q := st.Result.Quadrature; !q.Shared || q.ResidualDegree != nonlinear.DefaultLoadDegree {
			t.Errorf("step %d: quadrature %+v does not use the solver's samples", st.Step, q)
		}
	}
	a, b := with.Steps[0].Result.Majorant.Value, without.Steps[0].Result.Majorant.Value
	if math.Abs(a-b) > 1e-5*b {
		t.Errorf("first mesh: majorant %.10g with samples, %.10g without", a, b)
	}
	if without.Steps[0].Result.Quadrature.Shared {
		t.Error("samples used without the hook")
	}
}
