package expr

import (
	"math"
	"math/rand/v2"
	"strconv"
	"testing"

	"gonum.org/v1/gonum/diff/fd"
	"gonum.org/v1/gonum/mat"
)

// closeTo compares with a relative tolerance on the scale max(1, |want|).
func closeTo(got, want, tol float64) bool {
	return math.Abs(got-want) <= tol*math.Max(1, math.Abs(want))
}

// derivCase is a formula with hand-derived value, gradient and Hessian.
type derivCase struct {
	name string
	src  string
	vars []string
	// exact returns the value, gradient and row-major Hessian at p.
	exact func(p []float64) (float64, []float64, []float64)
}

var closedForms = []derivCase{
	{"sin(xy)e^t", "sin(x*y)·exp(t)", xyt, func(p []float64) (float64, []float64, []float64) {
		x, y, t := p[0], p[1], p[2]
		s, c, e := math.Sin(x*y), math.Cos(x*y), math.Exp(t)
		return s * e, []float64{y * c * e, x * c * e, s * e}, []float64{
			-y * y * s * e, (c - x*y*s) * e, y * c * e,
			(c - x*y*s) * e, -x * x * s * e, x * c * e,
			y * c * e, x * c * e, s * e,
		}
	}},
	{"r^p, p = 3", "(x^2 + y^2)^(3/2)", []string{"x", "y"}, radialPower(3)},
	{"r^p, p = 1.5", "(x^2 + y^2)^(1.5/2)", []string{"x", "y"}, radialPower(1.5)},
	{"r^p, p = 4", "(x^2+y^2)^2", []string{"x", "y"}, radialPower(4)},
	{"atan2", "atan2(y, x)", []string{"x", "y"}, func(p []float64) (float64, []float64, []float64) {
		x, y := p[0], p[1]
		r2 := x*x + y*y
		r4 := r2 * r2
		return math.Atan2(y, x), []float64{-y / r2, x / r2}, []float64{
			2 * x * y / r4, (y*y - x*x) / r4,
			(y*y - x*x) / r4, -2 * x * y / r4,
		}
	}},
	{"sqrt(xy + t)", "sqrt(x*y + t)", xyt, func(p []float64) (float64, []float64, []float64) {
		x, y, t := p[0], p[1], p[2]
		u := x*y + t
		s := math.Sqrt(u)
		d1, d2 := 0.5/s, -0.25/(s*u) // sqrt', sqrt''
		g := []float64{y, x, 1}
		h := make([]float64, 9)
		for i := range 3 {
			for j := range 3 {
				h[3*i+j] = d2 * g[i] * g[j]
			}
		}
		h[1] += d1
		h[3] += d1
		return s, []float64{d1 * y, d1 * x, d1}, h
	}},
	{"x/y", "x/y", []string{"x", "y"}, func(p []float64) (float64, []float64, []float64) {
		x, y := p[0], p[1]
		return x / y, []float64{1 / y, -x / (y * y)}, []float64{0, -1 / (y * y), -1 / (y * y), 2 * x / (y * y * y)}
	}},
	{"x^y", "x^y", []string{"x", "y"}, func(p []float64) (float64, []float64, []float64) {
		x, y := p[0], p[1]
		v, l := math.Pow(x, y), math.Log(x)
		return v, []float64{y * v / x, v * l}, []float64{
			y * (y - 1) * v / (x * x), v / x * (1 + y*l),
			v / x * (1 + y*l), v * l * l,
		}
	}},
}

// radialPower is |x|^p = (x² + y²)^(p/2) in 2-D:
// ∇ = p r^(p−2) x, H = p r^(p−2) I + p(p−2) r^(p−4) x xᵀ.
func radialPower(pw float64) func(p []float64) (float64, []float64, []float64) {
	return func(p []float64) (float64, []float64, []float64) {
		x, y := p[0], p[1]
		r := math.Hypot(x, y)
		a, b := pw*math.Pow(r, pw-2), pw*(pw-2)*math.Pow(r, pw-4)
		return math.Pow(r, pw), []float64{a * x, a * y}, []float64{
			a + b*x*x, b * x * y,
			b * x * y, a + b*y*y,
		}
	}
}

// randomPoint draws a point with every coordinate in [0.2, 2], where all test
// formulas are smooth.
func randomPoint(rng *rand.Rand, n int) []float64 {
	p := make([]float64, n)
	for i := range p {
		p[i] = 0.2 + 1.8*rng.Float64()
	}
	if rng.IntN(2) == 0 && n > 1 {
		p[0] = -p[0] // also the left half-plane for atan2 and r^p
	}
	return p
}

