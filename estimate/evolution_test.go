package estimate

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/problem"
)

// parCase is one evolution problem with a known solution. Its boundary
// values must be linear in time (and in space along boundary edges), so
// that v = u on ∂Ω at all times, as (P-ID) requires.
type parCase struct {
	name   string
	alpha  float64
	dim    int
	n      int // cells per direction
	steps  int
	t0, t1 float64
	u      string // exact solution u(x, y, t); its source by automatic differentiation
}

// parRun solves c with Evolve and accumulates the bounds with the exact
// solution measured alongside.
func parRun(t testing.TB, c parCase, o EvolutionOptions) (*EvolutionResult, *nonlinear.EvolveResult, *fem.P1) {
	t.Helper()
	G := must(convex.Power(c.alpha))
	man := must(problem.Manufacture(c.u, G))
	exact := man.Clone()
	var m *mesh.Mesh
	if c.dim == 1 {
		m = must(mesh.Interval(0, 1, c.n))
	} else {
		m = must(mesh.Rectangle(0, 1, 0, 1, c.n, c.n))
	}
	s := must(fem.NewP1(m))
	f := func(x, y, t float64) float64 { return man.Source(x, y, t) }
	uD := func(x, y, t float64) float64 { return man.U(x, y, t) }
	u0 := func(x, y float64) float64 { return man.U(x, y, c.t0) }
	o.Exact = &ExactSolution{U: exact.U, Grad: exact.Grad, Split: 2}
	pb := must(NewEvolution(s, problem.Evolution(G, f, nil, u0, 0, 0), o))
	ev, err := nonlinear.Evolve(context.Background(), m, problem.Evolution(G, f, uD, u0, c.t0, c.t1), nonlinear.EvolveOptions{Steps: c.steps, Newton: nonlinear.Options{ResTol: 1e-12}}, pb.Step)
	if err != nil {
		t.Fatal(err)
	}
	return must(pb.Bounds()), ev, s
}

var parCases = []parCase{
	{"heat/1d", 2, 1, 16, 8, 0, 0.5, "sin(pi*x)*exp(-t)"},
	{"heat/2d", 2, 2, 8, 4, 0, 0.25, "sin(pi*x)*sin(pi*y)*exp(-t) + x*t"},
	{"p=1.5/1d", 1.5, 1, 16, 8, 0, 0.5, "(1+t)*x + 0.25*exp(-t)*sin(pi*x)"},
	{"p=3/1d", 3, 1, 16, 8, 0, 0.5, "(1+t)*x + 0.25*exp(-t)*sin(pi*x)"},
	{"p=3/2d", 3, 2, 8, 4, 0, 0.25, "(1+t)*(x + 0.5*y) + exp(-t)*x*(1-x)*y*(1-y)"},
}

var parFluxes = []struct {
	name string
	o    EvolutionOptions
}{
	{"averaged", EvolutionOptions{Kind: AveragedFlux}},
	{"rt0", EvolutionOptions{}},
	{"rt1/linear", EvolutionOptions{InTime: LinearInTime, Equilibrate: EquilibrateOptions{Order: 1}}},
}

