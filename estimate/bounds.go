package estimate

import (
	"errors"
	"fmt"
	"math"
	"strconv"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/problem"
)

// DefaultDegree is the quadrature degree of the cell integrals when
// Options.Degree is 0: exact for the polynomial parts of RT1/P1 fluxes and
// smooth data up to degree 8, the highest symmetric Dunavant rule.
const DefaultDegree = 8

// Number is a computed value with its trust label and, for guaranteed
// numbers, the assumptions it rests on (docs/math.md §8).
type Number struct {
	Value       float64
	Label       convex.Label
	Assumptions []string
}

// String formats the value with its label, e.g. "1.25e-03 (guaranteed)".
func (n Number) String() string {
	return strconv.FormatFloat(n.Value, 'e', 3, 64) + " (" + n.Label.String() + ")"
}

// Options configure Estimate.
type Options struct {
	// Degree is the quadrature degree of the cell integrals (0: DefaultDegree).
	Degree int
	// Friedrichs is C_F,α of the domain (see FriedrichsConstant); required.
	Friedrichs Constant
	// Modulus replaces the potential's own modulus, e.g. an estimated one for
	// a user formula; every number that uses it takes its label.
	Modulus *convex.Modulus
	// Samples, when set, are f at the points of a quadrature rule (the
	// solver's load samples, SamplesOf, or NewSamples), shared with the flux
	// projection: on their mesh, after a spot check that they hold f, the
	// terms with f are integrated on their rule and read f there.
	Samples *Samples
}

// ResidualForm says which of the two bounds of ∫ r(u − v) was smaller.
type ResidualForm int

const (
	// GlobalResidual is R = C_F,α ‖r‖_{α'}.
	GlobalResidual ResidualForm = iota
	// SplitResidual is R = R_osc + C_F,α ‖Π0 r‖_{α'}.
	SplitResidual
)

// String names the form.
func (f ResidualForm) String() string {
	if f == SplitResidual {
		return "split"
	}
	return "global"
}

// Terms are the computable terms of the error identity (E-ID) for a P1
// function v and a flux y*, with residual r = f + div y* (docs/math.md §4).
type Terms struct {
	// Alpha is the growth α of G, Conj = α' its conjugate exponent.
	Alpha, Conj float64
	// D is ∫ D_G(∇v, y*), Cell its value on each cell.
	D    float64
	Cell []float64
	// Residual is ‖r‖_{α'}, Mean is ‖Π0 r‖_{α'} (Π0 the cell mean) and Osc
	// is R_osc = (Σ_T (C_P,α(T) ‖r − Π0 r‖_{α',T})^{α'})^{1/α'} with the
	// convex-cell Poincaré constant of convex.PoincareConvex.
	Residual, Mean, Osc float64
	// Energy is J(v) = ∫ G(∇v) − f v, and EnergyRound bounds the rounding
	// of its floating-point sum (sumRound).
	Energy, EnergyRound float64
	// Degree is the degree of the base quadrature rule (as Quadrature.Degree).
	Degree int
	// Quadrature says how the integrals were computed and how large their
	// estimated error is (already added to D and the residual norms).
	Quadrature Quadrature

	res, mean, osc []float64 // per-cell ‖r‖^{α'}, ‖Π0 r‖^{α'}, (C_P‖r−Π0r‖)^{α'}
	grad           [][2]float64
	area           []float64
}

// cellPoint maps reference point p of a rule to barycentric coordinates and
// the weight scale |T|/|T_ref| on a cell of the given dimension.
func cellPoint(dim int, p [2]float64) (lam [3]float64, scale float64) {
	if dim == 1 {
		return [3]float64{1 - p[0], p[0], 0}, 1
	}
	return [3]float64{1 - p[0] - p[1], p[0], p[1]}, 2
}

// refPoints returns the barycentric coordinates of the points of r and
// their weights times the reference measure (weights that sum to 1).
func refPoints(dim int, r fem.Rule) (lam [][3]float64, w []float64) {
	lam, w = make([][3]float64, r.Len()), make([]float64, r.Len())
	for i, pt := range r.Points {
		l, scale := cellPoint(dim, pt)
		lam[i], w[i] = l, r.Weights[i]*scale
	}
	return lam, w
}

func physical(s *fem.P1, k int, lam [3]float64) (x, y float64) {
	c := s.Mesh.Cells[k]
	for a := range s.Mesh.Dim + 1 {
		p := s.Mesh.Nodes[c[a]]
		x += lam[a] * p.X
		y += lam[a] * p.Y
	}
	return x, y
}

