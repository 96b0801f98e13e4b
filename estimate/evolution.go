package estimate

import (
	"context"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/problem"
)

// FluxKind chooses the reconstruction of y* at each time step.
type FluxKind int

const (
	// EquilibratedFlux balances the step load f − ∂_t v in RT_k
	// (Equilibrate with EvolutionOptions.Equilibrate).
	EquilibratedFlux FluxKind = iota
	// AveragedFlux is the nodal average of ∂G(∇v) (NewAveraged): cheap,
	// with a residual that does not vanish as h → 0.
	AveragedFlux
)

// TimeFlux says how y* varies inside a time step (t_{n−1}, t_n).
type TimeFlux int

const (
	// ConstantInTime uses one flux y*_n per step, built from v_n against
	// f(t_n) − ∂_t v (docs/math.md §7, the natural choice for implicit Euler).
	ConstantInTime TimeFlux = iota
	// LinearInTime interpolates linearly between a flux built from v_{n−1}
	// against f(t_{n−1}) − ∂_t v and y*_n: two reconstructions per step, a
	// residual whose time part is O(τ²) and a gap that follows ∇v(t).
	LinearInTime
)

// ExactSolution is a known solution u, used only to measure the true error
// terms (tests, efficiency indices); the bounds never use it.
type ExactSolution struct {
	U    func(x, y, t float64) float64
	Grad func(x, y, t float64) (gx, gy float64)
	// Split cuts every cell into Split (1-D) or Split² (2-D) sub-cells for
	// a composite rule of the given Degree (defaults 4 and 8), so that
	// solutions with a non-smooth front are integrated accurately.
	Split, Degree int
	// TimePoints is the Gauss rule in time on each step (default 5).
	TimePoints int
}

// EvolutionOptions configure Evolution.
type EvolutionOptions struct {
	// Friedrichs is C_F,α of the domain for the modulus form; zero means
	// WidthConstant of the mesh.
	Friedrichs Constant
	// Modulus replaces the potential's own modulus (its label is inherited).
	Modulus *convex.Modulus
	// Kind and InTime choose the flux reconstruction.
	Kind   FluxKind
	InTime TimeFlux
	// Equilibrate configures EquilibratedFlux (Order 1 for RT1). Its
	// Degree defaults to LoadDegree when Split is 1: f is then projected
	// with the samples the residual terms use.
	Equilibrate EquilibrateOptions
	// Degree is the space quadrature degree of the gap and the norms of ∇v
	// (default 6; for a quadratic G, when Degree and TimePoints are both
	// unset, 2k + 2 with TimePoints 2: exact for the gap of an RT_k flux), on
	// Split sub-cells per cell edge (default 1). Where y* passes through 0 the
	// conjugate |y*|^{α'} is not smooth for α > 2: split there.
	Degree, Split int
	// LoadDegree is the space quadrature degree of the residual terms
	// (default 5), the terms that sample f.
	LoadDegree int
	// TimePoints is the number of Gauss points in time per step for the
	// gap and the norms of ∇v (default 3). The residual terms use Simpson's
	// rule (degree 3), which samples f at the step ends shared with the
	// neighbouring steps and at the midpoint.
	TimePoints int
	// InitialSplit and InitialDegree set the composite rule of ½‖e(0)‖²
	// (defaults 1 and 8): it is checked against the rule of degree
	// InitialDegree − 2 on the same sub-cells, and only cells where the
	// check fails are subdivided.
	InitialSplit, InitialDegree int
	// Exact, if set, is used to accumulate the true error terms.
	Exact *ExactSolution
}

// ExactTerms are the terms of (P-ID) measured with a known solution, by the
// composite rule of ExactSolution.
type ExactTerms struct {
	// Primal is ∫_Q D_G(∇v, ∂G(∇u)), Dual is ∫_Q D_G(∇u, y*), Final is
	// ½‖e(T)‖²: their sum is the error measure S(T) the bounds bound.
	Primal, Dual, Final float64
	// Initial is ½‖e(0)‖², Gap is ∫_Q D_G(∇v, y*) and Residual is ∫_Q r e:
	// the right side of (P-ID).
	Initial, Gap, Residual float64
	// Sup is the largest S(t_n) over the time grid.
	Sup float64
	// L2Final is ‖e(T)‖.
	L2Final float64
}

// Total returns S(T) = Primal + Dual + Final.
func (e ExactTerms) Total() float64 { return e.Primal + e.Dual + e.Final }

// StepPart splits the bound contributed by one time step into the part that
// refining the mesh reduces and the part that shorter steps reduce.
type StepPart struct {
	T0, T1      float64
	Space, Time float64
}

// Evolution accumulates the space-time error bounds of docs/math.md §7 step by
// step: give its Step method to the time stepper (nonlinear.Evolve) and call
// Bounds at the end. Its memory is that of a few vectors on the mesh plus
// one StepPart per step.
type Evolution struct {
	s     *fem.P1
	p     *problem.Problem
	o     EvolutionOptions
	alpha float64
	conj  float64
	nb    normBound
	mod   convex.Modulus
	// gp is D_G by closed form for the power family (convex.Gap otherwise);
	// the true error terms keep convex.Gap so that they stay independent.
	gp gapper
	evolutionRules
	evolutionScratch
	evolutionSums
	evolutionSafeguard
	evolutionReuse
}

// evolutionRules are the quadrature rules of the space-time integrals and
// their points, fixed when the accumulator is made.
type evolutionRules struct {
	// exactGap says the gap rules were chosen exact for a quadratic G.
	exactGap bool
	rule     fem.Rule
	tx, tw   []float64
	// per point of the space rule: barycentric coordinates and weight
	// (times the reference measure)
	lam [][3]float64
	pw  []float64
	// the same for the rule of the residual terms
	rrule fem.Rule
	rlam  [][3]float64
	rpw   []float64
	// the rule of the true error terms against an exact solution
	exRule     fem.Rule
	exTx, exTw []float64
	// x^α for the norms of ∇v; split says that the gap of a flux constant
	// in time is summed in its separated form (power potential, α ≠ 2);
	// dualPow is x^{α'}
	powAlpha power
	split    bool
	dualPow  power
	// shareLoad says the flux projection uses the residual rule and can
	// fill the load cache
	shareLoad bool
}

