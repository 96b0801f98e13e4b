package estimate

import (
	"errors"
	"fmt"
	"math"
	"strconv"

	"gapbook/convex"
	"gapbook/fem"
)

// DefaultDegree is the quadrature degree of the cell integrals when
// Options.Degree is 0: exact for the polynomial parts of RT1/P1 fluxes and
// smooth data up to degree 8, the highest symmetric Dunavant rule.
const DefaultDegree = 8

// Problem is the elliptic problem (E) of MATH.md §4: minimise
// ∫ G(∇w) − f w over w with w = u_D on ∂Ω.
type Problem struct {
	// G is the potential; its growth α fixes the norms of the bounds.
	G convex.Potential
	// F is the source f(x, y) (y = 0 in 1-D).
	F func(x, y float64) float64
	// Dirichlet is u_D, used only to check whether it is linear on every
	// boundary edge (then a P1 v can match it exactly); nil means the
	// caller asserts that v carries the exact Dirichlet data.
	Dirichlet func(x, y float64) float64
}

// Number is a computed value with its trust label and, for guaranteed
// numbers, the assumptions it rests on (MATH.md §8).
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
// function v and a flux y*, with residual r = f + div y* (MATH.md §4).
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
	// Energy is J(v) = ∫ G(∇v) − f v.
	Energy float64
	// Degree is the quadrature degree used on every cell.
	Degree int

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
// DefaultDegree).
func EvaluateTerms(s *fem.P1, p Problem, v []float64, y Flux, degree int) (*Terms, error) {
	if s == nil || p.G == nil || p.F == nil || y == nil {
		return nil, errors.New("estimate: need a P1 space, a potential, a source f and a flux")
	}
	if len(v) != s.NumNodes() {
		return nil, fmt.Errorf("estimate: v has %d values for %d nodes", len(v), s.NumNodes())
	}
	if degree <= 0 {
		degree = DefaultDegree
	}
	alpha := p.G.Growth()
	conj := alpha / (alpha - 1)
	nc := s.Mesh.NumCells()
	t := &Terms{Alpha: alpha, Conj: conj, Degree: degree,
		Cell: make([]float64, nc), res: make([]float64, nc), mean: make([]float64, nc),
		osc: make([]float64, nc), grad: make([][2]float64, nc), area: s.Area}
	s.Gradient(v, t.grad)
	rule := s.Rule(degree)
	rbuf := make([]float64, rule.Len())
	wbuf := make([]float64, rule.Len())
	diam := s.Mesh.Diameters()
	dim := s.Mesh.Dim
	var sumD, sumRes, sumMean, sumOsc, energy float64
	for k, c := range s.Mesh.Cells {
		g := t.grad[k]
		var dk, mk, wk, fv float64
		for q, pt := range rule.Points {
			lam, scale := cellPoint(dim, pt)
			w := rule.Weights[q] * scale * s.Area[k]
			x, yy := physical(s, k, lam)
			ys, div := y.At(k, lam)
			dk += w * convex.Gap(p.G, g, ys)
			fx := p.F(x, yy)
			vx := 0.0
			for a := range dim + 1 {
				vx += lam[a] * v[c[a]]
			}
			fv += w * fx * vx
			r := fx + div
			rbuf[q], wbuf[q] = r, w
			mk += w * r
			wk += w
		}
		mk /= wk
		var rk, ok float64
		for q, r := range rbuf {
			rk += wbuf[q] * math.Pow(math.Abs(r), conj)
			ok += wbuf[q] * math.Pow(math.Abs(r-mk), conj)
		}
		cp := convex.PoincareConvex(alpha, diam[k])
		t.Cell[k] = dk
		t.res[k] = rk
		t.mean[k] = s.Area[k] * math.Pow(math.Abs(mk), conj)
		t.osc[k] = math.Pow(cp, conj) * ok
		sumD += dk
		sumRes += rk
		sumMean += t.mean[k]
		sumOsc += t.osc[k]
		energy += s.Area[k]*convex.Value(p.G, g) - fv
	}
	t.D = sumD
	t.Residual = math.Pow(sumRes, 1/conj)
	t.Mean = math.Pow(sumMean, 1/conj)
	t.Osc = math.Pow(sumOsc, 1/conj)
	t.Energy = energy
	for _, x := range []float64{t.D, t.Residual, t.Energy} {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil, errors.New("estimate: the terms are not finite; check f, v and the flux for NaN or overflow")
		}
	}
	return t, nil
}

