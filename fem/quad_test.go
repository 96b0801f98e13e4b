package fem

import (
	"math"
	"testing"
)

// Exact integral of x^i y^j over the reference triangle: i! j! / (i + j + 2)!
// (Beta-function identity, textbook).
func monomialTriangle(i, j int) float64 {
	lg := func(n int) float64 { v, _ := math.Lgamma(float64(n + 1)); return v }
	return math.Exp(lg(i) + lg(j) - lg(i+j+2))
}

// maxMonomialError returns the largest relative error of r over the
// monomials of total degree d.
func maxMonomialError(r Rule, d int) float64 {
	worst := 0.0
	for i := 0; i <= d; i++ {
		j := d - i
		s := 0.0
		for q, p := range r.Points {
			s += r.Weights[q] * math.Pow(p[0], float64(i)) * math.Pow(p[1], float64(j))
		}
		exact := monomialTriangle(i, j)
		worst = max(worst, math.Abs(s-exact)/exact)
	}
	return worst
}

func TestTriangleRulesExactToDegree(t *testing.T) {
	type tc struct {
		name   string
		rule   Rule
		points int
	}
	var cases []tc
	wantPoints := []int{1, 3, 4, 6, 7, 12, 13, 16} // Dunavant 1985, Table I
	for d := 1; d <= 8; d++ {
		r, err := Dunavant(d)
		if err != nil {
			t.Fatal(err)
		}
		cases = append(cases, tc{"dunavant", r, wantPoints[d-1]})
	}
	for _, d := range []int{1, 4, 9, 14, 20} {
		r := Collapsed(d)
		cases = append(cases, tc{"collapsed", r, r.Len()})
	}
	for _, c := range cases {
		if c.rule.Len() != c.points {
			t.Errorf("%s degree %d: %d points, want %d", c.name, c.rule.Degree, c.rule.Len(), c.points)
		}
		// Published tables carry 15 digits.
		for d := 0; d <= c.rule.Degree; d++ {
			if e := maxMonomialError(c.rule, d); e > 1e-13 {
				t.Errorf("%s degree %d: monomials of degree %d off by %.2e (relative)", c.name, c.rule.Degree, d, e)
			}
		}
		// The test can fail: one or two degrees above, some monomial is wrong.
		if e := max(maxMonomialError(c.rule, c.rule.Degree+1), maxMonomialError(c.rule, c.rule.Degree+2)); e < 1e-6 {
			t.Errorf("%s degree %d: also exact above its degree (%.2e), the check is blind", c.name, c.rule.Degree, e)
		}
	}
}

// docs/checks.md item 16: Dunavant (1985), degree 5, 7 points.
func TestDunavantDegree5PublishedValues(t *testing.T) {
	r, _ := Dunavant(5)
	want := []struct{ w, a float64 }{
		{0.225, 1.0 / 3},
		{0.132394152788506, 0.470142064105115},
		{0.125939180544827, 0.101286507323456},
	}
	for _, o := range want {
		found := 0
		for q, p := range r.Points {
			// A point of the orbit (a, a, 1 − 2a) has two barycentric
			// coordinates equal to a: (1 − x − y, x, y).
			b := [3]float64{1 - p[0] - p[1], p[0], p[1]}
			n := 0
			for _, v := range b {
				if math.Abs(v-o.a) < 1e-14 {
					n++
				}
			}
			if n >= 2 && math.Abs(2*r.Weights[q]-o.w) < 1e-15 {
				found++
			}
		}
		if wantN := map[bool]int{true: 1, false: 3}[o.a == 1.0/3]; found != wantN {
			t.Errorf("orbit a=%v w=%v: found %d points, want %d", o.a, o.w, found, wantN)
		}
	}
}

func TestLineRule(t *testing.T) {
	for _, d := range []int{0, 1, 2, 5, 9, 16} {
		r := Line(d)
		if r.Degree < d {
			t.Fatalf("Line(%d) has degree %d", d, r.Degree)
		}
		for k := 0; k <= r.Degree+1; k++ {
			s := 0.0
			for q, p := range r.Points {
				s += r.Weights[q] * math.Pow(p[0], float64(k))
			}
			err := math.Abs(s - 1/float64(k+1))
			if k <= r.Degree && err > 1e-14 {
				t.Errorf("Line(%d): ∫x^%d off by %.2e", d, k, err)
			}
			if k == r.Degree+1 && err < 1e-13 {
				t.Errorf("Line(%d): exact at degree %d, beyond Gauss (2n−1)", d, k)
			}
		}
	}
}

func TestDunavantRejectsUnknownDegree(t *testing.T) {
	for _, d := range []int{0, 9, -1} {
		if _, err := Dunavant(d); err == nil {
			t.Errorf("Dunavant(%d): want an error", d)
		}
	}
	if r := Triangle(11); r.Degree < 11 {
		t.Errorf("Triangle(11) has degree %d", r.Degree)
	}
}
