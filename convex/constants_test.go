package convex

import (
	"fmt"
	"math"
	"testing"
)

// TestFriedrichsTable: λ_p = (p − 1)(π_p/L)^p and C = L/((p − 1)^{1/p} π_p) on
// (0, 1) (Bognár & Došlý, Abstract and Applied Analysis 2010, Art. 123975,
// eqs. (1.1)–(1.2); values of docs/checks.md item 1 [N]); C(p) = C(p').
func TestFriedrichsTable(t *testing.T) {
	for _, c := range []struct{ p, lambda, C float64 }{
		{1.5, 5.3187180764, 0.3281925257},
		{2, 9.8696044011, 0.3183098862},
		{3, 28.2887619760, 0.3281925257},
		{4, 73.0568182755, 0.3420462327},
	} {
		C := FriedrichsWidth(c.p, 1)
		if math.Abs(C-c.C) > 1e-10 {
			t.Errorf("p=%g: C = %.12g, table %.10g", c.p, C, c.C)
		}
		// ‖w‖_p ≤ C‖w'‖_p is sharp for the first eigenfunction: λ_p = C^{−p}.
		if l := math.Pow(C, -c.p); math.Abs(l-c.lambda) > 1e-9*c.lambda {
			t.Errorf("p=%g: C^{-p} = %.12g, λ_p table %.10g", c.p, l, c.lambda)
		}
		if l := (c.p - 1) * math.Pow(PiAlpha(c.p), c.p); math.Abs(l-c.lambda) > 1e-9*c.lambda {
			t.Errorf("p=%g: (p−1)π_p^p = %.12g, λ_p table %.10g", c.p, l, c.lambda)
		}
		pc := c.p / (c.p - 1)
		if d := FriedrichsWidth(pc, 1); math.Abs(d-C) > 1e-14 {
			t.Errorf("C(%g) = %.17g ≠ C(%g) = %.17g", c.p, C, pc, d)
		}
		if d := PoincareConvex(c.p, 2.5); math.Abs(d-2.5*C) > 1e-14 {
			t.Errorf("PoincareConvex(%g, 2.5) = %g, want 2.5 C = %g", c.p, d, 2.5*C)
		}
	}
	// Payne–Weinberger: d/π at α = 2 (docs/checks.md item 5 [M]); π_2 = π.
	if got := PoincareConvex(2, 1); math.Abs(got-1/math.Pi) > 1e-16 {
		t.Errorf("PoincareConvex(2, 1) = %.17g, want 1/π", got)
	}
}

// TestPiAlphaIntegral: π_p = 2∫_0^1 (1 − s^p)^{−1/p} ds, the half period of
// the generalised sine (definition, from memory, hence checked here by
// quadrature). The substitution s = 1 − w^k, k = 2p/(p − 1), turns the
// endpoint singularity (1 − s^p ≈ p(1 − s)) into a factor ~w.
func TestPiAlphaIntegral(t *testing.T) {
	for _, p := range []float64{1.3, 1.5, 2, 3, 4, 10} {
		k := 2 * p / (p - 1)
		var sum float64
		const n = 20000
		for i := 0; i < n; i++ {
			w := (float64(i) + 0.5) / n
			oneMinus := -math.Expm1(p * math.Log1p(-math.Pow(w, k))) // 1 − s^p
			sum += k * math.Pow(w, k-1) * math.Pow(oneMinus, -1/p) / n
		}
		got := 2 * sum
		if want := PiAlpha(p); math.Abs(got-want) > 1e-6*want {
			t.Errorf("p=%g: 2∫(1−s^p)^{−1/p} = %.10g, PiAlpha %.10g", p, got, want)
		}
	}
}

// ExamplePower shows the compound functional staying accurate next to the
// graph of ∂G, where G + G* − ξ·η has no digits left.
func ExamplePower() {
	G, err := Power(1.5)
	if err != nil {
		fmt.Println(err)
		return
	}
	xi := [2]float64{0.6, 0.8}
	eta := Flux(G, xi)
	eta[0] *= 1 + 1e-7
	// ½δᵀD²G*(η)δ = 2.448e-15 for δ = (6e-8, 0).
	fmt.Printf("D_G = %.6e\n", Gap(G, xi, eta))
	fmt.Println(G, G.Modulus().Label)
	_, err = Power(0.5)
	fmt.Println(err)
	// Output:
	// D_G = 2.448000e-15
	// power(p=1.5) guaranteed
	// power potential: growth exponent p = 0.5 is not allowed; p must be a finite number > 1
}
