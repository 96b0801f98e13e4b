package estimate

import "slices"

// loadTimes are the time points of the residual terms in a step, in
// normalised time s = (t − t_{n−1})/τ: Simpson's rule (3-point
// Gauss–Lobatto, degree 3), whose end points are shared with the
// neighbouring steps, so that f is sampled twice per step instead of three
// times (Davis & Rabinowitz, Methods of Numerical Integration, 2nd ed.
// 1984, §2.7).
var loadTimes, loadWeights = [3]float64{0, 0.5, 1}, [3]float64{1.0 / 6, 4.0 / 6, 1.0 / 6}

// loadCache holds f(·, t) at the points of the residual terms' space rule
// (Evolution.rrule) of every cell
// (index k·np + i), for one time t. It is filled by the step's flux
// projection (when that runs on the same rule) or by the slab, and read by
// the slab of this step and of the next, which starts at t.
type loadCache struct {
	t  float64
	ok bool
	v  []float64
	// next is the index the recording expects next; broken is set when a
	// call does not come in the rule's order.
	next   int
	broken bool
}

// loadAt returns the cache slot holding f(·, t), or nil.
func (b *Evolution) loadAt(t float64) *loadCache {
	for i := range b.loads {
		if c := &b.loads[i]; c.ok && c.t == t {
			return c
		}
	}
	return nil
}

// freeLoad returns a slot to overwrite, keeping those that hold the times
// in keep (the ends of the current step).
func (b *Evolution) freeLoad(keep ...float64) *loadCache {
	for i := range b.loads {
		if c := &b.loads[i]; !c.ok || !slices.Contains(keep, c.t) {
			if c.v == nil {
				c.v = make([]float64, b.s.Mesh.NumCells()*b.rrule.Len())
			}
			return c
		}
	}
	return &b.loads[0]
}

// recordLoad prepares a slot to record f(·, t) from the calls of a flux
// projection, or returns nil when the slot already holds t (then the
// projection reads it) or the projection cannot share the rule.
func (b *Evolution) recordLoad(t float64) *loadCache {
	if b.p.F == nil || b.loadAt(t) != nil || !b.shareLoad {
		return nil
	}
	c := b.freeLoad(b.stepT0, b.stepT1)
	c.t, c.ok, c.next, c.broken = t, false, 0, false
	return c
}

// f returns f at point i of the residual terms' space rule in cell k (physical point x, y)
// at time t, from a slot when one holds t.
func (b *Evolution) f(c *loadCache, k, i int, x, y, t float64) float64 {
	if c != nil {
		return c.v[k*len(b.rlam)+i]
	}
	return b.p.F(x, y, t)
}

// index returns the slot index of the call (k, lam) if it is the one the
// recording expects (the rule's points in order, cell by cell), else −1.
func (b *Evolution) index(c *loadCache, k int, lam [3]float64) int {
	np := len(b.rlam)
	if c.broken || c.next >= len(c.v) || c.next/np != k || b.rlam[c.next%np] != lam {
		c.broken = true
		return -1
	}
	c.next++
	return c.next - 1
}

// finishRecord marks the recording complete if every point came in order.
func (c *loadCache) finishRecord() {
	if c != nil {
		c.ok = !c.broken && c.next == len(c.v)
	}
}

// LoadSamples takes f(·, t1) at the points of the rule of the given degree
// (fem.P1.Rule order of points, cell by cell: vals[k·nq + q]), as the time
// stepper evaluated them for its load (nonlinear.EvolveOptions.Load), so
// that the flux projection and the residual terms of the steps next to t1
// use them instead of evaluating f again. Samples of another degree than
// EvolutionOptions.LoadDegree, or with Split > 1, are ignored. The caller
// vouches that vals are values of the problem's F.
func (b *Evolution) LoadSamples(t1 float64, degree int, vals []float64) {
	if b.p.F == nil || degree != b.o.LoadDegree || b.o.Split != 1 || len(vals) != b.s.Mesh.NumCells()*len(b.rlam) {
		return
	}
	if c := b.loadAt(t1); c != nil {
		copy(c.v, vals)
		return
	}
	c := b.freeLoad(b.t1)
	copy(c.v, vals)
	c.t, c.ok = t1, true
}
