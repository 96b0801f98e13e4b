package estimate

import (
	"math"

	"gapbook/convex"
	"gapbook/fem"
)

// gapper evaluates D_G(ξ, η) at quadrature points. For the power potential
// it uses a closed form or a short series instead of convex.Gap's 12-point
// Gauss rule of transcendental integrands, at a quarter of the cost; any
// other potential goes to convex.Gap.
//
// The scalar part d(t, s) = g(t) + g*(s) − ts is symmetric under exchanging
// (g, t) with (g*, s), so it is evaluated with the exponent e = α or e = α',
// whichever is a whole number (the binomial series then ends after e terms:
// α = 3/2 uses α' = 3), and with α when neither is.
type gapper struct {
	G     convex.Potential
	power bool
	alpha float64
	// swap says that e = α' and the arguments are exchanged.
	swap bool
	e    float64
	conj float64   // e' = e/(e − 1)
	coef []float64 // c_k of φ(1 + u) = Σ_{k≥2} c_k u^k, coef[0] = c_2
	// powA, powConj and powInv are x^e, x^{e'} and x^{1/(e−1)}.
	powA, powConj, powInv power
}

// seriesRadius is the |u| below which φ is summed as a series; beyond it
// the closed form cancels at most a factor 2/((e − 1) u²) (64 at e = 1.5).
const seriesRadius = 0.25

func newGapper(G convex.Potential) gapper {
	gp := gapper{G: G}
	alpha, ok := convex.IsPower(G)
	if !ok || !isPower(G, alpha) {
		return gp
	}
	gp.power, gp.alpha, gp.e = true, alpha, alpha
	if conj := alpha / (alpha - 1); alpha != math.Trunc(alpha) && conj == math.Trunc(conj) {
		gp.swap, gp.e = true, conj
	}
	e := gp.e
	gp.conj = e / (e - 1)
	gp.powA, gp.powConj, gp.powInv = newPower(e), newPower(gp.conj), newPower(1/(e-1))
	// φ(x) = ∫_1^x (r^{e−1} − 1) dr = Σ_{k≥2} C(e−1, k−1) u^k / k, u = x − 1
	// (binomial series, |u| < 1). Terms for |u| ≤ 1/4 fall below 1e-17 of
	// the leading one within 40 steps past k = e; for a whole e they vanish
	// past k = e and the list ends there.
	binom := 1.0 // C(e−1, k−1)
	for k := 2; k < 48+int(e); k++ {
		binom *= (e - float64(k-1)) / float64(k-1)
		if binom == 0 {
			break
		}
		gp.coef = append(gp.coef, binom/float64(k))
	}
	return gp
}

// isPower confirms by sampling that G is g(t) = t^α/α with conjugate
// s^{α'}/α', so that the closed forms below are the potential's own.
func isPower(G convex.Potential, alpha float64) bool {
	conj := alpha / (alpha - 1)
	for _, t := range []float64{0.3, 1, 2.5} {
		g, g1, _ := G.Profile(t)
		gs, _ := G.Conjugate(t)
		if math.Abs(g-math.Pow(t, alpha)/alpha) > 1e-13*g || math.Abs(g1-math.Pow(t, alpha-1)) > 1e-13*g1 ||
			math.Abs(gs-math.Pow(t, conj)/conj) > 1e-13*gs {
			return false
		}
	}
	return true
}

// gap returns D_G(ξ, η) = d(|ξ|, |η|) + (|ξ||η| − ξ·η) (docs/math.md §2).
func (gp *gapper) gap(xi, eta [2]float64) float64 {
	c := gp.cell(xi)
	return gp.at(&c, eta, math.Sqrt(eta[0]*eta[0]+eta[1]*eta[1]))
}

// gapCell is what D_G(ξ, ·) needs of a fixed ξ (∇v on one cell), computed
// once for all the quadrature points of the cell.
type gapCell struct {
	xi [2]float64
	t  float64    // |ξ|
	n  [2]float64 // ξ/|ξ|, 0 for ξ = 0
}

func (gp *gapper) cell(xi [2]float64) gapCell {
	c := gapCell{xi: xi, t: math.Sqrt(xi[0]*xi[0] + xi[1]*xi[1])}
	if c.t > 0 {
		c.n = [2]float64{xi[0] / c.t, xi[1] / c.t}
	}
	return c
}