// TestEvolutionIdentity checks (P-ID) of docs/math.md §7 (docs/checks.md item 15:
// an identity, [D]) for manufactured solutions and fluxes that are not
// equilibrated (averaged) or only balanced against Π_k of the load: both
// sides by the same composite space-time rule must agree to quadrature
// accuracy, the gap integral of the bounds must agree with the exact pass,
// and every majorant must lie above the true error measure S(T) and above
// S(t_n) at every step.
func TestEvolutionIdentity(t *testing.T) {
	for _, c := range parCases {
		for _, fl := range parFluxes {
			t.Run(c.name+"/"+fl.name, func(t *testing.T) {
				r, _, _ := parRun(t, c, fl.o)
				e := r.Exact
				lhs := e.Primal + e.Dual + e.Final
				rhs := e.Gap + e.Initial + e.Residual
				if d := math.Abs(lhs - rhs); d > 1e-8*(math.Abs(lhs)+math.Abs(rhs)) {
					t.Errorf("(P-ID): left %.12e, right %.12e (gap %.3e, initial %.3e, ∫re %.3e)", lhs, rhs, e.Gap, e.Initial, e.Residual)
				}
				if math.Abs(r.Gap-e.Gap) > 1e-5*e.Gap {
					t.Errorf("gap integral %.10e, by the reference rule %.10e", r.Gap, e.Gap)
				}
				for _, b := range []struct {
					name string
					v    float64
				}{{"split", r.Split.Value}, {"modulus", r.Modulus.Value}, {"constant-free", r.ConstantFree.Value}} {
					if !(b.v >= lhs) || !(b.v >= e.Sup) {
						t.Errorf("%s majorant %.6e below the error measure S(T) = %.6e (sup %.6e)", b.name, b.v, lhs, e.Sup)
					}
				}
				if !(r.Final.Value >= e.L2Final) {
					t.Errorf("bound of ‖e(T)‖ %.6e below the error %.6e", r.Final.Value, e.L2Final)
				}
				// docs/math.md §7 sets the aim I_eff ≤ 2 (α = 2) and ≤ 5 (α = 3)
				// for (P-MAJ) with RT1 and y* linear in time.
				if fl.o.InTime == LinearInTime && r.Split.Value > 2*lhs {
					t.Errorf("efficiency index of (P-MAJ) %.3f above 2", r.Split.Value/lhs)
				}
				t.Logf("S = %.3e  Ieff split %.2f  modulus %.2f  const-free %.2f  (θ = %.2f)", lhs, r.Split.Value/lhs, r.Modulus.Value/lhs, r.ConstantFree.Value/lhs, r.Theta)
			})
		}
	}
}

// TestEvolutionHypercircle checks the evolution hypercircle identity
// ‖∇e‖²_Q + ‖∇u − y‖²_Q + ‖e(T)‖² = ‖∇v − y‖²_Q + ‖e(0)‖² (docs/checks.md item
// 14, [D]) for the heat equation with f = 0: y*_n in RT1 is balanced
// against −∂_t v, a P1 field that Π1 reproduces, so r = f − ∂_t v + div y*
// vanishes identically when y* is constant in time on each step. Then the
// residual terms of the bounds vanish too and (P-MAJ) equals A.
func TestEvolutionHypercircle(t *testing.T) {
	for _, c := range []parCase{
		{"1d", 2, 1, 12, 6, 0, 0.1, "sin(pi*x)*exp(-pi^2*t)"},
		{"2d", 2, 2, 6, 3, 0, 0.05, "sin(pi*x)*sin(pi*y)*exp(-2*pi^2*t)"},
	} {
		t.Run(c.name, func(t *testing.T) {
			r, _, _ := parRun(t, c, EvolutionOptions{Equilibrate: EquilibrateOptions{Order: 1}})
			e := r.Exact
			lhs := 2 * (e.Primal + e.Dual + e.Final)
			rhs := 2 * (e.Gap + e.Initial)
			if math.Abs(lhs-rhs) > 1e-9*rhs {
				t.Errorf("hypercircle: %.14e vs %.14e", lhs, rhs)
			}
			if math.Abs(e.Residual) > 1e-12*rhs {
				t.Errorf("∫ r e = %.3e, expected 0", e.Residual)
			}
			if r.P > 1e-10*math.Sqrt(rhs) || r.RTilde > 1e-10*math.Sqrt(rhs) {
				t.Errorf("residual factors P = %.3e, R̃ = %.3e, expected 0", r.P, r.RTilde)
			}
			if math.Abs(r.Split.Value-r.A) > 1e-9*r.A {
				t.Errorf("split majorant %.12e, A = %.12e", r.Split.Value, r.A)
			}
		})
	}
}

