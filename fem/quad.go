package fem

import (
	"fmt"

	"gonum.org/v1/gonum/integrate/quad"
)

// Rule is a quadrature rule on a reference cell: the unit interval [0, 1]
// (points (x, 0), weights summing to 1) or the reference triangle with
// vertices (0, 0), (1, 0), (0, 1) (weights summing to 1/2). It integrates
// polynomials of total degree ≤ Degree exactly.
type Rule struct {
	Degree  int
	Points  [][2]float64
	Weights []float64
}

// Len returns the number of points.
func (r Rule) Len() int { return len(r.Weights) }

// Gauss returns the n-point Gauss–Legendre nodes and weights on [a, b]
// (exact to degree 2n−1), computed by gonum's quad.Legendre (Bogaert's
// iteration-free method, SIAM J. Sci. Comput. 36 (2014)).
func Gauss(n int, a, b float64) (x, w []float64) {
	x, w = make([]float64, n), make([]float64, n)
	if n > 0 {
		quad.Legendre{}.FixedLocations(x, w, a, b)
	}
	return x, w
}

// Line returns the Gauss–Legendre rule on [0, 1] exact to the given degree
// (at least 1 point).
func Line(degree int) Rule {
	n := max(1, (degree+2)/2)
	x, w := Gauss(n, 0, 1)
	r := Rule{Degree: 2*n - 1, Points: make([][2]float64, n), Weights: w}
	for i := range x {
		r.Points[i] = [2]float64{x[i], 0}
	}
	return r
}

// Triangle returns a rule on the reference triangle exact to the given
// degree: a Dunavant rule for degree ≤ 8 (few points), the collapsed Gauss
// rule above.
func Triangle(degree int) Rule {
	if r, err := Dunavant(max(degree, 1)); err == nil {
		return r
	}
	return Collapsed(degree)
}

// Collapsed returns the conical product (Duffy) rule on the reference
// triangle exact to the given degree: the square [0, 1]² with n × n Gauss
// points mapped by (u, v) ↦ (u, v(1 − u)), Jacobian 1 − u (Stroud,
// Approximate Calculation of Multiple Integrals, 1971, §2.7). A monomial
// x^i y^j becomes u^i (1 − u)^{j+1} v^j, so n = ⌈(degree + 2)/2⌉ points per
// direction suffice.
func Collapsed(degree int) Rule {
	n := max(1, (degree+3)/2)
	x, w := Gauss(n, 0, 1)
	r := Rule{Degree: 2*n - 2, Points: make([][2]float64, 0, n*n), Weights: make([]float64, 0, n*n)}
	for i := range n {
		for j := range n {
			u, v := x[i], x[j]
			r.Points = append(r.Points, [2]float64{u, v * (1 - u)})
			r.Weights = append(r.Weights, w[i]*w[j]*(1-u))
		}
	}
	return r
}

// Dunavant returns the symmetric triangle rule of Dunavant, "High degree
// efficient symmetrical Gaussian quadrature rules for the triangle",
// Int. J. Numer. Methods Eng. 21 (1985) 1129–1148, for degrees 1 to 8
// (1, 3, 4, 6, 7, 12, 13, 16 points). The degree-3 and degree-7 rules have
// a negative weight, as published.
func Dunavant(degree int) (Rule, error) {
	if degree < 1 || degree > len(dunavant) {
		return Rule{}, fmt.Errorf("dunavant rule of degree %d does not exist here; degrees 1 to %d are available (use Collapsed for higher)", degree, len(dunavant))
	}
	r := Rule{Degree: degree}
	for _, o := range dunavant[degree-1] {
		a, b := o.a, o.b
		var perms [][3]float64
		switch o.n {
		case 1:
			perms = [][3]float64{{third, third, third}}
		case 3:
			b = (1 - a) / 2
			perms = [][3]float64{{a, b, b}, {b, a, b}, {b, b, a}}
		default:
			c := 1 - a - b
			perms = [][3]float64{{a, b, c}, {a, c, b}, {b, a, c}, {b, c, a}, {c, a, b}, {c, b, a}}
		}
		for _, p := range perms {
			// Reference coordinates are the barycentric weights of vertices 1, 2.
			r.Points = append(r.Points, [2]float64{p[1], p[2]})
			r.Weights = append(r.Weights, o.w/2)
		}
	}
	return r, nil
}

// orbit is a symmetry orbit of a rule: n = 1 (centroid), 3 (the
// permutations of (a, b, b), b = (1 − a)/2) or 6 (of (a, b, 1 − a − b)).
type orbit struct {
	n    int
	w    float64 // weight of each point, normalised so that all sum to 1
	a, b float64
}

const third = 1.0 / 3

// dunavant holds the published tables (weights normalised to total 1).
var dunavant = [][]orbit{
	{{1, 1, 0, 0}},
	{{3, third, 0.666666666666667, 0}},
	{
		{1, -0.5625, 0, 0},
		{3, 0.520833333333333, 0.6, 0},
	},
	{
		{3, 0.223381589678011, 0.108103018168070, 0},
		{3, 0.109951743655322, 0.816847572980459, 0},
	},
	{
		{1, 0.225, 0, 0},
		{3, 0.132394152788506, 0.059715871789770, 0},
		{3, 0.125939180544827, 0.797426985353087, 0},
	},
	{
		{3, 0.116786275726379, 0.501426509658179, 0},
		{3, 0.050844906370207, 0.873821971016996, 0},
		{6, 0.082851075618374, 0.053145049844817, 0.310352451033784},
	},
	{
		{1, -0.149570044467682, 0, 0},
		{3, 0.175615257433208, 0.479308067841920, 0},
		{3, 0.053347235608838, 0.869739794195568, 0},
		{6, 0.077113760890257, 0.048690315425316, 0.312865496004874},
	},
	{
		{1, 0.144315607677787, 0, 0},
		{3, 0.095091634267285, 0.081414823414554, 0},
		{3, 0.103217370534718, 0.658861384496480, 0},
		{3, 0.032458497623198, 0.898905543365938, 0},
		{6, 0.027230314174435, 0.008394777409958, 0.263112829634638},
	},
}