// evolutionScratch is reused by every step: per-cell and per-point
// buffers, and the samples of f at two times.
type evolutionScratch struct {
	g0, g1     [][2]float64
	d          []float64
	cpConj     []float64
	rbuf, wbuf []float64
	// per Gauss time point: sums, weights, ∇v, its gap data and the cell
	// gap; per Simpson time point: sums
	tsums  []slabSums
	tnorms []float64
	twt    []float64
	tg     [][2]float64
	tgc    []gapCell
	tdk    []float64
	rsums  [3]slabSums
	// y* at the space rule's points of one cell at the step's ends
	yStart, yEnd [][2]float64
	ydiv         []float64
	// f at the space rule's points at two times
	loads [2]loadCache
	// stepT0 and stepT1 are the ends of the step being added
	stepT0, stepT1 float64
}

// evolutionSums accumulate the terms of the bounds over the steps so far.
type evolutionSums struct {
	steps              int
	t0, t1             float64
	initial            float64
	gap                float64
	pSum, rTil, rQ     float64
	norms              []float64
	cumRho, constFree  float64
	cells              []float64
	oscCell            []float64
	parts              []StepPart
	oscStep, meanStep  []float64
	exact              ExactTerms
	primal, dual, gapE float64
	flux               Flux
}

// evolutionSafeguard is the quadrature safeguard of the gap: per-cell slab
// gap by the fixed rule and the samples of y* (α > 2) or ∇v (α < 2) that
// decide where the integrand may not be smooth.
type evolutionSafeguard struct {
	cellGap        []float64
	samples        [][][2]float64
	watchY, watchG bool
}

// evolutionReuse carries the equilibrated flux (2-D) from step to step.
type evolutionReuse struct {
	eq           *equilibrator
	last         *Equilibrated // end flux of the latest step
	dPrev, vPrev []float64
}

// NewEvolution prepares the accumulator for the P1 space s.
func NewEvolution(s *fem.P1, p *problem.Problem, o EvolutionOptions) (*Evolution, error) {
	if s == nil || p == nil || p.G == nil {
		return nil, errors.New("evolution bounds: need a P1 space and a potential")
	}
	alpha := p.G.Growth()
	if o.Friedrichs.Value == 0 {
		c, err := WidthConstant(s.Mesh, alpha)
		if err != nil {
			return nil, fmt.Errorf("evolution bounds: %w", err)
		}
		o.Friedrichs = c
	}
	if !(o.Friedrichs.Value > 0) || math.IsInf(o.Friedrichs.Value, 0) {
		return nil, fmt.Errorf("evolution bounds: the Friedrichs constant %g is not a positive number", o.Friedrichs.Value)
	}
	// For a quadratic G the gap D_G(∇v, y*) = κ|∇v − y*/κ|²/2 and the
	// norms of ∇v are polynomials: of degree 2 in time (∇v and y* linear
	// in t) and 2(k+1) in space (y* in RT_k, ∇v constant per cell; the
	// averaged flux is P1), so the lowest rules exact for them suffice.
	exact := isQuadratic(p.G) && o.Degree <= 0 && o.TimePoints <= 0
	if exact {
		o.Degree, o.TimePoints = 2, 2
		if o.Kind == EquilibratedFlux {
			o.Degree = 2*o.Equilibrate.Order + 2
		}
	}
	if o.Degree <= 0 {
		o.Degree = 6
	}
	if o.TimePoints <= 0 {
		o.TimePoints = 3
	}
	if o.LoadDegree <= 0 {
		o.LoadDegree = 5
	}
	if o.Split <= 0 {
		o.Split = 1
	}
	if o.InitialSplit <= 0 {
		o.InitialSplit = 1
	}
	if o.InitialDegree <= 0 {
		o.InitialDegree = 8
	}
	if o.Kind != EquilibratedFlux && o.Kind != AveragedFlux {
		return nil, fmt.Errorf("evolution bounds: unknown flux kind %d", o.Kind)
	}
	if o.InTime != ConstantInTime && o.InTime != LinearInTime {
		return nil, fmt.Errorf("evolution bounds: unknown time form %d", o.InTime)
	}
	b := &Evolution{s: s, p: p, o: o, alpha: alpha, conj: alpha / (alpha - 1), evolutionRules: evolutionRules{exactGap: exact}}
	if o.Kind == EquilibratedFlux && o.Split == 1 && (o.Equilibrate.Degree == 0 || o.Equilibrate.Degree == o.LoadDegree) {
		// The projection of f onto P_k then samples f where the slab does,
		// and its samples at t_n serve both steps next to t_n.
		b.o.Equilibrate.Degree = o.LoadDegree
		b.shareLoad = true
	}
	b.mod = p.G.Modulus()
	b.gp = newGapper(p.G)
	if o.Modulus != nil {
		b.mod = *o.Modulus
	}
	b.nb.alpha = alpha
	for _, bd := range b.mod.Bounds {
		if math.Abs(bd.Exponent-alpha) <= 1e-12*alpha {
			b.nb.bounds = append(b.nb.bounds, bd)
		}
	}
	if len(b.nb.bounds) == 0 {
		return nil, fmt.Errorf("evolution bounds: the potential has no modulus in the norm of its growth p = %g; supply one in EvolutionOptions.Modulus", alpha)
	}
	b.norms = make([]float64, len(b.nb.bounds))
	nc, nn := s.Mesh.NumCells(), s.Mesh.NumNodes()
	b.g0, b.g1 = make([][2]float64, nc), make([][2]float64, nc)
	b.d = make([]float64, nn)
	b.cells, b.oscCell = make([]float64, nc), make([]float64, nc)
	b.cpConj = make([]float64, nc)
	b.cellGap = make([]float64, nc)
	b.watchY, b.watchG = alpha > 2, alpha < 2
	if b.watchY || b.watchG {
		b.samples = make([][][2]float64, nc)
	}
	for k, dk := range s.Mesh.Diameters() {
		b.cpConj[k] = math.Pow(convex.PoincareConvex(alpha, dk), b.conj)
	}
	b.rule = CompositeRule(s.Mesh.Dim, o.Degree, o.Split)
	b.tx, b.tw = fem.Gauss(o.TimePoints, 0, 1)
	nt := len(b.tx)
	b.lam, b.pw = refPoints(s.Mesh.Dim, b.rule)
	b.rrule = CompositeRule(s.Mesh.Dim, o.LoadDegree, o.Split)
	b.rlam, b.rpw = refPoints(s.Mesh.Dim, b.rrule)
	b.rbuf, b.wbuf = make([]float64, len(loadTimes)*b.rrule.Len()), make([]float64, b.rrule.Len())
	b.tsums, b.tnorms = make([]slabSums, nt), make([]float64, nt*len(b.nb.bounds))
	b.twt, b.tdk = make([]float64, nt), make([]float64, nt)
	b.tg, b.tgc = make([][2]float64, nt), make([]gapCell, nt)
	b.yStart, b.yEnd, b.ydiv = make([][2]float64, len(b.lam)), make([][2]float64, len(b.lam)), make([]float64, len(b.lam))
	b.powAlpha = newPower(alpha)
	b.dualPow = newPower(b.conj)
	b.split = b.gp.power && !b.exactGap
	if e := o.Exact; e != nil {
		if e.U == nil || e.Grad == nil {
			return nil, errors.New("evolution bounds: the exact solution needs U and Grad")
		}
		ex := *e
		if ex.Split <= 0 {
			ex.Split = 4
		}
		if ex.Degree <= 0 {
			ex.Degree = 8
		}
		if ex.TimePoints <= 0 {
			ex.TimePoints = 5
		}
		b.o.Exact = &ex
		b.exRule = CompositeRule(s.Mesh.Dim, ex.Degree, ex.Split)
		b.exTx, b.exTw = fem.Gauss(ex.TimePoints, 0, 1)
	}
	return b, nil
}