// TestEvolutionInput checks that bad input gives errors, not panics.
func TestEvolutionInput(t *testing.T) {
	G := must(convex.Power(2))
	m := must(mesh.Interval(0, 1, 4))
	s := must(fem.NewP1(m))
	if _, err := NewEvolution(nil, problem.Evolution(G, nil, nil, nil, 0, 0), EvolutionOptions{}); err == nil {
		t.Error("no space: no error")
	}
	if _, err := NewEvolution(s, problem.Evolution(G, nil, nil, nil, 0, 0), EvolutionOptions{Kind: 7}); err == nil {
		t.Error("unknown flux kind: no error")
	}
	pb := must(NewEvolution(s, problem.Evolution(G, nil, nil, nil, 0, 0), EvolutionOptions{}))
	if _, err := pb.Bounds(); err == nil {
		t.Error("bounds before any step: no error")
	}
	v := make([]float64, m.NumNodes())
	if err := pb.Step(context.Background(), 0, 0, v, v); err == nil {
		t.Error("empty step: no error")
	}
	if err := pb.Step(context.Background(), 0, 1, v[:2], v); err == nil {
		t.Error("short vector: no error")
	}
	if err := pb.Step(context.Background(), 0, 1, v, v); err != nil {
		t.Fatal(err)
	}
	if err := pb.Step(context.Background(), 2, 3, v, v); err == nil {
		t.Error("gap in the time grid: no error")
	}
	r := must(pb.Bounds())
	if r.Split.Value != 0 || r.ConstantFree.Value != 0 {
		t.Errorf("v = u = 0: bounds %v, %v, expected 0", r.Split, r.ConstantFree)
	}
}

// TestCompositeRule checks the composite rules against exact monomial
// integrals on the reference cells (∫ x^i y^j = i! j!/(i + j + 2)! on the
// triangle, docs/checks.md item 16; 1/(i + 1) on the interval) and that a kink
// at a sub-cell edge is integrated exactly.
func TestCompositeRule(t *testing.T) {
	fact := func(n int) float64 { return math.Gamma(float64(n) + 1) }
	for _, split := range []int{1, 2, 3} {
		r := CompositeRule(2, 5, split)
		for i := 0; i <= 5; i++ {
			for j := 0; i+j <= 5; j++ {
				var s float64
				for q, p := range r.Points {
					s += r.Weights[q] * math.Pow(p[0], float64(i)) * math.Pow(p[1], float64(j))
				}
				if want := fact(i) * fact(j) / fact(i+j+2); math.Abs(s-want) > 1e-14 {
					t.Errorf("split %d: ∫x^%d y^%d = %.16g, want %.16g", split, i, j, s, want)
				}
			}
		}
		l := CompositeRule(1, 3, 2*split)
		var s float64
		for q, p := range l.Points {
			s += l.Weights[q] * math.Abs(p[0]-0.5)
		}
		if math.Abs(s-0.25) > 1e-15 {
			t.Errorf("1-D split %d: ∫|x − ½| = %.16g, want 0.25", 2*split, s)
		}
	}
}

func ExampleEvolution() {
	G, _ := convex.Power(2)
	m, _ := mesh.Interval(0, 1, 32)
	s, _ := fem.NewP1(m)
	u0 := func(x, _ float64) float64 { return math.Sin(math.Pi * x) }
	pb, _ := NewEvolution(s, problem.Evolution(G, nil, nil, u0, 0, 0), EvolutionOptions{Equilibrate: EquilibrateOptions{Order: 1}})
	_, err := nonlinear.Evolve(context.Background(), m, problem.Evolution(G, nil, nil, u0, 0, 0.1), nonlinear.EvolveOptions{Steps: 10}, pb.Step)
	if err != nil {
		fmt.Println(err)
		return
	}
	r, _ := pb.Bounds()
	fmt.Printf("S(T) ≤ %.2e (%v)\n", r.Split.Value, r.Split.Label)
	// Output: S(T) ≤ 4.09e-04 (guaranteed)
}

