package estimate

import (
	"math"

	"gapbook/fem"
)

// prism is a piece of one cell times one time step: a sub-cell given by the
// barycentric coordinates of its vertices (in 1-D the first two) and the
// part (s0, s1) of the step in normalised time s = (t − t_{n−1})/τ.
type prism struct {
	v      [3][3]float64
	s0, s1 float64
}

var wholePrism = prism{v: [3][3]float64{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}, s0: 0, s1: 1}

// slabTerms is the number of integrands a slabQuad carries at once.
const slabTerms = 4

// slabQuad integrates up to slabTerms integrands over the prisms of a cell
// by the tensor rule (space rule on the sub-cell × Gauss rule on (s0, s1)),
// with adaptive subdivision where they are not smooth: a prism is split into
// its 2 (1-D) or 4 (2-D, by the edge midpoints) sub-cells times two halves
// in time, and the rule on the children is compared with the rule on the
// parent; children that change a term by more than the tolerance are split
// again (adaptive quadrature, common practice, no source). The accepted
// sum carries the differences to the parents as its error estimate, which a
// bound adds to the value. Without a time rule (tx == nil) only space is
// split and the integrand is called with s = 0.
type slabQuad struct {
	dim    int
	rule   fem.Rule
	tx, tw []float64
	// rel and abs are the relative tolerance per prism and the absolute
	// tolerance per unit of measure (cell area × step fraction), per term.
	rel      float64
	abs      [slabTerms]float64
	maxDepth int
	// fn adds the integrands at (lam, s) to out.
	fn func(k int, lam [3]float64, s float64, out *[slabTerms]float64)
	// evals counts the integrand calls; refinement stops when it passes
	// limit (set per cell by run).
	evals, limit int
}

// apply returns the rule on prism p of cell k, in units of the cell area
// times the step length (the caller multiplies by |T| τ).
func (q *slabQuad) apply(k int, p prism) (out [slabTerms]float64) {
	nv := q.dim + 1
	frac := 1.0
	if q.dim == 2 {
		// Sub-cell area over cell area: the determinant of the barycentric
		// vertex matrix.
		a, b, c := p.v[0], p.v[1], p.v[2]
		frac = math.Abs(a[0]*(b[1]*c[2]-b[2]*c[1]) - a[1]*(b[0]*c[2]-b[2]*c[0]) + a[2]*(b[0]*c[1]-b[1]*c[0]))
	} else {
		frac = math.Abs(p.v[1][1] - p.v[0][1])
	}
	tx, tw := q.tx, q.tw
	if tx == nil {
		tx, tw = []float64{0}, []float64{1}
	}
	ds := p.s1 - p.s0
	for it, st := range tx {
		s := p.s0 + st*ds
		if q.tx == nil {
			s = 0
		}
		var part [slabTerms]float64
		for i, pt := range q.rule.Points {
			ref, scale := cellPoint(q.dim, pt)
			lam := simplex(p.v).point(nv, ref)
			var val [slabTerms]float64
			q.fn(k, lam, s, &val)
			w := q.rule.Weights[i] * scale
			for j := range part {
				part[j] += w * val[j]
			}
		}
		w := tw[it] * frac
		if q.tx != nil {
			w *= ds
		}
		for j := range out {
			out[j] += w * part[j]
		}
		q.evals += q.rule.Len()
	}
	return out
}

// children splits p in space and, with a time rule, in time.
func (q *slabQuad) children(p prism) (ch [8]prism, n int) {
	mid := func(a, b [3]float64) [3]float64 {
		return [3]float64{(a[0] + b[0]) / 2, (a[1] + b[1]) / 2, (a[2] + b[2]) / 2}
	}
	var sp [4][3][3]float64
	ns := 2
	if q.dim == 1 {
		m := mid(p.v[0], p.v[1])
		sp[0] = [3][3]float64{p.v[0], m}
		sp[1] = [3][3]float64{m, p.v[1]}
	} else {
		m01, m12, m02 := mid(p.v[0], p.v[1]), mid(p.v[1], p.v[2]), mid(p.v[0], p.v[2])
		sp = [4][3][3]float64{{p.v[0], m01, m02}, {m01, p.v[1], m12}, {m02, m12, p.v[2]}, {m12, m02, m01}}
		ns = 4
	}
	if q.tx == nil {
		for i := range ns {
			ch[i] = prism{v: sp[i], s0: p.s0, s1: p.s1}
		}
		return ch, ns
	}
	sm := (p.s0 + p.s1) / 2
	for i := range ns {
		ch[2*i] = prism{v: sp[i], s0: p.s0, s1: sm}
		ch[2*i+1] = prism{v: sp[i], s0: sm, s1: p.s1}
	}
	return ch, 2 * ns
}

