package expr_test

import (
	"fmt"

	"gapbook/expr"
)

// A source term f(x, y, t) and a custom potential g(t), as a user types them.
func Example() {
	f, err := expr.Parse("sin(pi·x)·sin(pi·y)·exp(−t) + x^2", "x", "y", "t")
	if err != nil {
		fmt.Println(err)
		return
	}
	p := []float64{0.5, 0.5, 0}
	grad, hess := make([]float64, 3), make([]float64, 9)
	v := f.Eval2(p, grad, hess)
	fmt.Printf("f = %.4f, ∂f/∂t = %.4f, ∂²f/∂x² = %.4f\n", v, grad[2], hess[0])

	g := expr.MustParse("abs(t)^3/3", "t")
	g0, g1, g2 := g.Scalar(-2)
	fmt.Printf("g(-2) = %.4f, g' = %.4f, g'' = %.4f\n", g0, g1, g2)

	_, err = expr.Parse("sn(x) + 1", "x", "y", "t")
	fmt.Println(err)
	_, err = expr.Parse("2 * (x + y", "x", "y", "t")
	fmt.Println(err)
	// Output:
	// f = 1.2500, ∂f/∂t = -1.0000, ∂²f/∂x² = -7.8696
	// g(-2) = 2.6667, g' = -4.0000, g'' = 4.0000
	// column 1: unknown function "sn"; functions: sqrt, exp, log, sin, cos, tan, atan, atan2, sinh, cosh, tanh, abs, min, max, pow
	// column 11: expected ")" to close "(" at column 5
}