// at returns D_G(ξ, η) for the ξ of c, given s = |η|.
func (gp *gapper) at(c *gapCell, eta [2]float64, s float64) float64 {
	if !gp.power || math.IsInf(c.t, 0) || math.IsInf(s, 0) || c.t > 1e100 || s > 1e100 {
		return convex.Gap(gp.G, c.xi, eta)
	}
	d := gp.scalar(c.t, s)
	if c.t == 0 || s == 0 {
		return d
	}
	ux, uy := c.n[0]-eta[0]/s, c.n[1]-eta[1]/s
	return d + 0.5*c.t*s*(ux*ux+uy*uy)
}

// scalar is d(t, s) = t^α/α + s^{α'}/α' − t s for the power potential,
// evaluated with the exponent e (arguments exchanged when e = α'): with
// τ = s^{1/(e−1)}, x = t/τ, d = τ s φ(x), φ(x) = x^e/e + 1/e' − x, by the
// binomial series near x = 1 and in closed form elsewhere.
func (gp *gapper) scalar(t, s float64) float64 {
	t0, s0 := t, s
	if gp.swap {
		t, s = s, t
	}
	if s == 0 {
		return gp.powA.of(t) / gp.e
	}
	if t == 0 {
		return gp.powConj.of(s) / gp.conj
	}
	tau := gp.powInv.of(s)
	if tau == 0 || math.IsInf(tau, 0) {
		return convex.ScalarGap(gp.G, t0, s0)
	}
	x := t / tau
	u := x - 1
	var phi float64
	if math.Abs(u) <= seriesRadius {
		p := u * u
		for _, c := range gp.coef {
			term := c * p
			phi += term
			if math.Abs(term) <= 1e-17*math.Abs(phi) {
				break
			}
			p *= u
		}
	} else {
		phi = gp.powA.of(x)/gp.e + 1/gp.conj - x
	}
	if phi < 0 {
		return 0
	}
	return tau * s * phi
}

// simplex is a sub-cell given by the barycentric coordinates (with respect
// to its mesh cell) of its vertices; in 1-D only the first two are used.
type simplex [3][3]float64

var unitSimplex = simplex{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}

// point maps the barycentric coordinates ref on the sub-cell (nv vertices)
// to barycentric coordinates on its mesh cell.
func (sc simplex) point(nv int, ref [3]float64) (lam [3]float64) {
	for a := range nv {
		for b := range nv {
			lam[b] += ref[a] * sc[a][b]
		}
	}
	return lam
}

func mid(a, b [3]float64) [3]float64 {
	return [3]float64{(a[0] + b[0]) / 2, (a[1] + b[1]) / 2, (a[2] + b[2]) / 2}
}

// children splits a sub-cell into 2 halves (1-D) or 4 similar triangles
// (2-D, by the edge midpoints), each of equal measure.
func children(dim int, s simplex) (c [4]simplex, n int) {
	if dim == 1 {
		m := mid(s[0], s[1])
		return [4]simplex{{s[0], m}, {m, s[1]}}, 2
	}
	m01, m12, m02 := mid(s[0], s[1]), mid(s[1], s[2]), mid(s[0], s[2])
	return [4]simplex{{s[0], m01, m02}, {m01, s[1], m12}, {m02, m12, s[2]}, {m12, m02, m01}}, 4
}

// Quadrature safeguard parameters. A cell is smooth for the base rule when
// every |y*| (and |r|) at its points exceeds the spread of the values over
// the cell (nearZero); otherwise y* or r may vanish in or next to the cell,
// where |y*|, |y*|^{α'} and |r|^{α'} are not smooth and a fixed rule
// under-integrates them.
const (
	nearZero = 3.0
	// gapTol is the relative tolerance of adaptive subdivision for ∫D_G
	// (relative to the cell value, or to the cell's area share of the
	// total, whichever is larger).
	gapTol = 1e-7
	// cellBudget caps the rule applications spent on one cell, so that an
	// integrand rough everywhere cannot make the recursion exponential.
	cellBudget = 400
)

// gapDepth is the subdivision depth limit: 1-D cells halve, so a kink costs
// two rule applications per level; triangles quarter.
func gapDepth(dim int) int {
	if dim == 1 {
		return 30
	}
	return 6
}

