package problem

import (
	"fmt"
	"math"
	"testing"

	"gapbook/convex"
)

// Manufacture against closed forms: docs/checks.md item 9 (the 1-D profile with
// −(|u'|^{p−2}u')' = 1, and the disk solution with −Δ_p u = 1 in 2-D) and
// item 12 (u = |x|^a, −Δ_p u = −a^{p−1}((a−1)(p−1) + n − 1)|x|^{(a−1)(p−1)−1}),
// both [D]; and ∂_t u for a time-dependent formula.
func TestManufactureClosedForms(t *testing.T) {
	type point struct{ x, y, t float64 }
	pts := []point{{0.1, 0, 0}, {0.3, 0.2, 0}, {0.8, -0.4, 0}, {0.55, 0.9, 0}}
	for _, p := range []float64{1.5, 2, 3, 4} {
		q := p / (p - 1)
		G, _ := convex.Power(p)
		const a = 2.5
		cases := []struct {
			name, src string
			f         func(x, y float64) float64
			oneD      bool
		}{
			{"interval", fmt.Sprintf("(%[1]g - 1)/%[1]g * (0.5^%[2]g - abs(x - 0.5)^%[2]g)", p, q), func(x, y float64) float64 { return 1 }, true},
			{"disk", fmt.Sprintf("(%[1]g - 1)/%[1]g * 2^(-1/(%[1]g - 1)) * (1 - (x^2 + y^2)^(%[2]g/2))", p, q), func(x, y float64) float64 { return 1 }, false},
			{"power", fmt.Sprintf("(x^2 + y^2)^(%g/2)", a), func(x, y float64) float64 {
				return -math.Pow(a, p-1) * ((a-1)*(p-1) + 1) * math.Pow(math.Hypot(x, y), (a-1)*(p-1)-1)
			}, false},
		}
		for _, c := range cases {
			m, err := Manufacture(c.src, G)
			if err != nil {
				t.Fatal(err)
			}
			for _, pt := range pts {
				y := pt.y
				if c.oneD {
					y = 0
				}
				got, want := m.Source(pt.x, y, 0), c.f(pt.x, y)
				if math.Abs(got-want) > 1e-12*math.Max(1, math.Abs(want)) {
					t.Errorf("p=%g %s at (%g, %g): f = %.15g, want %.15g", p, c.name, pt.x, y, got, want)
				}
			}
		}
	}
	// Evolution: f = ∂_t u − div ∂G(∇u) with u = e^{−t} sin(πx) for α = 2 is
	// (π² − 1) e^{−t} sin(πx).
	G, _ := convex.Power(2)
	m, _ := Manufacture("exp(-t)*sin(pi*x)", G)
	for _, pt := range pts {
		want := (math.Pi*math.Pi - 1) * math.Exp(-0.7) * math.Sin(math.Pi*pt.x)
		if got := m.Source(pt.x, pt.y, 0.7); math.Abs(got-want) > 1e-13 {
			t.Errorf("heat source at %v: %g, want %g", pt, got, want)
		}
	}
}

// At ∇u = 0: growth above 2 gives f = ∂_t u exactly, growth below 2 a finite
// value of the sign of the singularity −div ∂G ~ −|∇u|^{α−2}Δu.
func TestManufactureCriticalPoint(t *testing.T) {
	G3, _ := convex.Power(3)
	m, _ := Manufacture("x^2 + y^2 + t", G3)
	if f := m.Source(0, 0, 0); f != 1 {
		t.Errorf("α = 3 at ∇u = 0: f = %g, want ∂_t u = 1", f)
	}
	G15, _ := convex.Power(1.5)
	m, _ = Manufacture("x^2 + y^2", G15)
	if f := m.Source(0, 0, 0); !(f < -1e3) || math.IsInf(f, 0) {
		t.Errorf("α = 1.5 at ∇u = 0: f = %g, want a large finite negative value", f)
	}
	if _, err := Manufacture("sin(z)", G3); err == nil {
		t.Error("unknown variable accepted")
	}
}