// EvaluateTerms computes the terms of (E-ID) for v (nodal values on s) and
// y by the quadrature rule of the given degree on every cell (0:
// DefaultDegree), with a safeguard: a cell where y* or r comes near zero
// (|y*|, |y*|^{α'}, |r|^{α'} are not smooth there) is integrated by adaptive
// subdivision (bounds_quad.go), and the estimated remaining error of those
// cells is added to D and to the residual norms as a safety margin (see
// Quadrature).
//
// The problem is read at its time T0 (the elliptic problem (E) of
// docs/math.md §4); samples may be nil.
func EvaluateTerms(s *fem.P1, p *problem.Problem, v []float64, y Flux, degree int, samples *Samples) (*Terms, error) {
	if s == nil || p == nil || p.G == nil || y == nil {
		return nil, errors.New("estimate: need a P1 space, a potential, a source f and a flux")
	}
	f := p.SourceAt(p.T0)
	if f == nil {
		return nil, errors.New("estimate: need a P1 space, a potential, a source f and a flux")
	}
	if len(v) != s.NumNodes() {
		return nil, fmt.Errorf("estimate: v has %d values for %d nodes", len(v), s.NumNodes())
	}
	degree = positiveDegree(degree)
	alpha := p.G.Growth()
	conj := alpha / (alpha - 1)
	nc := s.Mesh.NumCells()
	t := &Terms{Alpha: alpha, Conj: conj, Degree: degree,
		Cell: make([]float64, nc), res: make([]float64, nc), mean: make([]float64, nc),
		osc: make([]float64, nc), grad: make([][2]float64, nc), area: s.Area}
	s.Gradient(v, t.grad)
	rule := s.Rule(degree)
	nq := rule.Len()
	lams, wref := refPoints(s.Mesh.Dim, rule)
	ybuf := make([][2]float64, nq)
	dbuf := make([]float64, nq)
	// The terms with f (the residual norms and ∫ f v) use the rule of the
	// samples when they are given (often the solver's load points, so that
	// f is not evaluated again), else the same rule as the gap.
	rdeg := degree
	if !samples.On(s) {
		samples = nil
	} else if err := samples.check(f); err != nil {
		return nil, err
	} else {
		rdeg = samples.Degree
	}
	rrule, rlams, rwref := rule, lams, wref
	rybuf, rdbuf := ybuf, dbuf
	if rdeg != degree {
		rrule = s.Rule(rdeg)
		rlams, rwref = refPoints(s.Mesh.Dim, rrule)
		rybuf, rdbuf = make([][2]float64, rrule.Len()), make([]float64, rrule.Len())
	}
	rnq := rrule.Len()
	rbuf := make([]float64, rnq)
	wbuf := make([]float64, rnq)
	gp := newGapper(p.G)
	pc := newPower(conj)
	dim := s.Mesh.Dim
	// Pass 1: the base rule on every cell; the residual powers by a bound
	// where r may vanish, cells where y* may vanish remembered for pass 2.
	var suspects []int
	var energy, energyAbs, area, totalD float64
	for k, c := range s.Mesh.Cells {
		g := t.grad[k]
		var dk, mk, fv, fvAbs float64
		smin, smax := math.Inf(1), 0.0
		rmin, rmax := math.Inf(1), math.Inf(-1)
		var fmax float64
		// The cell's vertices and nodal values, read once for all points.
		var px, py, pv [3]float64
		for a := range dim + 1 {
			n := s.Mesh.Nodes[c[a]]
			px[a], py[a], pv[a] = n.X, n.Y, v[c[a]]
		}
		gc := gp.cell(g)
		atPoints(y, k, lams, ybuf, dbuf)
		for q := range lams {
			ys := ybuf[q]
			sy := math.Sqrt(ys[0]*ys[0] + ys[1]*ys[1])
			dk += wref[q] * s.Area[k] * gp.at(&gc, ys, sy)
			// Plain comparisons: the values are finite or caught below as
			// non-finite terms, so math.Min's NaN handling is not needed.
			if sy < smin {
				smin = sy
			}
			if sy > smax {
				smax = sy
			}
		}
		if rdeg != degree {
			atPoints(y, k, rlams, rybuf, rdbuf)
		}
		fs := samples.cell(s, k)
		for q, lam := range rlams {
			w := rwref[q] * s.Area[k]
			x := lam[0]*px[0] + lam[1]*px[1] + lam[2]*px[2]
			yy := lam[0]*py[0] + lam[1]*py[1] + lam[2]*py[2]
			vx := lam[0]*pv[0] + lam[1]*pv[1] + lam[2]*pv[2]
			div := rdbuf[q]
			var fx float64
			if fs != nil {
				fx = fs[q]
			} else {
				fx = f(x, yy)
			}
			fv += w * fx * vx
			fvAbs += math.Abs(w * fx * vx)
			r := fx + div
			if a := math.Abs(fx) + math.Abs(div); a > fmax {
				fmax = a
			}
			if r < rmin {
				rmin = r
			}
			if r > rmax {
				rmax = r
			}
			rbuf[q], wbuf[q] = r, w
			mk += w * r
		}
		mk /= s.Area[k]
		rabs := math.Min(math.Abs(rmin), math.Abs(rmax))
		if rmin <= 0 && rmax >= 0 {
			rabs = 0
		}
		// r − Π0 r has zero mean, so it vanishes in every cell: its power is
		// always bounded through even powers (exact for α' = 2).
		rk, ok := 0.0, residualPower(rbuf, wbuf, mk, conj, rrule.Degree)
		if conj == 2 || rabs > nearZero*(rmax-rmin) || math.Max(-rmin, rmax) <= roundoff*fmax {
			for q, r := range rbuf {
				rk += wbuf[q] * pc.of(math.Abs(r))
			}
		} else {
			rk = residualPower(rbuf, wbuf, 0, conj, rrule.Degree)
			t.Quadrature.Holder++
		}
		t.Cell[k] = dk
		t.res[k] = rk
		t.mean[k] = s.Area[k] * pc.of(math.Abs(mk))
		t.osc[k] = ok
		totalD += dk
		area += s.Area[k]
		ek := s.Area[k] * convex.Value(p.G, g)
		energy += ek - fv
		energyAbs += math.Abs(ek) + fvAbs
		if smin <= nearZero*(smax-smin) {
			suspects = append(suspects, k)
		}
	}
	// Pass 2: adaptive subdivision of the suspect cells, to a tolerance
	// relative to the cell value or to the cell's area share of the total.
	cq := cellQuad{s: s, y: y, gp: &gp, rule: rule, dim: dim}
	for _, k := range suspects {
		var acc, errs float64
		cq.budget = cellBudget
		cq.refine(k, t.grad[k], unitSimplex, 1, t.Cell[k], 1, gapTol*totalD*s.Area[k]/area, &acc, &errs)
		t.Cell[k] = acc + errs
		t.Quadrature.GapError += errs
		t.Quadrature.Subdivided++
	}
	t.Quadrature.Degree, t.Quadrature.Points, t.Quadrature.Depth = degree, nq, cq.depth
	t.Quadrature.ResidualDegree, t.Quadrature.ResidualPoints = rdeg, rnq
	t.Quadrature.Shared = samples != nil
	t.Quadrature.ExtraPoints = cq.evals
	var sumD, sumRes, sumMean, sumOsc float64
	diam := s.Mesh.Diameters()
	// C_P,α(T) is linear in diam(T): C_P(T)^{α'} = C_P(1)^{α'} diam(T)^{α'}.
	cp1 := math.Pow(convex.PoincareConvex(alpha, 1), conj)
	for k := range s.Mesh.Cells {
		t.osc[k] *= cp1 * pc.of(diam[k])
		sumD += t.Cell[k]
		sumRes += t.res[k]
		sumMean += t.mean[k]
		sumOsc += t.osc[k]
	}
	// The sums are rounded: their terms are non-negative, so each exceeds
	// its computed value by at most sumRound of itself; the bounds use the
	// sums raised by that much (docs/math.md §8).
	nterms := s.Mesh.NumCells() * (nq + rnq + roundOps)
	up := func(x float64) float64 { return x + sumRound(nterms, x) }
	t.D = up(sumD)
	t.Residual = math.Pow(up(sumRes), 1/conj)
	t.Mean = math.Pow(up(sumMean), 1/conj)
	t.Osc = math.Pow(up(sumOsc), 1/conj)
	t.Energy, t.EnergyRound = energy, sumRound(nterms, energyAbs)
	for _, x := range []float64{t.D, t.Residual, t.Energy} {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, errors.New("estimate: the terms are not finite; check f, v and the flux for NaN or overflow")
		}
	}
	return t, nil
}