// cellQuad integrates D_G(∇v, y*) over sub-cells of mesh cells.
type cellQuad struct {
	s    *fem.P1
	y    Flux
	gp   *gapper
	rule fem.Rule
	dim  int
	// evals counts the points evaluated by subdivision; depth is the
	// largest depth reached; budget is what the current cell has left.
	evals, depth, budget int
}

// on applies the rule to sub-cell sc of cell k (measure frac of the cell).
func (q *cellQuad) on(k int, g [2]float64, sc simplex, frac float64) (out float64) {
	nv := q.dim + 1
	for i, pt := range q.rule.Points {
		ref, scale := cellPoint(q.dim, pt)
		lam := sc.point(nv, ref)
		ys, _ := q.y.At(k, lam)
		out += q.rule.Weights[i] * scale * q.gp.gap(g, ys)
	}
	q.evals += q.rule.Len()
	q.budget--
	return out * q.s.Area[k] * frac
}

// refine is adaptive subdivision (common practice, no source): the rule on
// the children is compared with the parent value; where they differ by more
// than the tolerance and the depth limit allows, each child is refined in
// turn. The children's sum is accepted, and the difference to the parent,
// an overestimate of the accepted value's error for a converging rule, is
// added to errs.
func (q *cellQuad) refine(k int, g [2]float64, sc simplex, frac, parent float64, depth int, abs float64, acc, errs *float64) {
	ch, n := children(q.dim, sc)
	var vals [4]float64
	var sum float64
	for c := range n {
		vals[c] = q.on(k, g, ch[c], frac/float64(n))
		sum += vals[c]
	}
	q.depth = max(q.depth, depth)
	d := math.Abs(sum - parent)
	if q.budget < n || depth >= gapDepth(q.dim) || d <= gapTol*math.Abs(sum) || d <= abs*frac {
		*acc += sum
		*errs += d
		return
	}
	for c := range n {
		q.refine(k, g, ch[c], frac/float64(n), vals[c], depth+1, abs, acc, errs)
	}
}

// residualPower returns a bound of ∫_T |r|^a from the rule's values r_q and
// weights w_q (summing to |T|) where |r|^a is not smooth: with
// 2m ≤ a ≤ 2m + 2, Hölder's inequality (log-convexity of L^p norms) gives
// ∫|r|^a ≤ (∫ r^{2m})^θ (∫ r^{2m+2})^{1−θ}, θ = (2m + 2 − a)/2, and even
// powers of a smooth r are smooth, so the rule integrates them accurately
// (exactly for polynomial r of degree ≤ degree/(2m + 2)).
//
// When the rule cannot integrate r^{2m+2} of a linear r (2m + 2 > degree:
// α' ≥ 8, i.e. α ≤ 8/7, at degree 8), the rule is applied to |r|^a directly.
func residualPower(r, w []float64, shift, a float64, degree int) float64 {
	m := int(math.Floor(a / 2))
	if 2*m+2 > degree {
		var s float64
		for q, x := range r {
			s += w[q] * absPow(x-shift, a)
		}
		return s
	}
	theta := (float64(2*m) + 2 - a) / 2
	var lo, hi float64
	for q, x := range r {
		x -= shift
		p := 1.0
		for range m {
			p *= x * x
		}
		lo += w[q] * p
		hi += w[q] * p * x * x
	}
	switch theta {
	case 1:
		return lo
	case 0:
		return hi
	case 0.5: // α' = 3, 5, 7: the geometric mean
		return math.Sqrt(lo * hi)
	case 0.25: // α' = 3/2, 7/2, ...: lo^{1/4} hi^{3/4}
		q := math.Sqrt(math.Sqrt(hi))
		return math.Sqrt(math.Sqrt(lo)) * q * q * q
	case 0.75:
		q := math.Sqrt(math.Sqrt(lo))
		return q * q * q * math.Sqrt(math.Sqrt(hi))
	}
	return math.Pow(lo, theta) * math.Pow(hi, 1-theta)
}

// absPow is |r|^a, exact for a = 2.
func absPow(r, a float64) float64 {
	if a == 2 {
		return r * r
	}
	return math.Pow(math.Abs(r), a)
}

// power is x^e for x ≥ 0 and a fixed exponent e, by products and one
// square root for the whole and half-whole exponents (convex.FastPow).
type power struct{ convex.FastPow }

func newPower(e float64) power { return power{convex.NewFastPow(e)} }

// of returns x^e for x ≥ 0.
func (p power) of(x float64) float64 { return p.Of(x) }
