package expr

import (
	"errors"
	"math"
	"strings"
	"testing"
)

var xyt = []string{"x", "y", "t"}

func TestParseValues(t *testing.T) {
	p := []float64{3, 2, 0.5} // x, y, t
	tests := []struct {
		src  string
		want float64
	}{
		{"1", 1},
		{"2.5", 2.5},
		{".5", 0.5},
		{"1e-3", 1e-3},
		{"2.5E+2", 250},
		{"1e−3", 1e-3},
		{"1.e1", 10},
		{"1 + 2*3", 7},
		{"(1 + 2)*3", 9},
		{"1 - 2 - 3", -4},
		{"8 / 4 / 2", 1},
		{"2^3^2", 512},
		{"2**3**2", 512},
		{"-x^2", -9},
		{"-2^2", -4},
		{"(-2)^2", 4},
		{"2^-1", 0.5},
		{"x^-2", 1.0 / 9},
		{"-x*y", -6},
		{"--x", 3},
		{"+x", 3},
		{"- +x", -3},
		{"x - -y", 5},
		{"x/y*t", 0.75},
		{"2*x^2 + y", 20},
		{"x·y", 6},
		{"x×y", 6},
		{"x⋅y", 6},
		{"x − y", 1},
		{"−x", -3},
		{" \tx\n+\r\n1 ", 4},
		{"pi", math.Pi},
		{"π", math.Pi},
		{"e", math.E},
		{"sqrt(4)", 2},
		{"exp(0)", 1},
		{"log(e)", 1},
		{"sin(0) + cos(0)", 1},
		{"tan(0)", 0},
		{"atan(1)*4", math.Pi},
		{"atan2(1, 1)", math.Pi / 4},
		{"atan2(y, -x)", math.Atan2(2, -3)},
		{"sinh(0) + cosh(0) + tanh(0)", 1},
		{"abs(-x)", 3},
		{"min(x, y)", 2},
		{"max(x, y)", 3},
		{"pow(2, 10)", 1024},
		{"pow(x, y)", 9},
		{"x^t", math.Sqrt(3)},
		{"t^x", 0.125},
		{"2^x", 8},
		{"x^1", 3},
		{"x^0", 1},
		{"(-x)^3", -27},
		{"sin(x*y)*exp(t)", math.Sin(6) * math.Exp(0.5)},
		{"(x^2 + y^2)^(3/2)", math.Pow(13, 1.5)},
		{"1/x", 1.0 / 3},
		{"x/4", 0.75},
		{"10 - x", 7},
	}
	for _, tc := range tests {
		f, err := Parse(tc.src, xyt...)
		if err != nil {
			t.Errorf("Parse(%q): %v", tc.src, err)
			continue
		}
		got := f.Eval(p)
		if math.Abs(got-tc.want) > 1e-15*math.Max(1, math.Abs(tc.want)) {
			t.Errorf("%q: Eval = %v, want %v", tc.src, got, tc.want)
		}
		g, h := make([]float64, 3), make([]float64, 9)
		if v := f.Eval2(p, g, h); v != got {
			t.Errorf("%q: Eval2 value %v differs from Eval %v", tc.src, v, got)
		}
	}
}

func TestVariablesShadowConstants(t *testing.T) {
	f := MustParse("e + pi", "e")
	if got := f.Eval([]float64{1}); got != 1+math.Pi {
		t.Errorf("e as variable: got %v, want %v", got, 1+math.Pi)
	}
}