// TestAdaptEvolution runs the adaptive loop on the 1-D heat problem from a
// coarse mesh and two steps: every round's bound must stay above its true
// error measure, both h and τ must get refined, and the bound must fall.
func TestAdaptEvolution(t *testing.T) {
	G := must(convex.Power(2))
	man := must(problem.Manufacture("sin(pi*x)*exp(-t)", G))
	f := func(x, y, t float64) float64 { return man.Source(x, y, t) }
	u0 := func(x, y float64) float64 { return man.U(x, y, 0) }
	exact := man.Clone()
	run := func(ctx context.Context, m *mesh.Mesh, times []float64, step func(context.Context, float64, float64, []float64, []float64) error) error {
		_, err := nonlinear.Evolve(ctx, m, problem.Evolution(G, f, nil, u0, 0, 0), nonlinear.EvolveOptions{Times: times}, step)
		return err
	}
	rounds, err := AdaptEvolution(context.Background(), must(mesh.Interval(0, 1, 4)), []float64{0, 0.25, 0.5}, run,
		EvolutionAdaptOptions{Problem: problem.Evolution(G, f, nil, u0, 0, 0), Rounds: 8,
			Options: EvolutionOptions{InTime: LinearInTime, Equilibrate: EquilibrateOptions{Order: 1},
				Exact: &ExactSolution{U: exact.U, Grad: exact.Grad, Split: 2}}})
	if err != nil {
		t.Fatal(err)
	}
	kinds := map[string]int{}
	for i, r := range rounds {
		S := r.Result.Exact.Total()
		if !(r.Result.Split.Value >= S) {
			t.Errorf("round %d: bound %.4e below S = %.4e", i, r.Result.Split.Value, S)
		}
		kinds[r.Refined]++
		t.Logf("round %d: %d cells, %d steps, bound %.3e (space %.2e, time %.2e), I_eff %.2f, refined %s", i, r.Mesh.NumCells(), len(r.Times)-1,
			r.Result.Split.Value, r.Result.Space, r.Result.Time, r.Result.Split.Value/S, r.Refined)
	}
	if kinds["space"] == 0 || kinds["time"] == 0 {
		t.Errorf("refinements %v: expected both space and time", kinds)
	}
	if first, last := rounds[0].Result.Split.Value, rounds[len(rounds)-1].Result.Split.Value; !(last < first/4) {
		t.Errorf("bound fell only from %.3e to %.3e", first, last)
	}
}

// TestEvolutionLoadSharing counts the evaluations of f by the bounds of an
// RT1 flux linear in time: the flux projection at t_n and the residual
// terms of both steps next to t_n share one sample per point, so a run of
// N steps evaluates f (2N + 1) times per point of the residual rule, and
// (N + 1) times when the time stepper hands over its load samples
// (nonlinear.EvolveOptions.Load). The bounds must not change beyond
// round-off when the samples come from the stepper.
func TestEvolutionLoadSharing(t *testing.T) {
	c := parCases[4]
	G := must(convex.Power(c.alpha))
	man := must(problem.Manufacture(c.u, G))
	m := must(mesh.Rectangle(0, 1, 0, 1, c.n, c.n))
	s := must(fem.NewP1(m))
	uD := func(x, y, t float64) float64 { return man.U(x, y, t) }
	u0 := func(x, y float64) float64 { return man.U(x, y, c.t0) }
	nr := CompositeRule(2, 5, 1).Len() * m.NumCells()
	var splits []float64
	for _, share := range []bool{false, true} {
		calls := 0
		fb := func(x, y, t float64) float64 { calls++; return man.Source(x, y, t) }
		fs := func(x, y, t float64) float64 { return man.Source(x, y, t) }
		pb := must(NewEvolution(s, problem.Evolution(G, fb, nil, u0, 0, 0),
			EvolutionOptions{InTime: LinearInTime, Equilibrate: EquilibrateOptions{Order: 1}}))
		eo := nonlinear.EvolveOptions{Steps: c.steps}
		if share {
			eo.Load = pb.LoadSamples
		}
		if _, err := nonlinear.Evolve(context.Background(), m, problem.Evolution(G, fs, uD, u0, c.t0, c.t1), eo, pb.Step); err != nil {
			t.Fatal(err)
		}
		want := (2*c.steps + 1) * nr
		if share {
			want = (c.steps + 1) * nr
		}
		if calls != want {
			t.Errorf("shared samples %v: f evaluated %d times, want %d", share, calls, want)
		}
		splits = append(splits, must(pb.Bounds()).Split.Value)
	}
	if d := math.Abs(splits[0] - splits[1]); d > 1e-12*splits[0] {
		t.Errorf("(P-MAJ) %.15e with the stepper's samples, %.15e without", splits[1], splits[0])
	}
}