// roundOps counts, per cell, the roundings of one quadrature term beyond
// those of the sum (products, the gap's own evaluation): generous, since
// the allowance it sets is of the order of 1e-14 relative.
const roundOps = 32

// sumRound bounds the rounding error of a floating-point sum of n terms
// whose absolute values add up to a: γ_n a with γ_n = n u/(1 − n u), u =
// 2⁻⁵³ the unit roundoff (Higham, Accuracy and Stability of Numerical
// Algorithms, 2nd ed., SIAM 2002, §4.2), each term's own roundings counted
// in n.
func sumRound(n int, a float64) float64 {
	const u = 0x1p-53
	nu := float64(n) * u
	if nu >= 0.5 {
		return math.Inf(1)
	}
	return nu / (1 - nu) * a
}

// roundoff is the size of r = f + div y*, relative to |f| + |div y*|, below
// which r is rounding noise of an equilibrated flux and needs no
// subdivision.
const roundoff = 1e-10

// Quadrature reports how the cell integrals of Terms were computed.
type Quadrature struct {
	// Degree is the exactness degree of the base rule, Points its size.
	Degree, Points int
	// ResidualDegree and ResidualPoints are those of the rule of the terms
	// with f (residual norms, ∫ f v): the samples' rule when Shared (f read
	// from Options.Samples), else the base rule.
	ResidualDegree, ResidualPoints int
	Shared                         bool // f read from Options.Samples
	// Subdivided counts the cells where ∫D_G was computed by adaptive
	// subdivision (y* near zero somewhere in the cell); Depth is the deepest
	// level reached and ExtraPoints the number of points this cost.
	Subdivided, Depth, ExtraPoints int
	// GapError is the estimated remaining error of ∫D_G in the subdivided
	// cells (the last difference between two subdivision levels); it is
	// already added to D as a safety margin.
	GapError float64
	// Holder counts the cells where r comes near zero, so that |r|^{α'} is
	// not smooth: there ∫|r|^{α'} is replaced by its Hölder bound through
	// the smooth even powers (see residualPower). ∫|r − Π0 r|^{α'} is always
	// bounded so, since r − Π0 r has zero mean and vanishes in every cell.
	Holder int
}