func TestParseErrors(t *testing.T) {
	tests := []struct {
		src  string
		vars []string
		col  int
		want string
	}{
		{"sn(x)", xyt, 1, `column 1: unknown function "sn"; functions: sqrt, exp, log, sin, cos, tan, atan, atan2, sinh, cosh, tanh, abs, min, max, pow`},
		{"2 + sn", xyt, 5, `column 5: unknown name "sn"; allowed variables: x, y, t`},
		{"x + y", []string{"t"}, 1, `column 1: unknown name "x"; allowed variables: t`},
		{"x", nil, 1, `column 1: unknown name "x"; this formula takes no variables`},
		{"1 + (x*(y", xyt, 10, `column 10: expected ")" to close "(" at column 8`},
		{"x*(y + 1", xyt, 9, `column 9: expected ")" to close "(" at column 3`},
		{"sin(x + 1", xyt, 10, `column 10: expected ")" to close "(" at column 4`},
		{"(x y)", xyt, 4, `column 4: expected ")" to close "(" at column 1, or an operator before "y"`},
		{"atan2(x)", xyt, 1, `column 1: atan2 takes 2 arguments, got 1`},
		{"sin(x, y)", xyt, 1, `column 1: sin takes 1 argument, got 2`},
		{"min()", xyt, 1, `column 1: min takes 2 arguments, got 0`},
		{"", xyt, 1, `column 1: empty formula`},
		{"   ", xyt, 1, `column 1: empty formula`},
		{"x +", xyt, 4, `column 4: formula ends where a number, variable, function or "(" is expected`},
		{"x + * y", xyt, 5, `column 5: expected a number, variable, function or "(" but found "*"`},
		{"2x", xyt, 2, `column 2: missing operator before "x"; write * for multiplication`},
		{"x(y)", xyt, 2, `column 2: missing operator before "("; write * for multiplication`},
		{"x)", xyt, 2, `column 2: unmatched ")"`},
		{"x, y", xyt, 2, `column 2: "," outside the arguments of a function`},
		{"sin", xyt, 1, `column 1: function sin needs its arguments in parentheses, e.g. sin(x)`},
		{"1.2.3", xyt, 1, `column 1: malformed number "1.2.3"`},
		{"x $ y", xyt, 3, `column 3: unexpected character "$"`},
		{"−−x ≤ 1", xyt, 5, `column 5: unexpected character "≤"`},
		{"1e999", xyt, 1, `column 1: number 1e999 is out of range`},
		{"x", []string{"x", "x"}, 0, `variable "x" listed twice`},
		{"x", []string{"2x"}, 0, `invalid variable name "2x"`},
		{"x", []string{"sin"}, 0, `variable name "sin" is a function name`},
	}
	for _, tc := range tests {
		_, err := Parse(tc.src, tc.vars...)
		var e *Error
		if !errors.As(err, &e) {
			t.Errorf("Parse(%q): error %v is not an *Error", tc.src, err)
			continue
		}
		if e.Col != tc.col || e.Error() != tc.want {
			t.Errorf("Parse(%q):\n got col %d %q\nwant col %d %q", tc.src, e.Col, e.Error(), tc.col, tc.want)
		}
	}
}

func TestLimits(t *testing.T) {
	long := "x" + strings.Repeat("+x", (MaxLen-1)/2) // MaxLen-1 or MaxLen characters
	f, err := Parse(long, "x")
	if err != nil {
		t.Fatalf("source of %d characters refused: %v", len(long), err)
	}
	if got, want := f.Eval([]float64{1}), float64((MaxLen+1)/2); got != want {
		t.Errorf("long sum = %v, want %v", got, want)
	}
	tests := []struct {
		name, src, want string
	}{
		{"too long", long + "+x+x", "formula has 10003 characters; the limit is 10000"},
		{"parentheses", strings.Repeat("(", MaxDepth+1) + "x" + strings.Repeat(")", MaxDepth+1), "column 201: formula nested deeper than 200 levels"},
		{"signs", strings.Repeat("-", MaxDepth+5) + "x", "column 201: formula nested deeper than 200 levels"},
		{"powers", "x" + strings.Repeat("^x", MaxDepth+5), "column 401: formula nested deeper than 200 levels"},
		{"calls", strings.Repeat("sin(", MaxDepth+1) + "x" + strings.Repeat(")", MaxDepth+1), "column 801: formula nested deeper than 200 levels"},
	}
	for _, tc := range tests {
		_, err := Parse(tc.src, "x")
		if err == nil || err.Error() != tc.want {
			t.Errorf("%s: got %v, want %q", tc.name, err, tc.want)
		}
	}
	ok := strings.Repeat("(", MaxDepth-1) + "x" + strings.Repeat(")", MaxDepth-1)
	if f, err := Parse(ok, "x"); err != nil || f.Eval([]float64{2}) != 2 {
		t.Errorf("nesting %d refused or wrong: %v", MaxDepth-1, err)
	}
}

func TestDomainErrorsGiveNaN(t *testing.T) {
	for _, src := range []string{"sqrt(x)", "log(x)", "x^0.5", "pow(x, y)", "log(x) + y"} {
		f := MustParse(src, "x", "y")
		p := []float64{-1, 0.5}
		g, h := make([]float64, 2), make([]float64, 4)
		if v := f.Eval(p); !math.IsNaN(v) {
			t.Errorf("%s at x = -1: Eval = %v, want NaN", src, v)
		}
		if v := f.Eval2(p, g, h); !math.IsNaN(v) {
			t.Errorf("%s at x = -1: Eval2 = %v, want NaN", src, v)
		}
	}
}