// isQuadratic reports whether G is κ|ξ|²/2 (Power(2), Quadratic(κ)),
// confirmed by sampling its profile and conjugate, so that its gap is a
// polynomial in ∇v and y*.
func isQuadratic(G convex.Potential) bool {
	if a, ok := convex.IsPower(G); ok {
		return a == 2 && isPower(G, 2)
	}
	if G.Growth() != 2 {
		return false
	}
	_, _, kappa := G.Profile(1)
	if !(kappa > 0) || math.IsInf(kappa, 0) {
		return false
	}
	for _, t := range []float64{0.3, 1, 2.5, 40} {
		g, g1, g2 := G.Profile(t)
		gs, _ := G.Conjugate(t)
		if math.Abs(g-kappa*t*t/2) > 1e-14*g || math.Abs(g1-kappa*t) > 1e-14*g1 || g2 != kappa ||
			math.Abs(gs-t*t/(2*kappa)) > 1e-14*gs {
			return false
		}
	}
	return true
}

// CompositeRule returns the rule of the given degree on each of the split
// (1-D) or split² (2-D, uniform red refinement) sub-cells of the reference
// cell, as one rule on the reference cell (same conventions as fem.Rule).
func CompositeRule(dim, degree, split int) fem.Rule {
	split = max(split, 1)
	if dim == 1 {
		base := fem.Line(degree)
		r := fem.Rule{Degree: base.Degree}
		h := 1 / float64(split)
		for i := range split {
			for q, p := range base.Points {
				r.Points = append(r.Points, [2]float64{(float64(i) + p[0]) * h, 0})
				r.Weights = append(r.Weights, base.Weights[q]*h)
			}
		}
		return r
	}
	base := fem.Triangle(degree)
	r := fem.Rule{Degree: base.Degree}
	h := 1 / float64(split)
	add := func(a, b, c [2]float64) {
		for q, p := range base.Points {
			x := a[0] + p[0]*(b[0]-a[0]) + p[1]*(c[0]-a[0])
			y := a[1] + p[0]*(b[1]-a[1]) + p[1]*(c[1]-a[1])
			r.Points = append(r.Points, [2]float64{x, y})
			r.Weights = append(r.Weights, base.Weights[q]*h*h)
		}
	}
	for i := range split {
		for j := range split - i {
			x, y := float64(i)*h, float64(j)*h
			add([2]float64{x, y}, [2]float64{x + h, y}, [2]float64{x, y + h})
			if i+j < split-1 {
				add([2]float64{x + h, y}, [2]float64{x + h, y + h}, [2]float64{x, y + h})
			}
		}
	}
	return r
}

// divAt is div y at lam in cell k, read directly from an equilibrated
// flux (where it is stored per cell) without evaluating y.
func divAt(y Flux, k int, lam [3]float64) float64 {
	if e, ok := y.(*Equilibrated); ok {
		d := &e.div[k]
		return lam[0]*d[0] + lam[1]*d[1] + lam[2]*d[2]
	}
	_, div := y.At(k, lam)
	return div
}

// powAbs returns |x|^q with the common q = 2, 3/2 (α = 3) and 3 (α = 3/2)
// without a call to Pow.
func powAbs(x, q float64) float64 {
	switch q {
	case 2:
		return x * x
	case 1.5:
		a := math.Abs(x)
		return a * math.Sqrt(a)
	case 3:
		return x * x * math.Abs(x)
	}
	return math.Pow(math.Abs(x), q)
}