// TestComesNearZero holds the squared-length test to the test by
// math.Hypot on random sample sets (scaled from 1e-200 to 1e200, so that
// the squares leave the floating-point range) and on sets built to lie on
// either side of the decision.
func TestComesNearZero(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 7))
	for i := range 4000 {
		scale := math.Pow(10, float64(rng.IntN(401)-200))
		off := [2]float64{rng.NormFloat64() * 3, rng.NormFloat64() * 3}
		a := make([][2]float64, 1+rng.IntN(12))
		for j := range a {
			a[j] = [2]float64{scale * (off[0] + rng.NormFloat64()), scale * (off[1] + rng.NormFloat64())}
		}
		if i%10 == 0 {
			a[0] = [2]float64{}
		}
		if got, want := comesNearZero(a), slowNearZero(a); got != want {
			t.Fatalf("samples %v: %v, by Hypot %v", a, got, want)
		}
	}
	for _, c := range []struct {
		a    [][2]float64
		want bool
	}{
		{[][2]float64{{1, 0}, {1.5, 0}}, false},
		{[][2]float64{{1, 0}, {2, 0}}, true},
		{[][2]float64{{-1, 0}, {1, 0}}, true},
		{[][2]float64{{1e300, 0}, {1.1e300, 0}}, false},
		{[][2]float64{{3e-300, 4e-300}, {3e-300, -4e-300}}, true},
		{[][2]float64{{0.5, 0.5}, {0.5, 0.5}}, false},
		{[][2]float64{{0, 0}, {0, 0}}, true},
	} {
		if got := comesNearZero(c.a); got != c.want {
			t.Errorf("%v: %v, want %v", c.a, got, c.want)
		}
	}
}

