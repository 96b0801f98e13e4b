package problem

import (
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/expr"
)

// Manufactured is an exact solution u(x, y, t) given as a formula, with the
// source and data it implies for a potential G:
//
//	f = ∂_t u − div ∂G(∇u) = ∂_t u − D²G(∇u) : ∇²u,
//
// the second form by the chain rule, with the first and second derivatives
// of u by automatic differentiation (expr.Eval2First: the gradient in x, y,
// t and the Hessian in space) and the exact Hessian of G
// (no regularisation). For a steady problem ∂_t u = 0 unless the formula
// uses t. In 1-D the formula is evaluated at y = 0.
//
// Where ∇u = 0 exactly: for growth above 2 (g”(0) = 0) D²G(0) = 0 and
// f = ∂_t u, the continuous limit. For growth below 2 (g”(0) = ∞) f is
// unbounded near such points (like |∇u|^{α−2}, an integrable singularity
// when ∇²u ≠ 0); at the point itself Source uses D²G frozen at radius
// 1e-12 (convex.Hessian), a finite value of the right sign, so quadrature
// stays finite. Quadrature of such f converges slowly: prefer exact
// solutions whose gradient does not vanish.
//
// Methods keep scratch space: one Manufactured must not be used from several
// goroutines at once (use Clone).
type Manufactured struct {
	G          convex.Potential
	u          *expr.Formula
	singular   bool
	p          [3]float64
	grad, hess []float64
}

// Manufacture parses the exact solution src in the variables x, y, t for the
// potential G.
func Manufacture(src string, G convex.Potential) (*Manufactured, error) {
	if G == nil {
		return nil, fmt.Errorf("exact solution: no potential")
	}
	u, err := expr.Parse(src, "x", "y", "t")
	if err != nil {
		return nil, fmt.Errorf("exact solution %q: %w (allowed names: x, y, t)", src, err)
	}
	_, _, g2 := G.Profile(0)
	return &Manufactured{G: G, u: u, singular: math.IsInf(g2, 1), grad: make([]float64, 3), hess: make([]float64, 4)}, nil
}

// Clone returns a copy with its own scratch space.
func (m *Manufactured) Clone() *Manufactured {
	c := *m
	c.u = m.u.Clone()
	c.grad, c.hess = make([]float64, 3), make([]float64, 4)
	return &c
}

// U returns u(x, y, t) (the Dirichlet data and initial value).
func (m *Manufactured) U(x, y, t float64) float64 {
	m.p = [3]float64{x, y, t}
	return m.u.Eval(m.p[:])
}

// Grad returns ∇u(x, y, t) in space.
func (m *Manufactured) Grad(x, y, t float64) (gx, gy float64) {
	m.p = [3]float64{x, y, t}
	m.u.Eval2First(m.p[:], m.grad, m.hess, 0)
	return m.grad[0], m.grad[1]
}

// Source returns f(x, y, t) = ∂_t u − D²G(∇u) : ∇²u.
func (m *Manufactured) Source(x, y, t float64) float64 {
	m.p = [3]float64{x, y, t}
	m.u.Eval2First(m.p[:], m.grad, m.hess, 2)
	xi := [2]float64{m.grad[0], m.grad[1]}
	reg := 0.0
	if m.singular && xi == [2]float64{} {
		reg = 1e-12
	}
	d := convex.Hessian(m.G, xi, reg)
	h := m.hess // row-major 2×2 over (x, y)
	return m.grad[2] - (d[0]*h[0] + 2*d[1]*h[1] + d[2]*h[3])
}

// At returns the source, Dirichlet data and exact gradient at time t as
// functions of (x, y), in the form the solver and the error integrals take.
func (m *Manufactured) At(t float64) (f, u func(x, y float64) float64, grad func(x, y float64) (float64, float64)) {
	f = func(x, y float64) float64 { return m.Source(x, y, t) }
	u = func(x, y float64) float64 { return m.U(x, y, t) }
	grad = func(x, y float64) (float64, float64) { return m.Grad(x, y, t) }
	return f, u, grad
}