// Step adds the time step (t0, t1) with v(t0) = v0 and v(t1) = v1 (nodal
// values, v linear in time between them): it reconstructs y* and adds the
// step's integrals by Gauss rules in time. It has the signature of the
// per-step callback of nonlinear.Evolve; steps must come in order.
func (b *Evolution) Step(ctx context.Context, t0, t1 float64, v0, v1 []float64) error {
	s := b.s
	nn := s.Mesh.NumNodes()
	if len(v0) != nn || len(v1) != nn {
		return fmt.Errorf("evolution bounds: v has %d and %d values for %d nodes", len(v0), len(v1), nn)
	}
	if !(t1 > t0) {
		return fmt.Errorf("evolution bounds: step (%g, %g) is empty or reversed", t0, t1)
	}
	if b.steps == 0 {
		b.t0 = t0
		b.initial = b.initialError(v0)
		b.exact.Initial = b.initial
	} else if math.Abs(t0-b.t1) > 1e-12*math.Max(1, math.Abs(t0)) {
		return fmt.Errorf("evolution bounds: step starts at %g but the previous one ended at %g", t0, b.t1)
	}
	tau := t1 - t0
	b.stepT0, b.stepT1 = t0, t1
	for i := range b.d {
		b.d[i] = (v1[i] - v0[i]) / tau
	}
	s.Gradient(v0, b.g0)
	s.Gradient(v1, b.g1)
	var ya, yb Flux
	var err error
	if b.o.InTime == LinearInTime {
		if ya, err = b.reconstructStart(ctx, v0, t0); err != nil {
			return err
		}
	}
	if yb, err = b.reconstruct(ctx, v1, t1); err != nil {
		return err
	}
	if ya == nil {
		ya = yb
	}
	if b.o.InTime == LinearInTime {
		b.dPrev = append(b.dPrev[:0], b.d...)
		b.vPrev = append(b.vPrev[:0], v1...)
	}
	part := b.slab(t0, tau, ya, yb)
	if b.o.Exact != nil {
		b.exactSlab(t0, tau, v0, v1, ya, yb)
	}
	b.parts = append(b.parts, part)
	b.steps++
	b.t1 = t1
	b.flux = yb
	return nil
}

// source is the load f(t) − ∂_t v of the current step. It reads f from a
// load slot that holds time t, or records f into rec (nil: none).
func (b *Evolution) source(t float64, rec *loadCache) Source {
	m := b.s.Mesh
	nv := m.Dim + 1
	f := b.p.F
	have := b.loadAt(t)
	return func(k int, lam [3]float64) float64 {
		c := m.Cells[k]
		var dt float64
		for a := range nv {
			dt += lam[a] * b.d[c[a]]
		}
		if f == nil {
			return -dt
		}
		if have != nil {
			if i := b.index(have, k, lam); i >= 0 {
				return have.v[i] - dt
			}
		}
		x, y := eqPoint(m, k, lam)
		fv := f(x, y, t)
		if rec != nil {
			if i := b.index(rec, k, lam); i >= 0 {
				rec.v[i] = fv
			}
		}
		return fv - dt
	}
}

// reconstruct builds y* from v against the load f(t) − ∂_t v.
func (b *Evolution) reconstruct(ctx context.Context, v []float64, t float64) (Flux, error) {
	if b.o.Kind == AveragedFlux {
		return NewAveraged(b.s, b.p.G, v)
	}
	var e *Equilibrated
	var err error
	if have := b.loadAt(t); have != nil {
		have.next, have.broken = 0, false
	}
	rec := b.recordLoad(t)
	defer rec.finishRecord()
	if b.s.Mesh.Dim == 1 {
		e, err = Equilibrate(ctx, b.s, b.p.G, v, b.source(t, rec), b.o.Equilibrate)
	} else {
		if b.eq == nil {
			if err := b.o.Equilibrate.defaults(); err != nil {
				return nil, fmt.Errorf("evolution bounds: %w", err)
			}
			if b.eq, err = newEquilibrator(b.s, b.o.Equilibrate.Order); err != nil {
				return nil, fmt.Errorf("evolution bounds: %w", err)
			}
		}
		e, err = b.eq.flux(ctx, b.p.G, v, b.source(t, rec), b.o.Equilibrate)
	}
	if err != nil {
		return nil, fmt.Errorf("evolution bounds at t = %g: %w", t, err)
	}
	b.last = e
	return e, nil
}

// reconstructStart builds the flux at the start t0 of the step, from v0
// against f(t0) − ∂_t v. The end flux of the previous step was built from
// the same v0 against f(t0) minus the previous ∂_t v, so on a 2-D mesh it
// is shifted by the balanced correction for the difference of the two
// P1 time derivatives (equilibrator.shift) instead of being rebuilt.
func (b *Evolution) reconstructStart(ctx context.Context, v0 []float64, t0 float64) (Flux, error) {
	if b.o.Kind != EquilibratedFlux || b.eq == nil || b.last == nil || !slices.Equal(v0, b.vPrev) {
		return b.reconstruct(ctx, v0, t0)
	}
	m := b.s.Mesh
	df := func(k int, lam [3]float64) float64 {
		c := m.Cells[k]
		var s float64
		for a := range 3 {
			s += lam[a] * (b.dPrev[c[a]] - b.d[c[a]])
		}
		return s
	}
	if have := b.loadAt(t0); have != nil {
		have.next, have.broken = 0, false
	}
	e, err := b.eq.shift(ctx, b.p.G, b.last, v0, df, b.source(t0, nil), b.o.Equilibrate)
	if err != nil {
		return nil, fmt.Errorf("evolution bounds at t = %g: %w", t0, err)
	}
	b.last = nil
	return e, nil
}

// slabSums are the sums of one time point of the slab rule over the cells.
type slabSums struct {
	gap, rho2, mean2, oscA, resA, meanA, bregman float64
}

