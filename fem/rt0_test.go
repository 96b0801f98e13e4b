package fem

import (
	"math"
	"math/rand/v2"
	"testing"
)

func TestRT0CommutingDiagram(t *testing.T) {
	// A smooth non-polynomial field; div f = 3 cos(3x) eʸ + x² cos(y)·... below.
	f := func(x, y float64) (float64, float64) {
		return math.Sin(3*x) * math.Exp(y), x * x * math.Sin(y)
	}
	divf := func(x, y float64) float64 {
		return 3*math.Cos(3*x)*math.Exp(y) + x*x*math.Cos(y)
	}
	m := hierarchy(t, 2, 3, 1)
	r, err := NewRT0(m)
	if err != nil {
		t.Fatal(err)
	}
	coef := make([]float64, r.NumEdges())
	r.Interpolate(f, 12, coef)
	div := make([]float64, m.NumCells())
	r.Div(coef, div)
	// div Π f = Π₀ div f (Brezzi & Fortin 1991, Prop. III.3.7): compare with
	// the cell mean of div f by a degree-12 rule.
	p1, _ := NewP1(m)
	rule := Triangle(12)
	for k := range div {
		mean := 0.0
		for q, p := range rule.Points {
			x, y, _, scale := p1.mapPoint(k, p)
			mean += rule.Weights[q] * scale * divf(x, y)
		}
		mean /= r.Area[k]
		if math.Abs(div[k]-mean) > 1e-12 {
			t.Fatalf("cell %d: div of interpolant %.15g, mean divergence %.15g", k, div[k], mean)
		}
	}
}

func TestRT0ReproducesItsFields(t *testing.T) {
	// a + b x is the whole RT0 space on a cell; globally it is RT0 too.
	field := func(x, y float64) (float64, float64) { return 0.3 - 1.7*x, -0.8 - 1.7*y }
	m := hierarchy(t, 2, 2, 2)
	r, _ := NewRT0(m)
	coef := make([]float64, r.NumEdges())
	r.Interpolate(field, 1, coef)
	rng := rand.New(rand.NewPCG(7, 8))
	for k, c := range m.Cells {
		for range 3 {
			// A random point in the cell.
			u, v := rng.Float64(), rng.Float64()
			if u+v > 1 {
				u, v = 1-u, 1-v
			}
			p0, p1, p2 := m.Nodes[c[0]], m.Nodes[c[1]], m.Nodes[c[2]]
			x, y := p0.X+u*(p1.X-p0.X)+v*(p2.X-p0.X), p0.Y+u*(p1.Y-p0.Y)+v*(p2.Y-p0.Y)
			gx, gy := r.Eval(k, coef, x, y)
			wx, wy := field(x, y)
			if math.Hypot(gx-wx, gy-wy) > 1e-12 {
				t.Fatalf("cell %d at (%g, %g): %g, %g; want %g, %g", k, x, y, gx, gy, wx, wy)
			}
		}
	}
	// Π of an RT0 field is itself: interpolate the field evaluated
	// cell by cell, with random edge fluxes.
	rnd := make([]float64, r.NumEdges())
	for i := range rnd {
		rnd[i] = rng.Float64() - 0.5
	}
	// The normal component of Eval on either neighbouring cell reproduces
	// the flux: ∫_e ψ·n_e = coefficient.
	for k := range m.Cells {
		for i := range 3 {
			e := r.CellEdges[k][i]
			a, b := m.Nodes[r.Edges[e][0]], m.Nodes[r.Edges[e][1]]
			nx, ny := r.Normal(m, int(e))
			flux := 0.0
			x, w := Gauss(2, 0, 1)
			for j := range x {
				vx, vy := r.Eval(k, rnd, a.X+x[j]*(b.X-a.X), a.Y+x[j]*(b.Y-a.Y))
				flux += w[j] * (vx*nx + vy*ny) * r.Length[e]
			}
			if math.Abs(flux-rnd[e]) > 1e-12 {
				t.Fatalf("cell %d edge %d: flux %g, coefficient %g", k, e, flux, rnd[e])
			}
		}
	}
}

func TestRT0MassAndDivergence(t *testing.T) {
	m := hierarchy(t, 2, 2, 1)
	r, _ := NewRT0(m)
	p1, _ := NewP1(m)
	rng := rand.New(rand.NewPCG(9, 10))
	coef := make([]float64, r.NumEdges())
	for i := range coef {
		coef[i] = rng.Float64() - 0.5
	}
	w := randomSPD(rng, m.NumCells())
	a := r.NewMatrix()
	if err := r.Mass(w, a); err != nil {
		t.Fatal(err)
	}
	mc := make([]float64, len(coef))
	a.MulVec(mc, coef)
	// yᵀ M y = ∫ y · W y by a degree-2 Dunavant rule on Eval.
	want := 0.0
	rule := Triangle(2)
	for k := range m.Cells {
		for q, p := range rule.Points {
			x, y, _, scale := p1.mapPoint(k, p)
			vx, vy := r.Eval(k, coef, x, y)
			want += rule.Weights[q] * scale * (vx*(w[k][0]*vx+w[k][1]*vy) + vy*(w[k][1]*vx+w[k][2]*vy))
		}
	}
	if got := dot(coef, mc); math.Abs(got-want) > 1e-12*want {
		t.Errorf("yᵀMy = %.15g, quadrature %.15g", got, want)
	}
	// qᵀ B y = ∫ q div y.
	b := r.DivMatrix()
	q := make([]float64, m.NumCells())
	for i := range q {
		q[i] = rng.Float64()
	}
	div := make([]float64, m.NumCells())
	r.Div(coef, div)
	by := make([]float64, m.NumCells())
	b.MulVec(by, coef)
	want = 0
	for k := range q {
		want += q[k] * div[k] * r.Area[k]
	}
	if got := dot(q, by); math.Abs(got-want) > 1e-13 {
		t.Errorf("qᵀBy = %.15g, ∫ q div y = %.15g", got, want)
	}
}