// String summarises the quadrature for the assumptions of a result.
func (q Quadrature) String() string {
	s := "cell integrals by a quadrature rule of degree " + strconv.Itoa(q.Degree) + " (" + strconv.Itoa(q.Points) + " points)"
	if q.ResidualDegree != q.Degree && q.ResidualDegree > 0 {
		s += ", the terms with f (residual norms, ∫ f v) of degree " + strconv.Itoa(q.ResidualDegree) + " (" + strconv.Itoa(q.ResidualPoints) + " points)"
	}
	if q.Shared {
		s += ", f read from samples at those points"
	}
	if q.Subdivided > 0 {
		s += "; " + strconv.Itoa(q.Subdivided) + " cells where y* comes near zero subdivided adaptively (depth " +
			strconv.Itoa(q.Depth) + "), estimated remaining error " + strconv.FormatFloat(q.GapError, 'e', 1, 64) +
			" added to D as a safety margin"
	}
	s += "; ∫|r − Π0 r|^α' and, in " + strconv.Itoa(q.Holder) + " cells where r comes near zero, ∫|r|^α' bounded by Hölder's inequality through the even powers r^2m, r^(2m+2) around α'"
	return s
}

// Result holds the bounds of docs/math.md §4 for one v and one flux.
type Result struct {
	*Terms
	// R bounds ∫ r(u − v) ≤ R ‖∇(u − v)‖_α; Form says which form won.
	R    Number
	Form ResidualForm
	// Majorant is μ̄ ≥ μ(v) = J(v) − J(u): the largest root of
	// μ = D + R X(μ).
	Majorant Number
	// Dual bounds μ*(y*) ≤ D + R X(μ̄).
	Dual Number
	// Norm bounds ‖∇(u − v)‖_α ≤ X(μ̄).
	Norm Number
	// Theta is the θ of the Young form that the root corresponds to,
	// θ = R X'(μ̄); YoungRHS is D + R^{α'}/(α'(θc)^{α'−1}), the right side of
	// (1 − θ)μ + μ* ≤ …, for the α ≥ 2 type modulus (NaN otherwise).
	Theta, YoungRHS float64
	// Indicators η_T = ∫_T D_G(∇v, y*) + the cell's share of R X(μ̄); they sum
	// to the majorant.
	Indicators []float64
	// Label is the weakest label of the inputs; Assumptions are shared by
	// every number of the result.
	Label       convex.Label
	Assumptions []string
}

