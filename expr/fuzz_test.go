package expr

import (
	"errors"
	"math"
	"testing"
	"unicode/utf8"
)

// FuzzParseEval checks that no source makes Parse, Eval, Eval2 or Scalar
// panic, that errors carry a column inside the source, and that Eval and
// Eval2 agree on the value bit for bit.
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
		if v != v2 && !(math.IsNaN(v) && math.IsNaN(v2)) {
			t.Fatalf("%q at %v: Eval %v, Eval2 %v", src, p, v, v2)
		}
		for i := range 3 {
			for j := range 3 {
				a, b := hess[3*i+j], hess[3*j+i]
				if a != b && !(math.IsNaN(a) && math.IsNaN(b)) {
					t.Fatalf("%q: Hessian not symmetric", src)
				}
			}
		}
		if s, err := Parse(src, "t"); err == nil {
			sv, _, _ := s.Scalar(tt)
			if ev := s.Eval([]float64{tt}); sv != ev && !(math.IsNaN(sv) && math.IsNaN(ev)) {
				t.Fatalf("%q at t = %v: Scalar %v, Eval %v", src, tt, sv, ev)
			}
		}
	})
}
