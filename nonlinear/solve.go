// Package nonlinear solves the steady problem of nonlinear diffusion: it
// minimises the discrete energy J(w) = ∫ G(∇w) − f w over continuous
// piecewise linear w with Dirichlet data, by Newton's method with line search,
// continuation for degenerate or singular potentials, nested iteration over a
// mesh hierarchy and multigrid-preconditioned inexact linear solves. The same
// solver takes an optional mass term for implicit Euler steps of the
// evolution problem.
package nonlinear

import (
	"context"
	"errors"
	"fmt"
	"math"
	"runtime"
	"strings"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// DefaultLoadDegree is the exactness degree of the quadrature rule for the
// load ∫ f φ_i when Options.LoadDegree is 0: Dunavant's 7-point rule on
// triangles, 3 Gauss points on intervals. Its error, O(h^6) per unit
// area for smooth f, stays far below the O(h²) energy error of P1.
const DefaultLoadDegree = 5

// discrete is the minimisation problem the solver works on,
//
//	J(w) = ∫ G(∇w) − f w + (Mass/2) ∫ |w − Ref|²,   w = Dirichlet on ∂Ω,
//
// over P1 functions: a problem.Problem's data at one time. The mass term
// (Mass = 1/τ, Ref = v_{n−1}) turns it into one implicit Euler step of the
// evolution problem (docs/math.md §7).
type discrete struct {
	G convex.Potential
	// F is the source f(x, y); nil means f = 0.
	F func(x, y float64) float64
	// Dirichlet gives the boundary values; nil means zero. P1 sees only its
	// values at boundary nodes (the interpolated data of docs/math.md §4.6).
	Dirichlet func(x, y float64) float64
	// Mass is the coefficient of the mass term (0: none).
	Mass float64
	// Ref is the nodal reference vector of the mass term on the finest mesh.
	Ref []float64
}

// Options tunes Solve; the zero value gives the defaults.
type Options struct {
	// Tol is the relative energy decrement at which Newton stops:
	// λ²/2 ≤ Tol · (∫ G(∇w) + |∫ f w| + mass term), λ² = −gᵀδ the Newton
	// decrement (default 1e-10).
	Tol float64
	// ResTol is the relative residual required as well:
	// ‖g‖ ≤ ResTol · (‖b‖ + ‖F(w)‖), with g and b the gradient of J and the
	// load on the free nodes and F(w) the internal forces ∫ ∂G(∇w)·∇φ_i at
	// all nodes, the reactions at the Dirichlet nodes included (default
	// 1e-8; docs/math.md §4.8).
	// For potentials of growth below 2 both tests are replaced by the
	// relative duality gap ≤ Tol (Step.Gap): there the residual is
	// dominated by cells whose gradients do not matter for the energy.
	ResTol float64
	// MaxIter bounds the Newton steps of each stage (each continuation
	// stage and each level; default 60).
	MaxIter int
	// Reg is the relative Hessian regularisation: D²G is frozen below the
	// radius Reg · (root mean square of |∇w|) (convex.Hessian; default
	// 1e-6). Only the Hessian is changed, never the energy.
	Reg float64
	// LoadDegree is the exactness degree of the load quadrature
	// (default DefaultLoadDegree).
	LoadDegree int
	// Initial is a nodal initial guess on the finest mesh (its boundary
	// values are replaced by the Dirichlet data). With Initial, or with a
	// mass term, Solve works on the finest mesh only; otherwise it starts on
	// the coarsest mesh of the hierarchy (nested iteration).
	Initial []float64
	// Progress, when set, is called after every Newton step.
	Progress func(Step)
}

// Step records one Newton step.
type Step struct {
	Level    int     // mesh level (0: coarsest of the hierarchy)
	Unknowns int     // free nodes on that level
	Epsilon  float64 // continuation parameter of the potential (0: exact G)
	Energy   float64 // J after the step
	// Decrement is λ²/(2·scale), the relative Newton decrement of the step
	// direction, measured before the step.
	Decrement float64
	// Residual is ‖g‖/(‖b‖ + ‖F(w)‖) before the step.
	Residual float64
	// Gap is the relative duality gap Σ_T |T| D_G(∇w, σ)/scale after the
	// step, a certified bound of the relative energy error J(w) − min J of
	// the discrete problem (primal-dual steps only; 0 otherwise).
	Gap float64
	// StepLength is the accepted line search factor (0 when the stage
	// stopped without a step).
	StepLength float64
	Forcing    float64 // relative tolerance given to the linear solver
	CG         int     // PCG iterations
	MatVecs    int     // products with the Hessian
}

// Result is a converged solution.
type Result struct {
	// U holds the nodal values on the finest mesh.
	U []float64
	// Energy is J(U), including the mass term.
	Energy  float64
	History []Step
	// Newton, CG and MatVecs total the work over all levels and stages.
	Newton, CG, MatVecs int
	// LoadDegree is the exactness degree of the load quadrature used.
	LoadDegree int
	// Load holds f at the points of that rule on every cell of the finest
	// mesh (fem.P1.Sample order), nil without f: error bounds can read the
	// data there instead of evaluating f again.
	Load []float64
}

// Cause says why Newton stopped short of its tolerance.
type Cause int

const (
	// StepsExhausted: MaxIter steps on one level or stage without meeting
	// the tolerance.
	StepsExhausted Cause = iota + 1
	// LineSearchFailed: J does not decrease along the Newton direction,
	// even for tiny steps.
	LineSearchFailed
	// NoDescent: the linear solver gave no descent direction (the Hessian
	// is not positive definite at the iterate).
	NoDescent
	// NotFinite: the energy or the residual became NaN.
	NotFinite
)

// NotConvergedError reports a solve that did not reach its tolerances; it
// carries the cause and the history so that the caller can show what
// happened and say what to change.
type NotConvergedError struct {
	Reason  string
	Cause   Cause
	History []Step
	// U is the last iterate on the finest mesh reached (nil if none).
	U []float64
}

func (e *NotConvergedError) Error() string {
	msg := "newton: " + e.Reason
	if n := len(e.History); n > 0 {
		s := e.History[n-1]
		msg += fmt.Sprintf(" (after %d steps; last: relative decrement %.2e, relative residual %.2e, step %.3g)", n, s.Decrement, s.Residual, s.StepLength)
	}
	return msg
}

// Solve minimises the discrete energy of p, with its data at T0, on the P1
// space of m.
//
// Method: damped Newton on J (Deuflhard, Newton Methods for Nonlinear
// Problems, Springer 2004, ch. 2–3) with Armijo backtracking on J, a full step
// also accepted when the residual norm halves (the energy difference is then
// lost in rounding; docs/math.md §5); Hessian D²G regularised only near ∇w = 0;
// inexact linear solves by PCG with fem.Multigrid rebuilt each step and the
// forcing terms of Eisenstat & Walker, SIAM J. Sci. Comput. 17 (1996) 16–32,
// choice 2; nested iteration from the coarsest mesh of m's hierarchy
// (Hackbusch 1985, §5.5: prolongate, then a few Newton steps per level); for
// potentials with g”(0) ∈ {0, ∞} continuation on g_ε(t) = g(√(ε²+t²)) − g(ε)
// (ε ÷ 10 per stage) on the coarsest level, and on any level where plain
// Newton fails. For growth below 2 the exact potential's stage is the
// primal-dual Newton method of primalDual (dual.go), stopped by a certified
// duality gap. The returned solution always solves the exact problem.
//
// An error is a *NotConvergedError (with the history), a context error
// (wrapped) or a description of invalid input.
func Solve(ctx context.Context, m *mesh.Mesh, p *problem.Problem, o Options) (*Result, error) {
	if p == nil {
		return nil, errors.New("newton: no problem")
	}
	return solve(ctx, m, discrete{G: p.G, F: p.SourceAt(p.T0), Dirichlet: p.DirichletAt(p.T0)}, o, nil)
}

// solve is Solve with the levels kept in cache (nil: none) for the next
// call on the same mesh.
func solve(ctx context.Context, m *mesh.Mesh, p discrete, o Options, cache *levelCache) (*Result, error) {
	if m == nil {
		return nil, errors.New("newton: no mesh")
	}
	if p.G == nil {
		return nil, errors.New("newton: no potential G")
	}
	o.defaults()
	if p.Mass < 0 || math.IsNaN(p.Mass) || math.IsInf(p.Mass, 0) {
		return nil, fmt.Errorf("newton: mass coefficient %g must be finite and ≥ 0", p.Mass)
	}
	if p.Mass > 0 && len(p.Ref) != m.NumNodes() {
		return nil, fmt.Errorf("newton: the mass term needs a reference vector with one value per node (%d), got %d", m.NumNodes(), len(p.Ref))
	}
	if o.Initial != nil && len(o.Initial) != m.NumNodes() {
		return nil, fmt.Errorf("newton: initial guess has %d values for %d nodes", len(o.Initial), m.NumNodes())
	}
	sv := &solver{p: p, o: o, cache: cache}
	meshes := []*mesh.Mesh{m}
	if o.Initial == nil && p.Mass == 0 {
		for c := m; c.Coarse != nil && len(c.Parents) == c.NumNodes(); c = c.Coarse {
			meshes = append(meshes, c.Coarse)
		}
		// A level without free nodes (the coarsest L-shape) has nothing to
		// solve, and continuation must run where there are unknowns.
		for len(meshes) > 1 && freeCount(meshes[len(meshes)-1]) == 0 {
			meshes = meshes[:len(meshes)-1]
		}
	}
	var w []float64
	_, _, g2 := p.G.Profile(0)
	singular := !(g2 > 0) || math.IsInf(g2, 0)
	for i := len(meshes) - 1; i >= 0; i-- {
		if i == 0 && meshes[0].NumNodes() > 1<<17 {
			// The coarser levels are garbage now: collect them before the
			// finest level allocates (the peak heap of a million unknowns
			// fell from 880 to 720 MB with this and the unstored fluxes).
			runtime.GC()
		}
		lv, err := sv.newLevel(meshes[i], len(meshes)-1-i)
		if err != nil {
			return nil, err
		}
		switch {
		case w == nil && o.Initial != nil:
			w = append([]float64(nil), o.Initial...)
		case w == nil:
			w = make([]float64, meshes[i].NumNodes())
			if p.Dirichlet != nil {
				lv.s.Interpolate(p.Dirichlet, w)
			}
		default:
			w = prolong(meshes[i], w)
		}
		lv.setBoundary(w)
		final := i == 0
		tol, rtol := o.Tol, o.ResTol
		if !final {
			// Coarse levels only provide a start: solve to about the
			// discretisation error in energy, O(h²).
			h := meshes[i].MaxH()
			lo, hi := meshes[i].BoundingBox()
			d := math.Hypot(hi.X-lo.X, hi.Y-lo.Y)
			tol, rtol = math.Max(o.Tol, 0.01*(h/d)*(h/d)), math.Inf(1)
		}
		if singular && i == len(meshes)-1 {
			if err := sv.continuation(ctx, lv, w, false); err != nil {
				return nil, err
			}
		}
		ok, err := sv.exact(ctx, lv, w, tol, rtol)
		if err != nil {
			return nil, err
		}
		if !ok && singular {
			if err := sv.continuation(ctx, lv, w, true); err != nil {
				return nil, err
			}
			ok, err = sv.exact(ctx, lv, w, tol, rtol)
			if err != nil {
				return nil, err
			}
		}
		if !ok && final {
			return nil, &NotConvergedError{Reason: sv.reason, Cause: sv.cause, History: sv.hist, U: w}
		}
		if final {
			e, _ := lv.energy(p.G, w)
			r := &Result{U: w, Energy: e, History: sv.hist, LoadDegree: o.LoadDegree, Load: lv.fvals}
			for _, s := range sv.hist {
				r.CG += s.CG
				r.MatVecs += s.MatVecs
				if s.StepLength > 0 {
					r.Newton++
				}
			}
			return r, nil
		}
	}
	return nil, errors.New("newton: unreachable")
}

func (o *Options) defaults() {
	if !(o.Tol > 0) {
		o.Tol = 1e-10
	}
	if !(o.ResTol > 0) {
		o.ResTol = 1e-8
	}
	if o.MaxIter <= 0 {
		o.MaxIter = 60
	}
	if !(o.Reg > 0) {
		o.Reg = 1e-6
	}
	if o.LoadDegree <= 0 {
		o.LoadDegree = DefaultLoadDegree
	}
}

func freeCount(m *mesh.Mesh) int {
	n := 0
	for i := range m.NumNodes() {
		if i >= len(m.Boundary) || !m.Boundary[i] {
			n++
		}
	}
	return n
}

// prolong interpolates the nodal P1 vector w of m.Coarse onto m.
func prolong(m *mesh.Mesh, w []float64) []float64 {
	u := make([]float64, m.NumNodes())
	for i, par := range m.Parents {
		u[i] = 0.5 * (w[par[0]] + w[par[1]])
	}
	return u
}

type solver struct {
	p      discrete
	o      Options
	hist   []Step
	reason string
	cause  Cause
	cache  *levelCache
}

// fail records why Newton stopped short.
func (sv *solver) fail(c Cause, format string, a ...any) {
	sv.cause, sv.reason = c, fmt.Sprintf(format, a...)
}

// continuation drives w through the smoothed potentials g_ε, ε = ε0, ε0/10,
// …, each solved loosely; the exact problem is solved afterwards. Stages that
// do not converge are not errors: they only give starting points.
func (sv *solver) continuation(ctx context.Context, lv *level, w []float64, fallback bool) error {
	lv.s.Gradient(w, lv.grad)
	eps0 := rms(lv)
	if !fallback {
		// A start from the data alone may have no gradient scale yet: take
		// the Laplace solution's.
		if err := sv.laplaceStart(ctx, lv, w); err != nil {
			return err
		}
		sv.scaleStart(lv, w)
		lv.s.Gradient(w, lv.grad)
		eps0 = rms(lv)
	}
	if !(eps0 > 0) || math.IsInf(eps0, 0) {
		eps0 = 1
	}
	// Stop once ε is far below the gradients of the iterate: the smoothed
	// and the exact potential then differ only where ∇w nearly vanishes.
	for eps, stage := eps0, 0; stage < 40; eps, stage = eps/10, stage+1 {
		if _, err := sv.newton(ctx, lv, smoothed{sv.p.G, eps}, eps, w, 1e-6, math.Inf(1)); err != nil {
			return err
		}
		lv.s.Gradient(w, lv.grad)
		if eps < 1e-6*rms(lv) {
			break
		}
	}
	return nil
}

// exact minimises J with the exact potential on lv: by the primal-dual
// Newton method, certified by the duality gap, for growth below 2 (where
// plain Newton crawls), by Newton's method otherwise.
func (sv *solver) exact(ctx context.Context, lv *level, w []float64, tol, rtol float64) (bool, error) {
	if sv.p.G.Growth() < 2 && hasConjugate(sv.p.G) {
		return sv.primalDual(ctx, lv, sv.p.G, w, tol)
	}
	return sv.newton(ctx, lv, sv.p.G, 0, w, tol, rtol)
}

// laplaceStart replaces w by the solution of the problem with G = |ξ|²/2
// (plus the mass term): one linear solve.
func (sv *solver) laplaceStart(ctx context.Context, lv *level, w []float64) error {
	q, _ := convex.Quadratic(1)
	_, err := sv.newton(ctx, lv, q, -1, w, 1e-12, math.Inf(1))
	return err
}

// scaleStart moves the free values of w along the ray w_D + λ(w − w_D)
// (w_D: w with its free values set to zero) to the λ ≥ 0 that minimises J
// with the exact potential. The Laplace solution has the shape but not the
// size of the solution: for −div(|∇u|^{α−2}∇u) = f the size scales like
// f^{1/(α−1)}, so for α far from 2 it is off by orders of magnitude, and
// Newton from it meets a Hessian that is numerically zero (α > 2) or
// infinite (α < 2). J(λ) is convex, so bisection on the sign of dJ/dλ =
// ∇J(w(λ))·(w − w_D) finds λ (docs/math.md §4, "The solver").
func (sv *solver) scaleStart(lv *level, w []float64) {
	free := lv.s.FreeNodes
	d := make([]float64, len(free))
	for i, n := range free {
		d[i] = w[n]
	}
	if dot(d, d) == 0 {
		return
	}
	copy(lv.trial, w)
	at := func(lambda float64) float64 {
		for i, n := range free {
			lv.trial[n] = lambda * d[i]
		}
		lv.residual(sv.p.G, lv.trial, lv.gt)
		return dot(lv.gt, d)
	}
	lo, hi := 0.0, 1.0
	if !(at(0) < 0) {
		return // the data alone minimise J along the ray
	}
	for at(hi) < 0 {
		lo, hi = hi, 2*hi
		if hi > 1e300 {
			return
		}
	}
	for range 200 {
		mid := 0.5 * (lo + hi)
		if mid <= lo || mid >= hi {
			break
		}
		if at(mid) < 0 {
			lo = mid
		} else {
			hi = mid
		}
		if hi-lo <= 1e-3*hi {
			break
		}
	}
	lambda := 0.5 * (lo + hi)
	for i, n := range free {
		w[n] = lambda * d[i]
	}
}

func rms(lv *level) float64 {
	s, a := 0.0, 0.0
	for k, g := range lv.grad {
		s += lv.s.Area[k] * (g[0]*g[0] + g[1]*g[1])
		a += lv.s.Area[k]
	}
	return math.Sqrt(s / a)
}

// stepStart begins a Newton step: it stops (ok false) when ctx is done
// (with its error) or the energy or residual is NaN (sv.reason says so),
// and otherwise returns the residual norm on the free nodes (into lv.g) and
// its size relative to the load and internal forces.
func (sv *solver) stepStart(ctx context.Context, lv *level, G convex.Potential, w []float64, J float64) (gnorm, res float64, ok bool, err error) {
	if err := ctx.Err(); err != nil {
		return 0, 0, false, fmt.Errorf("newton: stopped on level %d after %d steps: %w", lv.index, len(sv.hist), err)
	}
	gnorm, ref := lv.residual(G, w, lv.g)
	if math.IsNaN(gnorm) || math.IsNaN(J) {
		// f and u_D are finite (the level checked them): the potential or
		// its flux overflows at the gradients the iterate has.
		gmax := 0.0
		for _, g := range lv.grad {
			gmax = math.Max(gmax, math.Hypot(g[0], g[1]))
		}
		sv.fail(NotFinite, "the energy or residual is not finite on level %d: the gradient reaches |∇w| = %.3g, where G(∇w) = %g", lv.index, gmax, convex.Value(G, [2]float64{gmax, 0}))
		return gnorm, 0, false, nil
	}
	return gnorm, gnorm / ref, true, nil
}

// newton minimises J with potential G on level lv from w (overwritten) until
// the relative decrement is below tol and the relative residual below rtol.
// It returns false when it stopped without convergence (sv.reason says why).
func (sv *solver) newton(ctx context.Context, lv *level, G convex.Potential, eps float64, w []float64, tol, rtol float64) (bool, error) {
	const armijo = 1e-4
	J, scale := lv.energy(G, w)
	var prevRes, eta float64
	for it := 0; ; it++ {
		gnorm, res, ok, err := sv.stepStart(ctx, lv, G, w, J)
		if !ok {
			return false, err
		}
		if it >= sv.o.MaxIter {
			sv.fail(StepsExhausted, "no convergence in %d Newton steps on level %d (%d unknowns)", sv.o.MaxIter, lv.index, lv.s.NumFree())
			return false, nil
		}
		if gnorm == 0 {
			sv.record(lv, Step{Epsilon: eps, Energy: J, Residual: res})
			return true, nil
		}
		// Forcing term: Eisenstat–Walker choice 2 (γ = 0.9, exponent 2)
		// with their safeguard, capped at 0.5 and floored at 1e-10.
		if it == 0 {
			eta = 0.5
		} else {
			e := 0.9 * (gnorm / prevRes) * (gnorm / prevRes)
			if s := 0.9 * eta * eta; s > 0.1 && s > e {
				e = s
			}
			eta = math.Min(0.5, math.Max(e, 1e-10))
		}
		if eps < 0 {
			eta = 1e-12
		}
		prevRes = gnorm
		reg := sv.o.Reg * rms(lv)
		if a := G.Growth(); a < 2 {
			// Freeze D²G only where the flux g'(t) ~ t^{α−1} has fallen
			// well below its typical size: capping earlier misjudges the
			// cells with small gradients when α is close to 1.
			reg *= math.Min(1, math.Pow(0.1, 1/(a-1))/1e-6)
		} else if a > 2 {
			// Likewise for degenerate growth: freeze D²G where g''(t) ~
			// t^{α−2} has fallen below 1e-6 of its typical size, not at a
			// fixed fraction of the gradients. For large α a fixed radius
			// leaves curvatures of 1e-60 in the cells with small gradients,
			// and the Newton step there is so long that the line search
			// cuts it to 1e-6 of its length.
			reg *= math.Max(1, math.Pow(1e-6, 1/(a-2))/1e-6)
		}
		if err := lv.hessian(G, reg); err != nil {
			sv.fail(NoDescent, "no descent direction on level %d: the Hessian is not positive definite (%v)", lv.index, err)
			return false, nil
		}
		for i := range lv.g {
			lv.g[i] = -lv.g[i]
		}
		clear(lv.d)
		st, err := fem.PCG(ctx, lv.hess, lv.mg, lv.g, lv.d, eta, 1000)
		if err != nil && ctx.Err() != nil {
			return false, fmt.Errorf("newton: stopped on level %d: %w", lv.index, ctx.Err())
		}
		gd := -dot(lv.g, lv.d) // gᵀδ with g the gradient (lv.g holds −g)
		step := Step{Epsilon: eps, Decrement: -gd / 2 / scale, Residual: res, Forcing: eta, CG: st.Iterations, MatVecs: st.MatVecs}
		if !(gd < 0) {
			sv.fail(NoDescent, "the linear solver gave no descent direction on level %d (%v)", lv.index, err)
			step.Energy = J
			sv.record(lv, step)
			return false, nil
		}
		if step.Decrement <= tol && res <= rtol {
			step.Energy = J
			sv.record(lv, step)
			return true, nil
		}
		// Line search on J; the full step is also accepted when it halves
		// the residual without raising J beyond rounding.
		s := 1.0
		for {
			for i, n := range lv.s.FreeNodes {
				lv.trial[n] = w[n] + s*lv.d[i]
			}
			Jt, st := lv.energy(G, lv.trial)
			if Jt <= J+armijo*s*gd {
				J, scale = Jt, st
				break
			}
			// Rounding of the sum J over the cells: about 1e-16·√cells·scale.
			if s == 1 && Jt <= J+(1e-14+1e-15*math.Sqrt(float64(len(lv.grad))))*scale {
				if gt, _ := lv.residual(G, lv.trial, lv.gt); gt <= gnorm/2 {
					J, scale = Jt, st
					break
				}
			}
			s /= 2
			if s < 1e-12 {
				step.Energy = J
				sv.record(lv, step)
				if step.Decrement <= tol {
					// The energy is converged to rounding; the residual
					// cannot be reduced further in this precision.
					return true, nil
				}
				sv.fail(LineSearchFailed, "line search failed on level %d: J does not decrease along the Newton direction", lv.index)
				return false, nil
			}
		}
		for _, n := range lv.s.FreeNodes {
			w[n] = lv.trial[n]
		}
		step.Energy, step.StepLength = J, s
		sv.record(lv, step)
		if s < 1 && step.Decrement <= tol {
			// The energy is converged and only a damped step lowered it:
			// J can no longer see the residual in this precision.
			return true, nil
		}
	}
}

func (sv *solver) record(lv *level, s Step) {
	s.Level, s.Unknowns = lv.index, lv.s.NumFree()
	if s.Epsilon < 0 {
		s.Epsilon = math.Inf(1) // the Laplace start
	}
	sv.hist = append(sv.hist, s)
	if sv.o.Progress != nil {
		sv.o.Progress(s)
	}
}

func dot(x, y []float64) float64 {
	s := 0.0
	for i := range x {
		s += x[i] * y[i]
	}
	return s
}

// String formats the history as a table, one line per Newton step.
func (r *Result) String() string { return HistoryTable(r.History) }

// HistoryTable formats a history, one line per Newton step.
func HistoryTable(h []Step) string {
	var b strings.Builder
	fmt.Fprintf(&b, "%5s %9s %9s %22s %9s %9s %7s %8s %4s\n", "level", "unknowns", "epsilon", "energy", "decrement", "residual", "step", "forcing", "cg")
	for _, s := range h {
		fmt.Fprintf(&b, "%5d %9d %9.2g %22.15e %9.2e %9.2e %7.3g %8.1e %4d\n", s.Level, s.Unknowns, s.Epsilon, s.Energy, s.Decrement, s.Residual, s.StepLength, s.Forcing, s.CG)
	}
	return b.String()
}