// Estimate computes the terms of (E-ID) and the bounds built on them:
// the residual bound R = min(C_F,α ‖r‖_{α'}, R_osc + C_F,α ‖Π0 r‖_{α'}), the
// largest-root majorant μ̄ (docs/math.md §4), the dual and norm bounds, θ and the
// Young form, and local indicators. The numbers are labelled guaranteed only
// when the Friedrichs constant and the modulus are.
func Estimate(s *fem.P1, p *problem.Problem, v []float64, y Flux, opt Options) (*Result, error) {
	t, err := EvaluateTerms(s, p, v, y, opt.Degree, opt.Samples)
	if err != nil {
		return nil, err
	}
	mod := p.G.Modulus()
	if opt.Modulus != nil {
		mod = *opt.Modulus
	}
	res, err := t.Bounds(opt.Friedrichs, mod)
	if err != nil {
		return nil, err
	}
	if uD := p.DirichletAt(p.T0); uD != nil && !linearOnBoundary(s, uD) {
		res.Assumptions = append(res.Assumptions, "data interpolated on the boundary: the bounds concern the problem with u_D replaced by its piecewise linear interpolant")
	}
	return res, nil
}

// linearOnBoundary reports whether u_D is linear on every boundary edge
// (checked at the quarter points; 1-D boundaries are points).
func linearOnBoundary(s *fem.P1, uD func(x, y float64) float64) bool {
	m := s.Mesh
	for _, e := range m.BoundaryEdges {
		a, b := m.Nodes[e[0]], m.Nodes[e[1]]
		ua, ub := uD(a.X, a.Y), uD(b.X, b.Y)
		for _, l := range []float64{0.25, 0.5, 0.75} {
			x, y := a.X+l*(b.X-a.X), a.Y+l*(b.Y-a.Y)
			want := ua + l*(ub-ua)
			if math.Abs(uD(x, y)-want) > 1e-12*(1+math.Abs(ua)+math.Abs(ub)) {
				return false
			}
		}
	}
	return true
}

// normBound is X(μ) of docs/math.md §3 for the bounds of a modulus in the growth
// norm: the smallest of their norm bounds.
type normBound struct {
	bounds []convex.Bound
	n      []float64 // ‖w(∇v)‖_α for each bound
	alpha  float64
}

func (nb normBound) X(mu float64) (x float64, which int) {
	x = math.Inf(1)
	for i, b := range nb.bounds {
		if xi := b.Norm(mu, nb.n[i]); xi < x {
			x, which = xi, i
		}
	}
	return x, which
}

// slope returns X'(μ) for bound i at X = x, μ = K h(X).
func (nb normBound) slope(i int, mu, x float64) float64 {
	b := nb.bounds[i]
	if mu == 0 || x == 0 {
		return math.Inf(1)
	}
	if b.Kind == convex.PowerBound {
		return x / (b.Exponent * mu)
	}
	q, w := b.Exponent, 2*nb.n[i]+x
	dh := 2*x/math.Pow(w, 2-q) - (2-q)*x*x/math.Pow(w, 3-q)
	return 1 / (b.K * dh)
}