// TestDerivativesClosedForm compares Eval2 with hand-derived derivatives. The
// tolerance 1e-12 relative allows rounding in both evaluations (a few hundred
// ulps for the composite formulas); a wrong chain rule is off by O(1).
func TestDerivativesClosedForm(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for _, tc := range closedForms {
		f := MustParse(tc.src, tc.vars...)
		n := len(tc.vars)
		g, h := make([]float64, n), make([]float64, n*n)
		for range 20 {
			p := randomPoint(rng, n)
			if tc.name == "x^y" || tc.name == "sqrt(xy + t)" {
				p[0] = math.Abs(p[0])
			}
			v := f.Eval2(p, g, h)
			wv, wg, wh := tc.exact(p)
			if !closeTo(v, wv, 1e-12) {
				t.Errorf("%s at %v: value %v, want %v", tc.name, p, v, wv)
			}
			for i := range g {
				if !closeTo(g[i], wg[i], 1e-12) {
					t.Errorf("%s at %v: grad[%d] = %v, want %v", tc.name, p, i, g[i], wg[i])
				}
			}
			for i := range h {
				if !closeTo(h[i], wh[i], 1e-12) {
					t.Errorf("%s at %v: hess[%d] = %v, want %v", tc.name, p, i, h[i], wh[i])
				}
			}
		}
	}
}

// TestDerivativeConventions checks the points the chain rule alone gets
// wrong: powers at zero and at negative bases, abs at 0, the active branch of
// min and max, and exact zeros in variables a singular factor does not use.
func TestDerivativeConventions(t *testing.T) {
	tests := []struct {
		src        string
		x, y       float64
		v          float64
		gx, gy     float64
		hxx, hxy   float64
		hyy        float64
		whyCorrect string
	}{
		{"x^2", 0, 0, 0, 0, 0, 2, 0, 0, "d²/dx² x² = 2"},
		{"x^3", -1, 0, -1, 3, 0, -6, 0, 0, "3x², 6x at x = -1"},
		{"x^4 + y^2", 0, 0, 0, 0, 0, 0, 0, 2, "smooth at 0"},
		{"pow(x, 3)", -2, 0, -8, 12, 0, -12, 0, 0, "3x², 6x at x = -2"},
		{"x^-1", -2, 0, -0.5, -0.25, 0, -0.25, 0, 0, "-1/x², 2/x³"},
		{"abs(x)", 0, 0, 0, 0, 0, 0, 0, 0, "subgradient 0 at 0"},
		{"abs(x)*y", -3, 2, 6, -2, 3, 0, -1, 0, "sign(x)y, |x|"},
		{"min(x, y)", 1, 2, 1, 1, 0, 0, 0, 0, "active branch x"},
		{"min(x, y)", 3, 2, 2, 0, 1, 0, 0, 0, "active branch y"},
		{"max(x^2, y)", 3, 2, 9, 6, 0, 2, 0, 0, "active branch x²"},
		{"max(x^2, y)", 1, 2, 2, 0, 1, 0, 0, 0, "active branch y"},
		{"sqrt(x) + y", 0, 5, 5, math.Inf(1), 1, math.Inf(-1), 0, 0, "∂y = 1 although sqrt' = ∞ at 0"},
		{"sqrt(x)*0 + y^2", 0, 1, 1, math.NaN(), 2, math.NaN(), 0, 2, "∞·0 in x only"},
		{"2^x", 1, 0, 2, 2 * math.Ln2, 0, 2 * math.Ln2 * math.Ln2, 0, 0, "2^x ln 2, 2^x ln² 2"},
		{"3 - x/2", 1, 0, 2.5, -0.5, 0, 0, 0, 0, "linear"},
		{"10/x", 2, 0, 5, -2.5, 0, 2.5, 0, 0, "-10/x², 20/x³"},
	}
	for _, tc := range tests {
		f := MustParse(tc.src, "x", "y")
		g, h := make([]float64, 2), make([]float64, 4)
		v := f.Eval2([]float64{tc.x, tc.y}, g, h)
		got := []float64{v, g[0], g[1], h[0], h[1], h[3], h[2]}
		want := []float64{tc.v, tc.gx, tc.gy, tc.hxx, tc.hxy, tc.hyy, tc.hxy}
		for i := range got {
			if !same(got[i], want[i]) && !closeTo(got[i], want[i], 1e-15) {
				t.Errorf("%s at (%v, %v) (%s): got v, ∇, Hxx, Hxy, Hyy, Hyx = %v, want %v",
					tc.src, tc.x, tc.y, tc.whyCorrect, got, want)
				break
			}
		}
	}
}