// slab integrates one step: the gap, the Bregman change of ∇v (time
// indicator) and the norms of ∇v by the Gauss rule in time, the residual
// terms by Simpson's rule (loadTimes), whose samples of f at the step ends
// come from the load slots when the flux projection or the previous step
// left them there; the space rules are b.rule (gap) and b.rrule
// (residual terms). The loops run cell by cell and
// point by point with the time points innermost, so that what does not
// depend on t is computed once per cell (∇v(t) and its gap data, the
// vertices, ∂G(∇v_n)) or once per point (y* at both ends, whose time
// interpolation is then two products, ∂_t v, x).
func (b *Evolution) slab(t0, tau float64, ya, yb Flux) StepPart {
	s := b.s
	m := s.Mesh
	nv := m.Dim + 1
	G, q, cf := b.p.G, b.conj, b.o.Friedrichs.Value
	part := StepPart{T0: t0, T1: t0 + tau}
	nt, np, nr, nbd := len(b.tx), b.rule.Len(), b.rrule.Len(), len(b.nb.bounds)
	sums, tn := b.tsums, b.tnorms
	clear(sums)
	clear(tn)
	clear(b.cellGap)
	for k := range b.samples {
		b.samples[k] = b.samples[k][:0]
	}
	wts := b.twt
	for iq := range b.tx {
		wts[iq] = tau * b.tw[iq]
	}
	t1, tm := t0+tau, t0+loadTimes[1]*tau
	// f at the step's start and end: from the slots, or evaluated here and
	// the end kept for the next step.
	f0, f1 := b.loadAt(t0), b.loadAt(t1)
	var keep *loadCache
	if b.p.F != nil && f1 == nil {
		keep = b.freeLoad(t0)
		keep.t, keep.ok = t1, false
	}
	gs, gc, dk := b.tg, b.tgc, b.tdk
	var mk [3]float64
	for k, c := range m.Cells {
		area := s.Area[k]
		var px, py, dn [3]float64
		for a := range nv {
			p := m.Nodes[c[a]]
			px[a], py[a], dn[a] = p.X, p.Y, b.d[c[a]]
		}
		fl := convex.Flux(G, b.g1[k])
		flAbs := math.Sqrt(fl[0]*fl[0] + fl[1]*fl[1])
		for iq, sq := range b.tx {
			gs[iq] = [2]float64{(1-sq)*b.g0[k][0] + sq*b.g1[k][0], (1-sq)*b.g0[k][1] + sq*b.g1[k][1]}
			gc[iq] = b.gp.cell(gs[iq])
			dk[iq] = 0
		}
		var ys [][2]float64
		if b.watchY {
			ys = b.samples[k]
		}
		atPoints(yb, k, b.lam, b.yEnd, b.ydiv)
		if ya != yb {
			atPoints(ya, k, b.lam, b.yStart, b.ydiv)
		}
		if ya == yb && b.split {
			// y* constant in time and ∇v constant in space: D_G = G(∇v(t))
			// + G*(y*(x)) − ∇v(t)·y*(x) separates, so the space sums of
			// G*(y*) and y* serve every time point (common practice, no
			// source). The rounding of the cancelling sum is bounded by
			// (n + 8)ε times the sum of the magnitudes and added, so the
			// gap is not underestimated.
			var gstar, mag float64
			var ysum [2]float64
			for i := range np {
				w := b.pw[i] * area
				y := b.yEnd[i]
				sy := math.Sqrt(y[0]*y[0] + y[1]*y[1])
				gstar += w * b.dualPow.of(sy)
				ysum[0] += w * y[0]
				ysum[1] += w * y[1]
				mag += w * sy
				if b.watchY {
					ys = append(ys, y)
				}
			}
			gstar /= b.conj
			eps := float64(np+8) * 0x1p-52
			for iq := range b.tx {
				g := gs[iq]
				gv := area * b.powAlpha.of(gc[iq].t) / b.alpha
				d := gv + gstar - (g[0]*ysum[0] + g[1]*ysum[1])
				dk[iq] = max(d, 0) + eps*(gv+gstar+gc[iq].t*mag)
			}
		} else {
			for i := range np {
				w := b.pw[i] * area
				y1 := b.yEnd[i]
				y0 := y1
				if ya != yb {
					y0 = b.yStart[i]
				}
				for iq, sq := range b.tx {
					y := y1
					if ya != yb {
						y = [2]float64{(1-sq)*y0[0] + sq*y1[0], (1-sq)*y0[1] + sq*y1[1]}
					}
					dk[iq] += w * b.gp.at(&gc[iq], y, math.Sqrt(y[0]*y[0]+y[1]*y[1]))
					if b.watchY {
						ys = append(ys, y)
					}
				}
			}
		}
		if b.watchY {
			b.samples[k] = ys
		}
		mk = [3]float64{}
		var wk float64
		for i := range nr {
			lam, w := b.rlam[i], b.rpw[i]*area
			d1 := divAt(yb, k, lam)
			d0 := d1
			if ya != yb {
				d0 = divAt(ya, k, lam)
			}
			var dv float64
			for a := range nv {
				dv += lam[a] * dn[a]
			}
			// The point as fem.P1 maps it, where the time stepper samples
			// f for its load (LoadSamples).
			ref := b.rrule.Points[i]
			x := px[0] + ref[0]*(px[1]-px[0])
			var yy float64
			if nv == 3 {
				x += ref[1] * (px[2] - px[0])
				yy = py[0] + ref[0]*(py[1]-py[0]) + ref[1]*(py[2]-py[0])
			}
			r0, rm, r1 := d0-dv, (d0+d1)/2-dv, d1-dv
			if b.p.F != nil {
				r0 += b.f(f0, k, i, x, yy, t0)
				rm += b.p.F(x, yy, tm)
				fe := b.f(f1, k, i, x, yy, t1)
				if keep != nil {
					keep.v[k*nr+i] = fe
				}
				r1 += fe
			}
			b.rbuf[i], b.rbuf[nr+i], b.rbuf[2*nr+i] = r0, rm, r1
			mk[0] += w * r0
			mk[1] += w * rm
			mk[2] += w * r1
			b.wbuf[i] = w
			wk += w
		}
		for iq := range nt {
			wt, g := wts[iq], gs[iq]
			sm := &sums[iq]
			sm.gap += dk[iq]
			b.cells[k] += wt * dk[iq]
			b.cellGap[k] += wt * dk[iq]
			if b.watchG {
				b.samples[k] = append(b.samples[k], g)
			}
			sm.bregman += wt * area * b.gp.at(&gc[iq], fl, flAbs)
			for i, bd := range b.nb.bounds {
				tn[i*nt+iq] += area * b.powAlpha.of(bd.Weight(g))
			}
		}
		for ir := range loadTimes {
			mq := mk[ir] / wk
			var r2, ra, oa float64
			for i, r := range b.rbuf[ir*nr : (ir+1)*nr] {
				r2 += b.wbuf[i] * r * r
				ra += b.wbuf[i] * powAbs(r, q)
				oa += b.wbuf[i] * powAbs(r-mq, q)
			}
			rs := &b.rsums[ir]
			rs.rho2 += r2
			rs.mean2 += area * mq * mq
			rs.oscA += b.cpConj[k] * oa
			rs.resA += ra
			rs.meanA += area * powAbs(mq, q)
			b.oscCell[k] += tau * loadWeights[ir] * b.cpConj[k] * oa
		}
	}
	if keep != nil {
		keep.ok = true
	}
	var slabRho, slabGap, slabOsc, slabMean, bregman float64
	for iq := range nt {
		wt, sm := wts[iq], sums[iq]
		for i := range nbd {
			b.norms[i] += wt * tn[i*nt+iq]
		}
		slabGap += wt * sm.gap
		bregman += sm.bregman
	}
	for ir := range loadTimes {
		wt, rs := tau*loadWeights[ir], b.rsums[ir]
		rosc := math.Pow(rs.oscA, 1/q)
		rq := math.Min(cf*math.Pow(rs.resA, 1/q), rosc+cf*math.Pow(rs.meanA, 1/q))
		slabRho += wt * math.Sqrt(rs.rho2)
		slabMean += wt * math.Sqrt(rs.mean2)
		slabOsc += wt * rs.oscA
		b.rQ += wt * math.Pow(rq, q)
	}
	b.rsums = [3]slabSums{}
	slabGap += b.safeguardGap(tau, ya, yb)
	b.gap += slabGap
	b.pSum += slabMean
	b.rTil += slabOsc
	// Constant-free form: ∫_slab ρ (√(2A(t)) + ∫_0^t ρ) ≤ ρ_n (√(2A(t_n)) +
	// ∫_0^{t_{n−1}} ρ) + ρ_n²/2 with ρ_n = ∫_slab ρ, A nondecreasing.
	b.constFree += slabRho*(math.Sqrt(2*(b.gap+b.initial))+b.cumRho) + slabRho*slabRho/2
	b.cumRho += slabRho
	part.Time = math.Min(bregman, slabGap)
	part.Space = slabGap - part.Time
	b.oscStep = append(b.oscStep, slabOsc)
	b.meanStep = append(b.meanStep, slabMean)
	return part
}