func TestUsesVarsSource(t *testing.T) {
	f := MustParse("sin(x) + t^2", "x", "y", "t")
	for name, want := range map[string]bool{"x": true, "y": false, "t": true, "z": false} {
		if f.Uses(name) != want {
			t.Errorf("Uses(%q) = %v, want %v", name, !want, want)
		}
	}
	if f.Source() != "sin(x) + t^2" || f.String() != f.Source() {
		t.Errorf("Source = %q", f.Source())
	}
	v := f.Vars()
	v[0] = "changed"
	if got := f.Vars(); strings.Join(got, ",") != "x,y,t" {
		t.Errorf("Vars = %v, want x,y,t and a copy", got)
	}
	if MustParse("2*pi", "x").Uses("x") {
		t.Errorf("constant formula reports using x")
	}
}

func TestConstantFolding(t *testing.T) {
	// A constant subtree compiles to one instruction; x*2^3 to two.
	tests := []struct {
		src  string
		want int
	}{
		{"2*pi*sqrt(2)/3 + exp(1)", 1},
		{"x*2^3", 2},
		{"x^2", 2},
		{"x^1", 1},
		{"(1 + 1)*x - 3", 3},
	}
	for _, tc := range tests {
		if got := len(MustParse(tc.src, "x").code); got != tc.want {
			t.Errorf("%q compiles to %d instructions, want %d", tc.src, got, tc.want)
		}
	}
}

// TestSharedSubexpressions checks that a repeated subtree is computed once and
// gives the same value and derivatives as computing it twice.
func TestSharedSubexpressions(t *testing.T) {
	if got := len(MustParse("sin(x)*sin(x)", "x").code); got != 5 { // var sin store load mul
		t.Errorf("sin(x)*sin(x) compiles to %d instructions, want 5", got)
	}
	one := MustParse("sin(x*y)*exp(-t)", xyt...)
	two := MustParse("sin(x*y)*exp(-t) + 3*(sin(x*y)*exp(-t)) - exp(-t)", xyt...)
	p := []float64{0.4, 1.3, 0.2}
	g1, h1 := make([]float64, 3), make([]float64, 9)
	g2, h2 := make([]float64, 3), make([]float64, 9)
	v1 := one.Eval2(p, g1, h1)
	v2 := two.Eval2(p, g2, h2)
	// ∂/∂t and ∂²/∂t² of -exp(-t) are exp(-t) and -exp(-t).
	e := math.Exp(-0.2)
	if !closeTo(v2, 4*v1-e, 1e-15) || two.Eval(p) != v2 {
		t.Errorf("value %v (Eval %v), want %v", v2, two.Eval(p), 4*v1-e)
	}
	for i := range g1 {
		want := 4 * g1[i]
		if i == 2 {
			want += e
		}
		if !closeTo(g2[i], want, 1e-15) {
			t.Errorf("grad[%d] = %v, want %v", i, g2[i], want)
		}
	}
	for i := range h1 {
		want := 4 * h1[i]
		if i == 8 {
			want -= e
		}
		if !closeTo(h2[i], want, 1e-14) {
			t.Errorf("hess[%d] = %v, want %v", i, h2[i], want)
		}
	}
	s := MustParse("sin(t)^2 + sin(t)", "t")
	v, d1, d2 := s.Scalar(0.3)
	sn, cs := math.Sincos(0.3)
	if !closeTo(v, sn*sn+sn, 1e-15) || !closeTo(d1, 2*sn*cs+cs, 1e-15) || !closeTo(d2, 2*(cs*cs-sn*sn)-sn, 1e-15) {
		t.Errorf("Scalar of sin(t)^2 + sin(t) = %v %v %v", v, d1, d2)
	}
}

func TestAllocs(t *testing.T) {
	f := MustParse("sin(pi*x)*sin(pi*y)*exp(-t) + (x^2 + y^2)^0.75 + atan2(y, x)", xyt...)
	g := MustParse("abs(t)^3/3 + log(1 + t^2)", "t")
	p := []float64{0.3, 0.7, 0.1}
	grad, hess := make([]float64, 3), make([]float64, 9)
	for name, fn := range map[string]func(){
		"Eval":   func() { f.Eval(p) },
		"Eval2":  func() { f.Eval2(p, grad, hess) },
		"Scalar": func() { g.Scalar(0.4) },
	} {
		if n := testing.AllocsPerRun(100, fn); n != 0 {
			t.Errorf("%s allocates %v times per call", name, n)
		}
	}
}

func TestClone(t *testing.T) {
	f := MustParse("x*y + exp(t)", xyt...)
	c := f.Clone()
	p := []float64{1, 2, 3}
	if f.Eval(p) != c.Eval(p) {
		t.Errorf("clone value differs")
	}
	if &c.stack[0] == &f.stack[0] || &c.jets[0] == &f.jets[0] || &c.sjets[0] == &f.sjets[0] {
		t.Errorf("clone shares scratch space")
	}
}