// Result holds the bounds of MATH.md §4 for one v and one flux.
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
// largest-root majorant μ̄ (MATH.md §4), the dual and norm bounds, θ and the
// Young form, and local indicators. The numbers are labelled guaranteed only
// when the Friedrichs constant and the modulus are.
func Estimate(s *fem.P1, p Problem, v []float64, y Flux, opt Options) (*Result, error) {
	t, err := EvaluateTerms(s, p, v, y, opt.Degree)
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
	if p.Dirichlet != nil && !linearOnBoundary(s, p.Dirichlet) {
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

// normBound is X(μ) of MATH.md §3 for the bounds of a modulus in the growth
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
		return nil, fmt.Errorf("estimate: the potential has no modulus in the norm of its growth α = %g; supply an estimated one in Options.Modulus (its numbers are then labelled estimate)", t.Alpha)
	}
	r := &Result{Terms: t, Label: convex.Guaranteed}
	if c.Label != convex.Guaranteed || mod.Label != convex.Guaranteed {
		r.Label = convex.Estimate
	}
	r.Assumptions = []string{
		"cell integrals by a quadrature rule of degree " + strconv.Itoa(t.Degree),
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
	phi := func(mu float64) float64 {
		x, _ := nb.X(mu)
		return mu - D - R*x
	}
	mu := D
	if R > 0 {
		// φ(μ)/μ is increasing (X(μ)/μ decreases for both modulus types), so
		// φ changes sign once on (0, ∞): the crossing is the largest root.
		lo, hi := D, math.Max(2*D, 1e-300)
		for phi(hi) <= 0 {
			lo, hi = hi, 2*hi
			if math.IsInf(hi, 1) {
				return nil, errors.New("estimate: the majorant overflows; the residual is too large for these data")
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
		mu = hi
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
// θ ∈ (0, 1) (MATH.md §4). Divided by 1 − θ it bounds μ for every θ; its
// minimum over θ is the largest-root majorant.
func YoungForm(D, R, c, alpha, theta float64) float64 {
	a := alpha / (alpha - 1)
	return D + math.Pow(R, a)/(a*math.Pow(theta*c, a-1))
}

// Energy returns J(v) = ∫ G(∇v) − f v for the P1 function v, with the load
// term integrated by the rule of the given degree (0: DefaultDegree).
func Energy(s *fem.P1, G convex.Potential, f func(x, y float64) float64, v []float64, degree int) float64 {
	if degree <= 0 {
		degree = DefaultDegree
	}
	rule := s.Rule(degree)
	dim := s.Mesh.Dim
	var e float64
	for k, c := range s.Mesh.Cells {
		var g [2]float64
		for a := range dim + 1 {
			g[0] += v[c[a]] * s.Grad[k][a][0]
			g[1] += v[c[a]] * s.Grad[k][a][1]
		}
		e += s.Area[k] * convex.Value(G, g)
		for q, pt := range rule.Points {
			lam, scale := cellPoint(dim, pt)
			x, y := physical(s, k, lam)
			vx := 0.0
			for a := range dim + 1 {
				vx += lam[a] * v[c[a]]
			}
			e -= rule.Weights[q] * scale * s.Area[k] * f(x, y) * vx
		}
	}
	return e
}

// Minorant returns μ̲ = max(0, J(v) − J(w)) ≤ μ(v) for any admissible w
// (MATH.md §4), e.g. the solution on a refined mesh, from the two energies.
func Minorant(jv, jw float64) float64 { return math.Max(0, jv-jw) }

// Interval is a labelled interval [Lo, Hi].
type Interval struct {
	Lo, Hi      float64
	Label       convex.Label
	Assumptions []string
}

// EnergyInterval returns J(u) ∈ [J(v) − μ̄, J(v) − μ̲] (MATH.md §4) from a
// result and a minorant μ̲.
func EnergyInterval(r *Result, minorant float64) Interval {
	return Interval{Lo: r.Energy - r.Majorant.Value, Hi: r.Energy - minorant,
		Label: r.Label, Assumptions: r.Assumptions}
}

// FlowRate turns an energy interval into the interval of Q = ∫u for the
// power potential of growth α with u_D = 0 and constant f ≠ 0, from
// J(u) = −f Q/α' (MATH.md §4: ∫ ∂G(∇u)·∇u = α ∫G(∇u) = ∫ f u).
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