// initialError returns ½‖u0 − v0‖² by the initial rule on every cell,
// checked against the rule of degree two less on the same cell (whose
// difference from the higher one overestimates the error of the higher
// one for smooth integrands, common practice, no source); only cells
// where the two differ beyond the tolerance (a front, a kink of u0) are
// subdivided adaptively. The difference, or the adaptive error estimate,
// is added to the value so that it is not underestimated.
func (b *Evolution) initialError(v0 []float64) float64 {
	dim, sp := b.s.Mesh.Dim, b.o.InitialSplit
	val, err := b.halfSquare(v0, b.p.U0, 0, CompositeRule(dim, b.o.InitialDegree, sp),
		CompositeRule(dim, max(b.o.InitialDegree-2, 1), sp), 1e-8)
	return val + err
}

// halfSquare returns ½‖u(·, t) − v‖² (u == nil: 0) by the rule r with
// adaptive subdivision to the relative tolerance rel, and the estimate of
// its quadrature error. With a check rule (lo.Len() > 0) a cell is
// subdivided only where r and lo differ beyond the tolerance, and the
// difference is the error estimate of the others; without one every cell
// is checked by its first subdivision.
func (b *Evolution) halfSquare(v []float64, u func(x, y float64) float64, t float64, r, lo fem.Rule, rel float64) (val, errEst float64) {
	s := b.s
	m := s.Mesh
	nv := m.Dim + 1
	q := &slabQuad{dim: m.Dim, rule: r, rel: rel, maxDepth: 10}
	if m.Dim == 2 {
		q.maxDepth = 5
	}
	q.fn = func(k int, lam [3]float64, _ float64, out *[slabTerms]float64) {
		c := m.Cells[k]
		var d float64
		for a := range nv {
			d -= lam[a] * v[c[a]]
		}
		if u != nil {
			x, y := physical(s, k, lam)
			d += u(x, y)
		}
		out[0] = d * d / 2
	}
	base := make([]float64, m.NumCells())
	var total, area float64
	for k := range m.Cells {
		base[k] = q.apply(k, wholePrism)[0]
		total += s.Area[k] * base[k]
		area += s.Area[k]
	}
	q.abs[0] = rel * total / area
	check := *q
	check.rule = lo
	for k := range m.Cells {
		if lo.Len() > 0 {
			d := math.Abs(base[k] - check.apply(k, wholePrism)[0])
			if d <= rel*math.Abs(base[k]) || d <= q.abs[0] {
				val += s.Area[k] * base[k]
				errEst += s.Area[k] * d
				continue
			}
		}
		v, e := q.run(k, [slabTerms]float64{base[k]}, 64)
		val += s.Area[k] * v[0]
		errEst += s.Area[k] * e[0]
	}
	return val, errEst
}

