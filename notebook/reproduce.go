package notebook

import (
	"fmt"
	"math"
)

// ReproduceTolerance is the relative agreement that counts as reproducing
// saved results when the digests differ. Digests fingerprint 12 significant
// digits, but the same study computed natively and in WebAssembly differs in
// the last bits: the amd64 math and gonum kernels use assembly with other
// rounding than the portable code, and iterative solvers stopped at a
// tolerance carry that into the 12th digit. 1e-9 is the agreement the
// project promises between the two.
const ReproduceTolerance = 1e-9

// RoundOff compares saved results a with recomputed results b number by
// number. It reports whether they have the same shape (names, labels,
// sizes) and agree to ReproduceTolerance, and the largest deviation found,
// relative to the scale of its group: the value itself, or for values
// that are round-off next to their neighbours (|v| below 1e-12 of the
// largest value of the same cell's scalars, column, series or field) the
// largest value of the group.
func RoundOff(a, b *Results) (ok bool, worst float64) {
	if a == nil || b == nil {
		return false, math.Inf(1)
	}
	if len(a.Scalars) != len(b.Scalars) || len(a.Tables) != len(b.Tables) ||
		len(a.Plots) != len(b.Plots) || len(a.Fields) != len(b.Fields) {
		return false, math.Inf(1)
	}
	var c closeness
	var sa, sb []float64
	for i, s := range a.Scalars {
		t := b.Scalars[i]
		if s.Name != t.Name || s.Label != t.Label {
			return false, math.Inf(1)
		}
		sa, sb = append(sa, s.Value), append(sb, t.Value)
	}
	c.group(sa, sb)
	for i, t := range a.Tables {
		u := b.Tables[i]
		if t.Name != u.Name || len(t.Rows) != len(u.Rows) || len(t.Columns) != len(u.Columns) {
			return false, math.Inf(1)
		}
		for j := range t.Columns {
			var x, y []float64
			for r := range t.Rows {
				if len(t.Rows[r]) != len(u.Rows[r]) || j >= len(t.Rows[r]) {
					return false, math.Inf(1)
				}
				x, y = append(x, t.Rows[r][j]), append(y, u.Rows[r][j])
			}
			c.group(x, y)
		}
	}
	for i, p := range a.Plots {
		q := b.Plots[i]
		if p.Name != q.Name || len(p.Series) != len(q.Series) {
			return false, math.Inf(1)
		}
		for j, s := range p.Series {
			c.group(s.X, q.Series[j].X)
			c.group(s.Y, q.Series[j].Y)
		}
	}
	for i, f := range a.Fields {
		g := b.Fields[i]
		if f.Name != g.Name || f.PerCell != g.PerCell || len(f.Tri) != len(g.Tri) {
			return false, math.Inf(1)
		}
		for k := range f.Tri {
			if f.Tri[k] != g.Tri[k] {
				return false, math.Inf(1)
			}
		}
		c.group(f.X, g.X)
		c.group(f.Y, g.Y)
		c.group(f.Values, g.Values)
	}
	return !c.bad && c.worst <= ReproduceTolerance, c.worst
}

type closeness struct {
	worst float64
	bad   bool
}

// group compares two arrays of the same quantity.
func (c *closeness) group(x, y []float64) {
	if len(x) != len(y) {
		c.bad = true
		return
	}
	scale := 0.0
	for i := range x {
		for _, v := range [2]float64{x[i], y[i]} {
			if !math.IsInf(v, 0) && !math.IsNaN(v) {
				scale = math.Max(scale, math.Abs(v))
			}
		}
	}
	for i := range x {
		a, b := x[i], y[i]
		if a == b || (math.IsNaN(a) && math.IsNaN(b)) {
			continue
		}
		if math.IsNaN(a) || math.IsNaN(b) || math.IsInf(a, 0) || math.IsInf(b, 0) {
			c.bad = true
			continue
		}
		ref := math.Max(math.Abs(a), math.Abs(b))
		if ref < 1e-12*scale {
			ref = scale
		}
		c.worst = math.Max(c.worst, math.Abs(a-b)/ref)
	}
}

// roundOffNote describes an agreement within ReproduceTolerance.
func roundOffNote(worst float64) string {
	return fmt.Sprintf("digest differs in round-off only: largest relative deviation %.1e (tolerance %.0e)", worst, ReproduceTolerance)
}