// Bounds turns the terms into the bounds of Result with the Friedrichs
// constant c and modulus mod (only bounds in the growth norm ‖·‖_α are
// used, since R measures the residual against ‖∇(u − v)‖_α).
func (t *Terms) Bounds(c Constant, mod convex.Modulus) (*Result, error) {
	if !(c.Value > 0) || math.IsInf(c.Value, 0) {
		return nil, fmt.Errorf("estimate: the Friedrichs constant %g is not a positive number; compute one with FriedrichsConstant", c.Value)
	}
	nb := normBound{alpha: t.Alpha}
	for _, b := range mod.Bounds {
		if math.Abs(b.Exponent-t.Alpha) <= 1e-12*t.Alpha {
			nb.bounds = append(nb.bounds, b)
			var s float64
			for k, g := range t.grad {
				s += t.area[k] * math.Pow(b.Weight(g), t.Alpha)
			}
			nb.n = append(nb.n, math.Pow(s, 1/t.Alpha))
		}
	}
	if len(nb.bounds) == 0 {
		return nil, fmt.Errorf("estimate: the potential has no modulus in the norm of its growth p = %g; supply an estimated one in Options.Modulus (its numbers are then labelled estimate)", t.Alpha)
	}
	r := &Result{Terms: t, Label: convex.Guaranteed}
	if c.Label != convex.Guaranteed || mod.Label != convex.Guaranteed {
		r.Label = convex.Estimate
	}
	r.Assumptions = []string{
		t.Quadrature.String(),
		"Friedrichs constant " + strconv.FormatFloat(c.Value, 'g', 6, 64) + " (" + c.Label.String() + ", " + c.Method + ")",
		"modulus " + mod.Label.String(),
	}
	global := c.Value * t.Residual
	split := t.Osc + c.Value*t.Mean
	R := global
	if split <= global {
		R, r.Form = split, SplitResidual
	}
	D := t.D
	mu := D
	if R > 0 {
		var err error
		mu, err = largestRoot(D, func(mu float64) float64 { x, _ := nb.X(mu); return R * x })
		if err != nil {
			return nil, err
		}
	}
	x, which := nb.X(mu)
	num := func(v float64) Number { return Number{Value: v, Label: r.Label, Assumptions: r.Assumptions} }
	r.R = num(R)
	r.Majorant = num(mu)
	r.Dual = num(D + R*x)
	r.Norm = num(x)
	r.Theta = R * nb.slope(which, mu, x)
	if R == 0 {
		r.Theta = 0
	}
	r.YoungRHS = math.NaN()
	if b := nb.bounds[which]; b.Kind == convex.PowerBound && r.Theta > 0 && r.Theta < 1 {
		cc, a := b.K*b.Exponent, t.Conj
		r.YoungRHS = D + math.Pow(R, a)/(a*math.Pow(r.Theta*cc, a-1))
	}
	r.Indicators = t.indicators(r.Form, R*x, c.Value*t.Mean*x)
	return r, nil
}

// indicators distributes D and the residual term RX over the cells: the
// global form by ‖r‖^{α'}_{α',T}, the split form by the cell's oscillation
// and mean parts, so that the indicators sum to D + R X(μ̄) = μ̄.
func (t *Terms) indicators(form ResidualForm, rx, meanPart float64) []float64 {
	eta := append([]float64(nil), t.Cell...)
	share := func(w []float64, total float64) {
		var s float64
		for _, x := range w {
			s += x
		}
		if s == 0 || total == 0 {
			return
		}
		for k, x := range w {
			eta[k] += total * x / s
		}
	}
	if form == GlobalResidual {
		share(t.res, rx)
	} else {
		share(t.osc, rx-meanPart)
		share(t.mean, meanPart)
	}
	return eta
}

// YoungForm returns the right side D + R^{α'}/(α'(θc)^{α'−1}) of the Young
// form (1 − θ)μ + μ* ≤ … for modulus constant c (μ ≥ (c/α) X^α) and
// θ ∈ (0, 1) (docs/math.md §4). Divided by 1 − θ it bounds μ for every θ; its
// minimum over θ is the largest-root majorant.
func YoungForm(D, R, c, alpha, theta float64) float64 {
	a := alpha / (alpha - 1)
	return D + math.Pow(R, a)/(a*math.Pow(theta*c, a-1))
}

// Energy returns J(v) = ∫ G(∇v) − f v for the P1 function v, with the load
// term integrated by the rule of the given degree (0: DefaultDegree).
func Energy(s *fem.P1, G convex.Potential, f func(x, y float64) float64, v []float64, degree int) float64 {
	e, _ := EnergyRounded(s, G, f, v, degree)
	return e
}

// EnergyRounded is Energy with a bound of the rounding of its sum
// (sumRound), for bounds that rest on J(v).
func EnergyRounded(s *fem.P1, G convex.Potential, f func(x, y float64) float64, v []float64, degree int) (e, round float64) {
	degree = positiveDegree(degree)
	rule := s.Rule(degree)
	dim := s.Mesh.Dim
	var abs float64
	for k, c := range s.Mesh.Cells {
		var g [2]float64
		for a := range dim + 1 {
			g[0] += v[c[a]] * s.Grad[k][a][0]
			g[1] += v[c[a]] * s.Grad[k][a][1]
		}
		ek := s.Area[k] * convex.Value(G, g)
		e += ek
		abs += math.Abs(ek)
		for q, pt := range rule.Points {
			lam, scale := cellPoint(dim, pt)
			x, y := physical(s, k, lam)
			vx := 0.0
			for a := range dim + 1 {
				vx += lam[a] * v[c[a]]
			}
			t := rule.Weights[q] * scale * s.Area[k] * f(x, y) * vx
			e -= t
			abs += math.Abs(t)
		}
	}
	return e, sumRound(s.Mesh.NumCells()*(rule.Len()+roundOps), abs)
}