// safeguardGap integrates the gap of the cells flagged by the samples of
// the slab again by adaptive subdivision in space and time, and returns
// what it adds to the fixed-rule gap: the change of value plus the error
// estimate (so that the gap, which the bound adds, is not underestimated
// where |y*|^{α'} or |∇v|^α has a kink or cusp).
func (b *Evolution) safeguardGap(tau float64, ya, yb Flux) float64 {
	if b.samples == nil {
		return 0
	}
	s := b.s
	m := s.Mesh
	q := &slabQuad{dim: m.Dim, rule: b.rule, tx: b.tx, tw: b.tw, rel: 1e-6, maxDepth: 8}
	budget := 256
	if m.Dim == 2 {
		q.maxDepth, budget = 2, 8
	}
	q.fn = func(k int, lam [3]float64, sq float64, out *[slabTerms]float64) {
		g := [2]float64{(1-sq)*b.g0[k][0] + sq*b.g1[k][0], (1-sq)*b.g0[k][1] + sq*b.g1[k][1]}
		y, _ := yb.At(k, lam)
		if ya != yb {
			y0, _ := ya.At(k, lam)
			y = [2]float64{(1-sq)*y0[0] + sq*y[0], (1-sq)*y0[1] + sq*y[1]}
		}
		out[0] = b.gp.gap(g, y)
	}
	var total, area float64
	for k := range m.Cells {
		total += b.cellGap[k]
		area += s.Area[k]
	}
	q.abs[0] = q.rel * total / (tau * area)
	var add float64
	for k := range m.Cells {
		unit := tau * s.Area[k]
		if b.cellGap[k] <= 10*q.abs[0]*unit || !comesNearZero(b.samples[k]) {
			continue
		}
		v, e := q.run(k, [slabTerms]float64{b.cellGap[k] / unit}, budget)
		d := unit*(v[0]+e[0]) - b.cellGap[k]
		b.cells[k] += d
		add += d
	}
	return add
}

// exactSlab adds the true error terms of one step by the composite rule of
// ExactSolution, refined adaptively in space and time (relative tolerance
// 1e-9) on the cells where ∇u, y* or ∇v come near zero, so that the
// reference the bounds are tested against is far more accurate than they.
func (b *Evolution) exactSlab(t0, tau float64, v0, v1 []float64, ya, yb Flux) {
	s := b.s
	m := s.Mesh
	dim, nv := m.Dim, m.Dim+1
	G, ex := b.p.G, b.o.Exact
	var samples [][2]float64
	q := &slabQuad{dim: dim, rule: b.exRule, tx: b.exTx, tw: b.exTw, rel: 1e-8, maxDepth: 10}
	budget := 64
	if dim == 2 {
		q.maxDepth, budget = 1, 8
	}
	q.fn = func(k int, lam [3]float64, sq float64, out *[slabTerms]float64) {
		c := m.Cells[k]
		t := t0 + sq*tau
		g := [2]float64{(1-sq)*b.g0[k][0] + sq*b.g1[k][0], (1-sq)*b.g0[k][1] + sq*b.g1[k][1]}
		x, yy := physical(s, k, lam)
		y, div := yb.At(k, lam)
		if ya != yb {
			y0, d0 := ya.At(k, lam)
			y = [2]float64{(1-sq)*y0[0] + sq*y[0], (1-sq)*y0[1] + sq*y[1]}
			div = (1-sq)*d0 + sq*div
		}
		var dv, v float64
		for a := range nv {
			dv += lam[a] * b.d[c[a]]
			v += lam[a] * ((1-sq)*v0[c[a]] + sq*v1[c[a]])
		}
		res := div - dv
		if b.p.F != nil {
			res += b.p.F(x, yy, t)
		}
		u := ex.U(x, yy, t)
		gx, gy := ex.Grad(x, yy, t)
		if dim == 1 {
			gy = 0
		}
		gu := [2]float64{gx, gy}
		out[0] = convex.Gap(G, g, convex.Flux(G, gu))
		out[1] = convex.Gap(G, gu, y)
		out[2] = convex.Gap(G, g, y)
		out[3] = res * (u - v)
		if samples != nil {
			samples = append(samples, gu, y, g)
		}
	}
	nc := m.NumCells()
	base := make([][slabTerms]float64, nc)
	flag := make([]bool, nc)
	var total [slabTerms]float64
	var area float64
	for k := range nc {
		samples = make([][2]float64, 0, 3*q.rule.Len()*len(q.tx))
		base[k] = q.apply(k, wholePrism)
		// Each of ∇u, y* and ∇v is tested on its own.
		var parts [3][][2]float64
		for i, a := range samples {
			parts[i%3] = append(parts[i%3], a)
		}
		flag[k] = comesNearZero(parts[0]) || comesNearZero(parts[1]) || comesNearZero(parts[2])
		for j := range total {
			total[j] += s.Area[k] * math.Abs(base[k][j])
		}
		area += s.Area[k]
	}
	samples = nil
	for j := range total {
		q.abs[j] = q.rel * total[j] / area
	}
	var sum [slabTerms]float64
	for k := range nc {
		val := base[k]
		// A cell whose terms are all below ten times the tolerance per unit
		// measure cannot change the sums at that tolerance.
		small := true
		for j := range val {
			small = small && math.Abs(val[j]) <= 10*q.abs[j]
		}
		if flag[k] && !small {
			val, _ = q.run(k, base[k], budget)
		}
		for j := range sum {
			sum[j] += tau * s.Area[k] * val[j]
		}
	}
	b.primal += sum[0]
	b.dual += sum[1]
	b.gapE += sum[2]
	b.exact.Residual += sum[3]
	// ½‖e(t1)‖².
	t1 := t0 + tau
	final, _ := b.halfSquare(v1, func(x, y float64) float64 { return ex.U(x, y, t1) }, t1, b.exRule, fem.Rule{}, 1e-10)
	b.exact.Primal, b.exact.Dual, b.exact.Gap = b.primal, b.dual, b.gapE
	b.exact.Final = final
	b.exact.L2Final = math.Sqrt(2 * final)
	b.exact.Sup = math.Max(b.exact.Sup, b.exact.Total())
}