// TestEvolutionExactGapRules checks that for α = 2 the lowest rules chosen
// as exact for the polynomial gap (degree 2k + 2 in space, 2 Gauss points
// in time) give the gap and the norms of ∇v that rules of higher degree
// give, to round-off (an identity: both rules are exact), and that the
// assumptions say so; and which potentials count as quadratic.
func TestEvolutionExactGapRules(t *testing.T) {
	G := must(convex.Power(2))
	man := must(problem.Manufacture(parCases[1].u, G))
	m := must(mesh.Rectangle(0, 1, 0, 1, 6, 6))
	s := must(fem.NewP1(m))
	f := func(x, y, t float64) float64 { return man.Source(x, y, t) }
	u0 := func(x, y float64) float64 { return man.U(x, y, 0) }
	for _, fl := range parFluxes {
		o := fl.o
		low := must(NewEvolution(s, problem.Evolution(G, f, nil, u0, 0, 0), o))
		o.Degree, o.TimePoints = 8, 4
		high := must(NewEvolution(s, problem.Evolution(G, f, nil, u0, 0, 0), o))
		both := func(ctx context.Context, t0, t1 float64, v0, v1 []float64) error {
			if err := low.Step(ctx, t0, t1, v0, v1); err != nil {
				return err
			}
			return high.Step(ctx, t0, t1, v0, v1)
		}
		if _, err := nonlinear.Evolve(context.Background(), m, problem.Evolution(G, f, func(x, y, t float64) float64 { return man.U(x, y, t) }, u0, 0, 0.25), nonlinear.EvolveOptions{Steps: 3}, both); err != nil {
			t.Fatal(err)
		}
		lo, hi := must(low.Bounds()), must(high.Bounds())
		if d := math.Abs(lo.Gap - hi.Gap); !(d <= 1e-12*hi.Gap) {
			t.Errorf("%s: gap %.15e by the exact rules, %.15e by degree 8 × 4 points", fl.name, lo.Gap, hi.Gap)
		}
		if d := math.Abs(lo.Split.Value - hi.Split.Value); !(d <= 1e-12*hi.Split.Value) {
			t.Errorf("%s: bound %.15e by the exact rules, %.15e by degree 8 × 4 points", fl.name, lo.Split.Value, hi.Split.Value)
		}
		if !strings.Contains(lo.Assumptions[0], "exact for this polynomial integrand") || strings.Contains(hi.Assumptions[0], "exact for") {
			t.Errorf("%s: assumptions %q / %q", fl.name, lo.Assumptions[0], hi.Assumptions[0])
		}
	}
	for _, q := range []struct {
		G    convex.Potential
		want bool
	}{
		{must(convex.Power(2)), true}, {must(convex.Quadratic(2.5)), true},
		{must(convex.Power(3)), false}, {must(convex.Power(1.5)), false},
		{must(convex.PowerSum(0.5, 2, 3)), false},
	} {
		if got := isQuadratic(q.G); got != q.want {
			t.Errorf("isQuadratic(%v) = %v, want %v", q.G, got, q.want)
		}
	}
}

// TestEvolutionSeparatedGap: for a flux constant in time the gap is summed
// in its separated form G(∇v(t)) + G*(y*) − ∇v(t)·y* with a rounding margin;
// it must agree with the pointwise compound functional (cancellation-free)
// to 1e-10 relative and never fall below it by more than rounding
// (an identity: the same integral in two forms), at α = 1.5, 3 and 4.
func TestEvolutionSeparatedGap(t *testing.T) {
	for _, alpha := range []float64{1.5, 3, 4} {
		G := must(convex.Power(alpha))
		man := must(problem.Manufacture("(1+t)*(x + 0.5*y) + exp(-t)*x*(1-x)*y*(1-y)", G))
		m := must(mesh.Rectangle(0, 1, 0, 1, 8, 8))
		s := must(fem.NewP1(m))
		f := func(x, y, t float64) float64 { return man.Source(x, y, t) }
		u0 := func(x, y float64) float64 { return man.U(x, y, 0) }
		var got [2]*EvolutionResult
		for i, split := range []bool{true, false} {
			pb := must(NewEvolution(s, problem.Evolution(G, f, nil, u0, 0, 0), EvolutionOptions{InTime: ConstantInTime}))
			if !pb.split {
				t.Fatalf("α=%g: the separated form is not used", alpha)
			}
			pb.split = split
			_, err := nonlinear.Evolve(context.Background(), m, problem.Evolution(G, f, func(x, y, t float64) float64 { return man.U(x, y, t) }, u0, 0, 0.2),
				nonlinear.EvolveOptions{Steps: 4, Load: pb.LoadSamples}, pb.Step)
			if err != nil {
				t.Fatal(err)
			}
			got[i] = must(pb.Bounds())
		}
		sep, point := got[0].Gap, got[1].Gap
		if math.Abs(sep-point) > 1e-10*point || sep < point*(1-1e-14) {
			t.Errorf("α=%g: separated gap %.15g, pointwise %.15g", alpha, sep, point)
		}
		if math.Abs(got[0].Split.Value-got[1].Split.Value) > 1e-9*got[1].Split.Value {
			t.Errorf("α=%g: bound %.12g vs %.12g", alpha, got[0].Split.Value, got[1].Split.Value)
		}
	}
}