// fdFormulas are smooth on the points of randomPoint (x possibly negative).
var fdFormulas = []string{
	"sin(pi*x)*sin(pi*y)*exp(-t)",
	"(x^2 + y^2)^(2.5/2) * cos(t*y)",
	"atan2(y, x) + atan(x*y - t)",
	"tan(0.3*x*y) + tanh(x - y) * sinh(t) - cosh(x*t)",
	"log(1 + x^2 + y^4) / (1 + t^2)",
	"sqrt(x^2 + y*t) * exp(x/3) - 1/(y + t)",
	"pow(y, t) * x^3 - y^x",
	"abs(x)^1.5 * y + 2^(t*y)",
	"x*y*t - x/y/t + (x - y)^2*(t + 1)",
}

// TestDerivativesFiniteDifferences compares the AD gradient with gonum's central
// differences of Eval, and the AD Hessian with gonum's central-difference
// Jacobian of the AD gradient. Central differences with step h = 6e-6 have
// truncation error ≈ h²|f‴|/6 ≈ 1e-11 and rounding error ≈ ε|f|/h ≈ 4e-11 for
// |f| ≲ 1e1, so a relative tolerance of 1e-7 leaves room for larger third
// derivatives while catching any wrong derivative rule (errors of order 1).
func TestDerivativesFiniteDifferences(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	const tol = 1e-7
	for _, src := range fdFormulas {
		f := MustParse(src, xyt...)
		g, h := make([]float64, 3), make([]float64, 9)
		for range 10 {
			p := randomPoint(rng, 3)
			f.Eval2(p, g, h)
			fdg := fd.Gradient(nil, f.Eval, p, &fd.Settings{Formula: fd.Central})
			for i := range g {
				if !closeTo(g[i], fdg[i], tol) {
					t.Errorf("%s at %v: grad[%d] = %v, central difference %v", src, p, i, g[i], fdg[i])
				}
			}
			c := f.Clone()
			var jac mat.Dense
			jac.ReuseAs(3, 3)
			fd.Jacobian(&jac, func(y, x []float64) {
				c.Eval2(x, y, make([]float64, 9))
			}, p, &fd.JacobianSettings{Formula: fd.Central})
			for i := range 3 {
				for j := range 3 {
					if h[3*i+j] != h[3*j+i] {
						t.Errorf("%s: Hessian not symmetric", src)
					}
					if !closeTo(h[3*i+j], jac.At(i, j), tol) {
						t.Errorf("%s at %v: hess[%d][%d] = %v, central difference %v", src, p, i, j, h[3*i+j], jac.At(i, j))
					}
				}
			}
		}
	}
}

// TestScalar checks g, g′, g″ of potentials against closed forms and against
// Eval2 in one variable.
func TestScalar(t *testing.T) {
	tests := []struct {
		src   string
		exact func(t float64) (float64, float64, float64)
	}{
		// |t|^p/p with p = 3: g' = |t| t, g'' = 2|t|.
		{"abs(t)^3/3", func(t float64) (float64, float64, float64) {
			return math.Pow(math.Abs(t), 3) / 3, math.Abs(t) * t, 2 * math.Abs(t)
		}},
		// (1 + t²)^(p/2) with p = 1.5, a regularised power law.
		{"(1 + t^2)^(1.5/2)", func(t float64) (float64, float64, float64) {
			u := 1 + t*t
			return math.Pow(u, 0.75), 1.5 * t * math.Pow(u, -0.25),
				1.5*math.Pow(u, -0.25) - 0.75*t*t*math.Pow(u, -1.25)
		}},
		{"t^2/2 + log(cosh(t))", func(t float64) (float64, float64, float64) {
			th := math.Tanh(t)
			return t*t/2 + math.Log(math.Cosh(t)), t + th, 2 - th*th
		}},
		// t² ≤ 1 + |t| exactly for |t| ≤ (1 + √5)/2.
		{"min(t^2, 1 + abs(t))", func(t float64) (float64, float64, float64) {
			if math.Abs(t) <= (1+math.Sqrt(5))/2 {
				return t * t, 2 * t, 2
			}
			return 1 + math.Abs(t), math.Copysign(1, t), 0
		}},
	}
	for _, tc := range tests {
		f := MustParse(tc.src, "t")
		g, h := make([]float64, 1), make([]float64, 1)
		for _, x := range []float64{-2.5, -0.7, 0, 0.3, 1.9} {
			v, d1, d2 := f.Scalar(x)
			wv, w1, w2 := tc.exact(x)
			if !closeTo(v, wv, 1e-14) || !closeTo(d1, w1, 1e-14) || !closeTo(d2, w2, 1e-14) {
				t.Errorf("%s at %v: Scalar = %v %v %v, want %v %v %v", tc.src, x, v, d1, d2, wv, w1, w2)
			}
			ev := f.Eval2([]float64{x}, g, h)
			if ev != v || g[0] != d1 || h[0] != d2 {
				t.Errorf("%s at %v: Scalar %v %v %v differs from Eval2 %v %v %v", tc.src, x, v, d1, d2, ev, g[0], h[0])
			}
		}
	}
	if v, _, _ := MustParse("x*y", "x", "y").Scalar(1); !math.IsNaN(v) {
		t.Errorf("Scalar of a two-variable formula = %v, want NaN", v)
	}
}

