package estimate

import (
	"context"
	"math"
	"strings"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/problem"
)

// TestSamplesShared: an RT0 or RT1 flux projected from shared samples and
// the bounds evaluated with them equal the flux and bounds that evaluate f
// themselves at the same degree to rounding (1e-13 relative: the same
// integrals, the points' coordinates computed by other arithmetic), while
// f is called only when the samples are made.
// Samples of another source are refused, and the Source answers f itself
// away from the rule's points.
func TestSamplesShared(t *testing.T) {
	m := must(mesh.Rectangle(0, 1, 0, 2, 6, 8))
	s := must(fem.NewP1(m))
	G := must(convex.Power(3))
	v := make([]float64, m.NumNodes())
	for i, p := range m.Nodes {
		v[i] = math.Sin(2*p.X) * p.Y
	}
	calls := 0
	f := func(x, y float64) float64 { calls++; return math.Exp(x) * (1 + y*y) }
	cf := must(WidthConstant(m, 3))
	for _, order := range []int{0, 1} {
		eo := EquilibrateOptions{Order: order, Degree: DefaultDegree}
		y1 := must(Equilibrate(context.Background(), s, G, v, FuncSource(m, f), eo))
		r1 := must(Estimate(s, problem.Steady(G, f, nil), v, y1, Options{Friedrichs: cf}))
		calls = 0
		sm := must(NewSamples(s, f, 0))
		made := calls
		y2 := must(Equilibrate(context.Background(), s, G, v, sm.Source(), eo))
		r2 := must(Estimate(s, problem.Steady(G, f, nil), v, y2, Options{Friedrichs: cf, Samples: sm}))
		if made != m.NumCells()*16 {
			t.Errorf("RT%d: %d calls to make the samples, want %d", order, made, m.NumCells()*16)
		}
		// Only the spot check of the samples calls f again.
		if extra := calls - made; extra > m.NumCells()/sampleCheckStride+1 {
			t.Errorf("RT%d: %d calls to f after the samples were made", order, extra)
		}
		close := func(a, b float64) bool { return math.Abs(a-b) <= 1e-13*math.Abs(b) }
		if !close(r2.Majorant.Value, r1.Majorant.Value) || !close(r2.D, r1.D) || !close(r2.Residual, r1.Residual) || !close(r2.Energy, r1.Energy) {
			t.Errorf("RT%d: shared samples give majorant %.17g, D %.17g; own evaluation %.17g, %.17g",
				order, r2.Majorant.Value, r2.D, r1.Majorant.Value, r1.D)
		}
	}
	sm := must(NewSamples(s, f, 0))
	other := func(x, y float64) float64 { return math.Exp(x) * (1 + y*y) * (1 + 1e-9) }
	y := must(NewAveraged(s, G, v))
	if _, err := Estimate(s, problem.Steady(G, other, nil), v, y, Options{Friedrichs: cf, Samples: sm}); err == nil || !strings.Contains(err.Error(), "do not hold f") {
		t.Errorf("samples of another source accepted: %v", err)
	}
	src := sm.Source()
	lam := [3]float64{0.2, 0.3, 0.5}
	x, yy := physical(s, 5, lam)
	if got, want := src(5, lam), f(x, yy); got != want {
		t.Errorf("source away from the rule's points: %g, f gives %g", got, want)
	}
	if _, err := NewSamples(s, func(x, y float64) float64 { return 1 / (x - x) }, 0); err == nil || !strings.Contains(err.Error(), "must be finite") {
		t.Errorf("non-finite f accepted: %v", err)
	}
}

// TestSolverSamples: with the solver's load samples (degree 5) an RT0 flux
// is projected and the bounds evaluated without a single further call of f
// but the spot check; the result says which rules were used, and the bound
// differs from the all-degree-8 one only by quadrature (1e-6 relative on
// this smooth problem). Samples of a rule with negative weights or of the
// wrong size are refused.
func TestSolverSamples(t *testing.T) {
	m := must(mesh.Rectangle(0, 1, 0, 1, 16, 16))
	s := must(fem.NewP1(m))
	G := must(convex.Power(3))
	calls := 0
	f := func(x, y float64) float64 { calls++; return math.Cos(x+2*y) + 2 }
	sol := must(nonlinear.Solve(context.Background(), m, problem.Steady(G, f, nil), nonlinear.Options{}))
	cf := must(WidthConstant(m, 3))
	calls = 0
	sm := must(SamplesOf(s, f, sol.LoadDegree, sol.Load))
	y := must(Equilibrate(context.Background(), s, G, sol.U, sm.Source(), EquilibrateOptions{Degree: sm.Degree}))
	r := must(Estimate(s, problem.Steady(G, f, nil), sol.U, y, Options{Friedrichs: cf, Samples: sm}))
	if calls > m.NumCells()/sampleCheckStride+1 {
		t.Errorf("%d calls of f after the solve", calls)
	}
	q := r.Quadrature
	if q.Degree != DefaultDegree || q.ResidualDegree != sol.LoadDegree || q.ResidualPoints != 7 || !q.Shared ||
		!strings.Contains(q.String(), "of degree 5 (7 points), f read from samples") {
		t.Errorf("quadrature %+v: %s", q, q)
	}
	own := must(Estimate(s, problem.Steady(G, f, nil), sol.U, must(Equilibrate(context.Background(), s, G, sol.U, FuncSource(m, f), EquilibrateOptions{Degree: 5})), Options{Friedrichs: cf}))
	if math.Abs(own.Majorant.Value-r.Majorant.Value) > 1e-6*own.Majorant.Value {
		t.Errorf("majorant %.12g with the solver's samples, %.12g with f at degree 8", r.Majorant.Value, own.Majorant.Value)
	}
	if _, err := SamplesOf(s, f, 3, make([]float64, m.NumCells()*6)); err == nil || !strings.Contains(err.Error(), "negative weights") {
		t.Errorf("degree 3 accepted: %v", err)
	}
	if _, err := SamplesOf(s, f, 5, sol.Load[1:]); err == nil || !strings.Contains(err.Error(), "values for") {
		t.Errorf("short samples accepted: %v", err)
	}
}