// Minorant returns μ̲ = max(0, J(v) − J(w)) ≤ μ(v) for any admissible w
// (docs/math.md §4), e.g. the solution on a refined mesh, from the two
// energies, lowered by their rounding bounds rv and rw (EnergyRounded,
// Terms.EnergyRound) so that it stays below μ(v) in floating point.
func Minorant(jv, rv, jw, rw float64) float64 { return math.Max(0, jv-jw-rv-rw) }

// Interval is a labelled interval [Lo, Hi].
type Interval struct {
	Lo, Hi      float64
	Label       convex.Label
	Assumptions []string
}

// EnergyInterval returns J(u) ∈ [J(v) − μ̄, J(v) − μ̲] (docs/math.md §4) from a
// result and a minorant μ̲.
//
// Both ends are widened by the rounding bound of J(v), so that they
// enclose J(u) in floating point too.
func EnergyInterval(r *Result, minorant float64) Interval {
	return Interval{Lo: r.Energy - r.EnergyRound - r.Majorant.Value, Hi: r.Energy + r.EnergyRound - minorant,
		Label: r.Label, Assumptions: r.Assumptions}
}

// FlowRate turns an energy interval into the interval of Q = ∫u for the
// power potential of growth α with u_D = 0 and constant f ≠ 0, from
// J(u) = −f Q/α' (docs/math.md §4: ∫ ∂G(∇u)·∇u = α ∫G(∇u) = ∫ f u).
func FlowRate(e Interval, alpha, f float64) (Interval, error) {
	if !(alpha > 1) || f == 0 || math.IsNaN(f) || math.IsInf(f, 0) {
		return Interval{}, fmt.Errorf("flow rate: need α > 1 and a finite constant f ≠ 0; got α = %g, f = %g", alpha, f)
	}
	a := alpha / (alpha - 1)
	lo, hi := -a*e.Hi/f, -a*e.Lo/f
	if lo > hi {
		lo, hi = hi, lo
	}
	return Interval{Lo: lo, Hi: hi, Label: e.Label,
		Assumptions: append(append([]string(nil), e.Assumptions...), "power potential, u_D = 0, constant f")}, nil
}

// positiveDegree maps a requested quadrature degree to one whose triangle
// rule has positive weights: 0 means DefaultDegree, and the Dunavant rules
// of degrees 3 and 7 (a negative weight each) are replaced by those of
// degrees 4 and 8, since the bounds of ∫|r|^{α'} through even powers and the
// subdivision margins need a positive rule.
func positiveDegree(d int) int {
	switch {
	case d <= 0:
		return DefaultDegree
	case d == 3 || d == 7:
		return d + 1
	}
	return d
}

// largestRoot returns the largest s ≥ 0 with s = a + h(s), where h(s)/s
// decreases (X(μ)/μ decreases for both modulus types, so s − a − h(s)
// changes sign once), by bracketing and bisection; the upper end of the
// final bracket is returned, so the root is never under-estimated. Both the
// elliptic majorant μ̄ and the space-time majorants (docs/math.md §4, §7) are
// such roots.
func largestRoot(a float64, h func(float64) float64) (float64, error) {
	phi := func(s float64) float64 { return s - a - h(s) }
	if h(math.Max(a, 1)) == 0 {
		return a, nil // no residual term
	}
	lo, hi := a, math.Max(2*a, 1e-300)
	for phi(hi) <= 0 {
		lo, hi = hi, 2*hi
		if math.IsInf(hi, 1) {
			return 0, errors.New("estimate: the majorant overflows; the residual is too large for these data")
		}
	}
	for i := 0; i < 400 && hi-lo > 1e-15*hi; i++ {
		mid := lo + 0.5*(hi-lo)
		if phi(mid) <= 0 {
			lo = mid
		} else {
			hi = mid
		}
	}
	return hi, nil
}