// TestPLaplaceManufactured derives f = −div(|∇u|^(p−2)∇u) for u = |x|^a from
// the AD gradient and Hessian,
//
//	div(|∇u|^(p−2)∇u) = |∇u|^(p−2)Δu + (p−2)|∇u|^(p−4) ∇uᵀH∇u,
//
// and compares it with the closed form of docs/checks.md item 12 for n = 2:
// −Δ_p u = −a^(p−1)((a−1)(p−1) + n − 1)|x|^((a−1)(p−1)−1).
func TestPLaplaceManufactured(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	const n = 2
	for _, p := range []float64{1.5, 2, 3, 4} {
		for _, a := range []float64{0.5, 2.0 / 3, 1.5, 2, 3} {
			u := MustParse("(x^2 + y^2)^("+ftoa(a)+"/2)", "x", "y")
			g, h := make([]float64, 2), make([]float64, 4)
			for range 10 {
				// Points in the annulus 0.1 ≤ |x| ≤ 2, away from the singularity.
				r := 0.1 + 1.9*rng.Float64()
				th := 2 * math.Pi * rng.Float64()
				pt := []float64{r * math.Cos(th), r * math.Sin(th)}
				u.Eval2(pt, g, h)
				gn := math.Hypot(g[0], g[1])
				lap := h[0] + h[3]
				gHg := g[0]*(h[0]*g[0]+h[1]*g[1]) + g[1]*(h[2]*g[0]+h[3]*g[1])
				f := -(math.Pow(gn, p-2)*lap + (p-2)*math.Pow(gn, p-4)*gHg)
				want := -math.Pow(a, p-1) * ((a-1)*(p-1) + n - 1) * math.Pow(r, (a-1)*(p-1)-1)
				if !closeTo(f, want, 1e-11) {
					t.Errorf("p = %v, a = %v, |x| = %v: f = %v, closed form %v", p, a, r, f, want)
				}
			}
		}
	}
}

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// TestEval2First checks that the Hessian block of the first k variables
// and the whole gradient equal Eval2's entries bit for bit (an identity:
// the same chain rules on the same values), for every k of every closed
// form, at random points.
func TestEval2First(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	for _, c := range closedForms {
		f := MustParse(c.src, c.vars...)
		n := len(c.vars)
		p := make([]float64, n)
		grad, hess := make([]float64, n), make([]float64, n*n)
		for range 5 {
			for i := range p {
				p[i] = 0.2 + rng.Float64()
			}
			v := f.Eval2(p, grad, hess)
			for k := -1; k <= n+1; k++ {
				kk := min(max(k, 0), n)
				g2, h2 := make([]float64, n), make([]float64, kk*kk)
				v2 := f.Eval2First(p, g2, h2, k)
				if !same(v, v2) {
					t.Fatalf("%s k = %d: value %v, Eval2 %v", c.name, k, v2, v)
				}
				for i := range n {
					if !same(g2[i], grad[i]) {
						t.Fatalf("%s k = %d: ∂_%d %v, Eval2 %v", c.name, k, i, g2[i], grad[i])
					}
				}
				for i := range kk {
					for j := range kk {
						if !same(h2[i*kk+j], hess[i*n+j]) {
							t.Fatalf("%s k = %d: H[%d][%d] %v, Eval2 %v", c.name, k, i, j, h2[i*kk+j], hess[i*n+j])
						}
					}
				}
			}
		}
	}
}