// EvolutionResult holds the bounds of docs/math.md §7 after the last step.
type EvolutionResult struct {
	// Steps is the number of time steps, T0 and T the time window.
	Steps int
	T0, T float64
	// Initial is ½‖e(0)‖², Gap is ∫_Q D_G(∇v, y*), A = Gap + Initial.
	Initial, Gap, A float64
	// P = ∫ ‖Π0 r‖_2 dt, RTilde = (∫ R_osc^{α'} dt)^{1/α'} and RQ the
	// space-time residual factor (∫ R(t)^{α'} dt)^{1/α'} of the modulus form,
	// R(t) = min(C_F‖r‖_{α'}, R_osc + C_F‖Π0 r‖_{α'}) (docs/math.md §4 at each t).
	P, RTilde, RQ float64
	// Split is (P-MAJ): the largest root of s = A + R̃ X_Q(s) + P√(2s), a
	// bound of sup_t S(t), S = μ_Q + μ*_Q + ½‖e‖² on (0, t).
	Split Number
	// Modulus is the largest root of s = A + R_Q X_Q(s) (global Friedrichs
	// constant; for the α ≥ 2 type it is the Young form at its best θ,
	// reported in Theta).
	Modulus Number
	Theta   float64
	// ConstantFree is the Gronwall–Bihari bound A(T) + ∫ρ(√(2A) + ∫ρ) of
	// S(T), ρ = ‖r‖_2: no modulus, no constant.
	ConstantFree Number
	// Norm bounds ‖∇(u − v)‖_{L^α(Q)} by X_Q of the split bound, and Final
	// bounds max_t ‖e(t)‖ by √(2 Split).
	Norm, Final Number
	// Cells are space indicators per cell (gap plus oscillation, summed over
	// the steps); Parts split each step's share of Split − Initial into a
	// space and a time part, and Space, Time total them.
	Cells       []float64
	Parts       []StepPart
	Space, Time float64
	// Exact holds the true error terms when an exact solution was given.
	Exact *ExactTerms
	Label convex.Label
	// Assumptions apply to every guaranteed number.
	Assumptions []string
}

// Bounds returns the bounds after the steps so far: (P-MAJ), the modulus
// form with the global Friedrichs constant and the constant-free form
// (docs/math.md §7), with the indicators.
func (b *Evolution) Bounds() (*EvolutionResult, error) {
	if b.steps == 0 {
		return nil, errors.New("evolution bounds: no time step yet")
	}
	q := b.conj
	nb := b.nb
	nb.n = make([]float64, len(b.norms))
	for i, n := range b.norms {
		nb.n[i] = math.Pow(n, 1/b.alpha)
	}
	r := &EvolutionResult{Steps: b.steps, T0: b.t0, T: b.t1, Initial: b.initial, Gap: b.gap,
		A: b.gap + b.initial, P: b.pSum, RTilde: math.Pow(b.rTil, 1/q), RQ: math.Pow(b.rQ, 1/q)}
	X := func(s float64) float64 { x, _ := nb.X(s); return x }
	split, err := largestRoot(r.A, func(s float64) float64 { return r.RTilde*X(s) + r.P*math.Sqrt(2*s) })
	if err != nil {
		return nil, err
	}
	modf, err := largestRoot(r.A, func(s float64) float64 { return r.RQ * X(s) })
	if err != nil {
		return nil, err
	}
	label := convex.Guaranteed
	if b.mod.Label != convex.Guaranteed {
		label = convex.Estimate
	}
	modLabel := label
	if b.o.Friedrichs.Label != convex.Guaranteed {
		modLabel = convex.Estimate
	}
	r.Label = label
	gapRule := ""
	if b.exactGap {
		gapRule = " (exact for this polynomial integrand: G is quadratic)"
	}
	r.Assumptions = []string{
		"space integrals by a rule of degree " + strconv.Itoa(b.o.Degree) + " (gap) and " + strconv.Itoa(b.o.LoadDegree) + " (residual terms) on " + strconv.Itoa(b.o.Split) + " sub-cells per edge, " + strconv.Itoa(b.o.TimePoints) + " Gauss points in time per step for the gap" + gapRule + ", Simpson's rule (degree 3) in time for the residual terms; the gap of cells where y* or ∇v comes near zero refined adaptively in space and time, with its error estimate added",
		"½‖e(0)‖² by a composite rule of degree " + strconv.Itoa(b.o.InitialDegree) + " on " + strconv.Itoa(b.o.InitialSplit) + " sub-cells per edge, checked per cell against degree " + strconv.Itoa(max(b.o.InitialDegree-2, 1)) + ", cells where the two differ refined adaptively, with the difference or the error estimate added",
		"v equals u_D on the boundary at all times (P1 data, linear in time per step)",
		"modulus " + b.mod.Label.String(),
	}
	num := func(v float64, l convex.Label, extra ...string) Number {
		return Number{Value: v, Label: l, Assumptions: append(append([]string(nil), r.Assumptions...), extra...)}
	}
	fr := "Friedrichs constant " + strconv.FormatFloat(b.o.Friedrichs.Value, 'g', 6, 64) + " (" + b.o.Friedrichs.Label.String() + ", " + b.o.Friedrichs.Method + ")"
	r.Split = num(split, label)
	r.Modulus = num(modf, modLabel, fr)
	x, which := nb.X(modf)
	r.Theta = r.RQ * nb.slope(which, modf, x)
	if r.RQ == 0 {
		r.Theta = 0
	}
	r.ConstantFree = Number{Value: r.A + b.constFree, Label: convex.Guaranteed, Assumptions: r.Assumptions[:3]}
	r.Norm = num(X(split), label)
	r.Final = num(math.Sqrt(2*split), label)
	// Indicators: the residual terms of (P-MAJ) shared over the steps by
	// their oscillation (space) and mean (time) parts.
	oscTotal, meanTotal := r.RTilde*X(split), r.P*math.Sqrt(2*split)
	r.Parts = append([]StepPart(nil), b.parts...)
	for n := range r.Parts {
		if b.rTil > 0 {
			r.Parts[n].Space += oscTotal * b.oscStep[n] / b.rTil
		}
		if b.pSum > 0 {
			r.Parts[n].Time += meanTotal * b.meanStep[n] / b.pSum
		}
		r.Space += r.Parts[n].Space
		r.Time += r.Parts[n].Time
	}
	r.Cells = append([]float64(nil), b.cells...)
	var oscSum float64
	for _, o := range b.oscCell {
		oscSum += o
	}
	if oscSum > 0 {
		for k := range r.Cells {
			r.Cells[k] += oscTotal * b.oscCell[k] / oscSum
		}
	}
	if b.o.Exact != nil {
		e := b.exact
		r.Exact = &e
	}
	return r, nil
}

// LastFlux returns the flux y*_n of the latest step (nil before the first).
func (b *Evolution) LastFlux() Flux { return b.flux }
