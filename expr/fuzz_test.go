package expr

import (
	"errors"
	"math"
	"testing"
	"unicode/utf8"
)

// FuzzParseEval checks that no source makes Parse, Eval, Eval2 or Scalar
// panic, that errors carry a column inside the source, and that Eval and
// Eval2 agree on the value bit for bit, and Eval2First on every value it
// returns.
func FuzzParseEval(f *testing.F) {
	for _, s := range []string{
		"sin(x*y)·exp(t)", "(x^2 + y^2)^(3/2) − 1e-3", "atan2(y, x) + min(x, t) * max(y, .5)",
		"-x^2^-t", "pow(x, y) / sqrt(abs(t))", "log(x) + tan(y) * cosh(t)", "((((x))))",
		"x**2 × y", "2x", "sin(", "1.2.3", "e^pi", "10/(x - y)",
	} {
		f.Add(s, 0.5, -1.25, 2.0)
	}
	f.Fuzz(func(t *testing.T, src string, x, y, tt float64) {
		g, err := Parse(src, "x", "y", "t")
		if err != nil {
			var e *Error
			if !errors.As(err, &e) {
				t.Fatalf("Parse(%q): error %v is not an *Error", src, err)
			}
			if e.Col < 0 || e.Col > utf8.RuneCountInString(src)+1 || e.Msg == "" {
				t.Fatalf("Parse(%q): error %q has column %d outside the source", src, e.Msg, e.Col)
			}
			return
		}
		p := []float64{x, y, tt}
		grad, hess := make([]float64, 3), make([]float64, 9)
		v := g.Eval(p)
		v2 := g.Eval2(p, grad, hess)
		if !same(v, v2) {
			t.Fatalf("%q at %v: Eval %v, Eval2 %v", src, p, v, v2)
		}
		for i := range 3 {
			for j := range 3 {
				a, b := hess[3*i+j], hess[3*j+i]
				if !same(a, b) {
					t.Fatalf("%q: Hessian not symmetric", src)
				}
			}
		}
		g2, h2 := make([]float64, 3), make([]float64, 4)
		v3 := g.Clone().Eval2First(p, g2, h2, 2)
		if !same(v3, v2) || !same(g2[0], grad[0]) || !same(g2[1], grad[1]) || !same(g2[2], grad[2]) ||
			!same(h2[0], hess[0]) || !same(h2[1], hess[1]) || !same(h2[2], hess[3]) || !same(h2[3], hess[4]) {
			t.Fatalf("%q at %v: Eval2First %v %v %v, Eval2 %v %v %v", src, p, v3, g2, h2, v2, grad, hess)
		}
		// Derivatives in a variable the formula does not use are exact zeros.
		for i, name := range []string{"x", "y", "t"} {
			if g.Uses(name) {
				continue
			}
			if grad[i] != 0 || hess[3*i] != 0 || hess[3*i+1] != 0 || hess[3*i+2] != 0 {
				t.Fatalf("%q at %v: nonzero derivative in unused %s: %v %v", src, p, name, grad, hess)
			}
		}
		if s, err := Parse(src, "t"); err == nil {
			sv, s1, s2 := s.Scalar(tt)
			g1, h1 := make([]float64, 1), make([]float64, 1)
			ev := s.Clone().Eval2([]float64{tt}, g1, h1)
			if !same(sv, ev) || !same(s1, g1[0]) || !same(s2, h1[0]) || !same(sv, s.Eval([]float64{tt})) {
				t.Fatalf("%q at t = %v: Scalar %v %v %v, Eval2 %v %v %v", src, tt, sv, s1, s2, ev, g1[0], h1[0])
			}
		}
	})
}

// same reports equality, counting two NaNs as equal.
func same(a, b float64) bool { return a == b || (math.IsNaN(a) && math.IsNaN(b)) }
