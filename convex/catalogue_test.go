package convex

import (
	"math"
	"testing"
)

// TestFastPowMatchesPow checks the product form of t^e against math.Pow
// (reference: the standard library), for the exponents it takes over and
// one it must leave to Pow, over 40 decades and at the range limits.
func TestFastPowMatchesPow(t *testing.T) {
	for _, e := range []float64{-0.5, 0.5, 1, 2, -2, 1.5, 3, -7.5, 8, 0.3} {
		p := NewFastPow(e)
		if p.fast != (e != 0.3) {
			t.Fatalf("e = %g: fast = %v", e, p.fast)
		}
		for _, x := range []float64{0, math.Inf(1), 1e-31, 1e-30, 3.7e-12, 0.01, 0.5, 1, 1.3, 7, 123.4, 9e20, 1e30, 2e30} {
			got, want := p.Of(x), math.Pow(x, e)
			if got != want && math.Abs(got-want) > 8e-16*(math.Abs(e)+1)*want {
				t.Errorf("%g^%g = %.17g, Pow gives %.17g", x, e, got, want)
			}
		}
	}
	// norm: the fast square root and Hypot agree, and Hypot takes over at
	// the extremes where the squares would overflow or underflow.
	for _, v := range [][2]float64{{3, 4}, {1e-200, 1e-200}, {1e200, -1e200}, {0, 0}, {-2.5e-3, 7e4}} {
		if got, want := norm(v), math.Hypot(v[0], v[1]); math.Abs(got-want) > 2e-16*want {
			t.Errorf("norm(%v) = %g, Hypot %g", v, got, want)
		}
	}
}
