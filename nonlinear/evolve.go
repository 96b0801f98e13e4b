package nonlinear

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/mesh"
	"gapbook/problem"
)

// StepFunc receives each implicit Euler step as it is completed: the
// interval (t0, t1) and the nodal values v0 = v(t0), v1 = v(t1). The slices
// are reused after the call returns; copy them to keep them. A non-nil
// error stops Evolve.
type StepFunc func(ctx context.Context, t0, t1 float64, v0, v1 []float64) error

// EvolveStep reports one completed time step to EvolveOptions.Progress.
type EvolveStep struct {
	N, Steps int     // step number (1-based) and total number of steps
	T0, T1   float64 // the interval of the step
	Newton   int     // Newton steps of this time step
	CG       int     // PCG iterations of this time step
}

// EvolveOptions tune Evolve.
type EvolveOptions struct {
	// Steps is the number of uniform time steps of (T0, T); ignored when
	// Times is set.
	Steps int
	// Times is an explicit grid T0 = t_0 < t_1 < … < t_N = T (e.g. adapted
	// from time indicators); it overrides the problem's window and Steps.
	Times []float64
	// Newton configures each step's minimisation (Initial and Progress are
	// set by Evolve).
	Newton Options
	// Progress, when set, is called after every time step.
	Progress func(EvolveStep)
	// Load, when set, receives before each step's StepFunc the samples of
	// f(·, t1) that the step's load ∫ f φ_i was computed from: vals[k·nq +
	// q] = f at quadrature point q of cell k of the rule of the given
	// degree (fem.P1.Rule, points in the order of fem.P1.QuadPoints), so
	// that error bounds need not evaluate f there again. vals is reused
	// after the call.
	Load func(t1 float64, degree int, vals []float64)
}

// EvolveResult summarises a completed evolution.
type EvolveResult struct {
	// V holds the nodal values at the final time.
	V []float64
	// Times is the time grid used.
	Times []float64
	// Newton and CG total the work over all steps.
	Newton, CG int
}

// Grid returns the time grid of the evolution of p: o.Times if set,
// otherwise o.Steps uniform steps of (p.T0, p.T).
func (o EvolveOptions) Grid(p *problem.Problem) ([]float64, error) {
	e := struct {
		T0, T float64
		Steps int
		Times []float64
	}{p.T0, p.T, o.Steps, o.Times}
	if len(e.Times) > 0 {
		if len(e.Times) < 2 {
			return nil, errors.New("evolution: the time grid needs at least two times")
		}
		for i := 1; i < len(e.Times); i++ {
			if !(e.Times[i] > e.Times[i-1]) || math.IsInf(e.Times[i], 0) {
				return nil, fmt.Errorf("evolution: the time grid must increase strictly and be finite; t_%d = %g after t_%d = %g", i, e.Times[i], i-1, e.Times[i-1])
			}
		}
		return append([]float64(nil), e.Times...), nil
	}
	if !(e.T > e.T0) || math.IsInf(e.T, 0) || math.IsInf(e.T0, 0) {
		return nil, fmt.Errorf("evolution: need finite T0 < T, got T0 = %g, T = %g", e.T0, e.T)
	}
	if e.Steps < 1 {
		return nil, fmt.Errorf("evolution: %d time steps; need at least 1", e.Steps)
	}
	t := make([]float64, e.Steps+1)
	for i := range t {
		t[i] = e.T0 + (e.T-e.T0)*float64(i)/float64(e.Steps)
	}
	t[e.Steps] = e.T
	return t, nil
}