// measure returns the share of the cell and step that p covers.
func (q *slabQuad) measure(p prism) float64 {
	m := 1.0
	if q.tx != nil {
		m = p.s1 - p.s0
	}
	if q.dim == 1 {
		return m * math.Abs(p.v[1][1]-p.v[0][1])
	}
	a, b, c := p.v[0], p.v[1], p.v[2]
	return m * math.Abs(a[0]*(b[1]*c[2]-b[2]*c[1])-a[1]*(b[0]*c[2]-b[2]*c[0])+a[2]*(b[0]*c[1]-b[1]*c[0]))
}

// adapt returns the adaptive integral over prism p of cell k whose rule
// value is parent, and the estimate of its error (same units as apply).
func (q *slabQuad) adapt(k int, p prism, parent [slabTerms]float64, depth int) (val, err [slabTerms]float64) {
	ch, n := q.children(p)
	var vals [8][slabTerms]float64
	var sum [slabTerms]float64
	for c := range n {
		vals[c] = q.apply(k, ch[c])
		for j := range sum {
			sum[j] += vals[c][j]
		}
	}
	m := q.measure(p)
	ok := true
	for j := range sum {
		if d := math.Abs(sum[j] - parent[j]); d > q.rel*math.Abs(sum[j]) && d > q.abs[j]*m {
			ok = false
		}
	}
	if ok || depth >= q.maxDepth || q.evals > q.limit {
		for j := range sum {
			err[j] = math.Abs(sum[j] - parent[j])
		}
		return sum, err
	}
	for c := range n {
		v, e := q.adapt(k, ch[c], vals[c], depth+1)
		for j := range val {
			val[j] += v[j]
			err[j] += e[j]
		}
	}
	return val, err
}

// run is adapt on the whole cell k with a budget of budget times the
// evaluations of one rule application.
func (q *slabQuad) run(k int, parent [slabTerms]float64, budget int) (val, err [slabTerms]float64) {
	nt := max(len(q.tx), 1)
	q.limit = q.evals + budget*q.rule.Len()*nt
	return q.adapt(k, wholePrism, parent, 1)
}

// comesNearZero reports whether the vectors a, sampled at the points of one
// cell and step, come near zero: their smallest length does not exceed
// their spread, so that |a|^β (β < 2) may have a kink or a cusp inside.
// Lengths are compared squared, without square roots; where the squares
// leave the floating-point range, by math.Hypot.
func comesNearZero(a [][2]float64) bool {
	if len(a) == 0 {
		return false
	}
	lo, hi := a[0], a[0]
	small := math.Inf(1)
	for _, x := range a {
		if x[0] < lo[0] {
			lo[0] = x[0]
		} else if x[0] > hi[0] {
			hi[0] = x[0]
		}
		if x[1] < lo[1] {
			lo[1] = x[1]
		} else if x[1] > hi[1] {
			hi[1] = x[1]
		}
		if n := x[0]*x[0] + x[1]*x[1]; n < small {
			small = n
		}
	}
	dx, dy := hi[0]-lo[0], hi[1]-lo[1]
	spread := dx*dx + dy*dy
	if small > 1e-280 && small < 1e280 && spread < 1e280 {
		if spread == 0 {
			return false
		}
		if spread > 1e-280 {
			return small <= spread
		}
	}
	return slowNearZero(a)
}

// slowNearZero is comesNearZero by math.Hypot, for lengths whose squares
// underflow or overflow (NaN samples compare false, as there).
func slowNearZero(a [][2]float64) bool {
	lo, hi := a[0], a[0]
	small := math.Inf(1)
	for _, x := range a {
		lo = [2]float64{math.Min(lo[0], x[0]), math.Min(lo[1], x[1])}
		hi = [2]float64{math.Max(hi[0], x[0]), math.Max(hi[1], x[1])}
		small = math.Min(small, math.Hypot(x[0], x[1]))
	}
	return small <= math.Hypot(hi[0]-lo[0], hi[1]-lo[1])
}