// Evolve integrates the evolution problem with P1 in space and implicit
// Euler in time: each step minimises the convex functional
//
//	∫ |w − v_{n−1}|²/(2τ) + G(∇w) − f(t_n) w,  w = u_D(t_n) on ∂Ω,
//
// by Solve with its mass term (docs/math.md §7; backward Euler as a sequence of
// convex minimisations, the time-discrete scheme of Rothe's method, see
// Kačur, Method of Rothe in Evolution Equations, 1985), started from
// v_{n−1}. After every step it calls step (if non-nil) so that error bounds
// accumulate as the solver goes; it keeps only two time levels, so memory
// does not grow with the number of steps. Cancellation of ctx stops it
// between or inside Newton steps.
func Evolve(ctx context.Context, m *mesh.Mesh, e *problem.Problem, opt EvolveOptions, step StepFunc) (*EvolveResult, error) {
	if m == nil {
		return nil, errors.New("evolution: no mesh")
	}
	if e == nil || e.G == nil {
		return nil, errors.New("evolution: no potential G")
	}
	times, err := opt.Grid(e)
	if err != nil {
		return nil, err
	}
	nn := m.NumNodes()
	prev := make([]float64, nn)
	for i, p := range m.Nodes {
		switch {
		case m.Boundary[i] && e.Dirichlet != nil:
			prev[i] = e.Dirichlet(p.X, p.Y, times[0])
		case m.Boundary[i]:
		case e.U0 != nil:
			prev[i] = e.U0(p.X, p.Y)
		}
		if math.IsNaN(prev[i]) || math.IsInf(prev[i], 0) {
			return nil, fmt.Errorf("evolution: the initial value is %g at node (%g, %g); u0 and u_D must be finite", prev[i], p.X, p.Y)
		}
	}
	res := &EvolveResult{Times: times}
	// One level for all steps: the mesh, hence space, patterns, multigrid
	// and mass matrix, do not change.
	cache := &levelCache{}
	for n := 1; n < len(times); n++ {
		t0, t1 := times[n-1], times[n]
		tau := t1 - t0
		p := discrete{G: e.G, Mass: 1 / tau, Ref: prev}
		if e.F != nil {
			// The solver samples f once per step at its load points
			// (Result.Load), which Load hands on to the bounds.
			p.F = func(x, y float64) float64 { return e.F(x, y, t1) }
		}
		if e.Dirichlet != nil {
			p.Dirichlet = func(x, y float64) float64 { return e.Dirichlet(x, y, t1) }
		}
		o := opt.Newton
		o.Initial = prev
		o.Progress = nil
		// Plain Newton from v_{n−1} first: the mass term keeps the Hessian
		// definite and the start is close, so the continuation that Solve
		// runs for degenerate or singular potentials is only a fallback.
		warm := p
		warm.G = warmPotential{e.G}
		r, err := solve(ctx, m, warm, o, cache)
		var nc *NotConvergedError
		if errors.As(err, &nc) {
			r, err = solve(ctx, m, p, o, cache)
		}
		if err != nil {
			return res, fmt.Errorf("evolution: step %d of %d (t = %g): %w", n, len(times)-1, t1, err)
		}
		res.Newton += r.Newton
		res.CG += r.CG
		if opt.Load != nil && r.Load != nil {
			opt.Load(t1, r.LoadDegree, r.Load)
		}
		if step != nil {
			if err := step(ctx, t0, t1, prev, r.U); err != nil {
				return res, fmt.Errorf("evolution: step %d of %d (t = %g): %w", n, len(times)-1, t1, err)
			}
		}
		if opt.Progress != nil {
			opt.Progress(EvolveStep{N: n, Steps: len(times) - 1, T0: t0, T1: t1, Newton: r.Newton, CG: r.CG})
		}
		prev = r.U
	}
	res.V = prev
	return res, nil
}

// warmPotential is G with a finite positive g”(0) reported at t = 0 only,
// which tells Solve to start Newton at once. Hessians away from ξ = 0 and
// all energies and fluxes are those of G, so the minimiser is unchanged.
type warmPotential struct{ convex.Potential }

func (w warmPotential) Profile(t float64) (g, g1, g2 float64) {
	g, g1, g2 = w.Potential.Profile(t)
	if t == 0 && !(g2 > 0 && !math.IsInf(g2, 0)) {
		g2 = 1
	}
	return g, g1, g2
}
