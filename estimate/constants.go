package estimate

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// Constant is a domain constant with its label and the method behind it.
type Constant struct {
	Value  float64
	Label  convex.Label
	Method string
}

// LiuConstant is the bound 0.1893 of the Crouzeix–Raviart interpolation
// constant in Liu's guaranteed lower eigenvalue bound (Liu, Appl. Math.
// Comput. 267 (2015); docs/checks.md item 4).
const LiuConstant = 0.1893

// WidthConstant returns the guaranteed Friedrichs constant of the width
// bound ℓ/((α − 1)^{1/α} π_α), ℓ = mesh.MinWidth (docs/math.md §6; sharp on an
// interval, docs/checks.md item 1).
func WidthConstant(m *mesh.Mesh, alpha float64) (Constant, error) {
	if m == nil || !(alpha > 1) || math.IsInf(alpha, 0) {
		return Constant{}, fmt.Errorf("friedrichs constant: need a mesh and a finite α > 1, got α = %g", alpha)
	}
	w := m.MinWidth()
	if !(w > 0) {
		return Constant{}, errors.New("friedrichs constant: the domain has zero width")
	}
	return Constant{Value: convex.FriedrichsWidth(alpha, w), Label: convex.Guaranteed,
		Method: fmt.Sprintf("width bound, width %.6g", w)}, nil
}

// EigenBracket brackets the first Dirichlet eigenvalue λ₁ of −Δ on a
// polygon: Lower ≤ λ₁ ≤ Upper.
type EigenBracket struct {
	// Lower is Liu's bound λ_CR/(1 + (0.1893 h)² λ_CR) with λ_CR replaced by
	// the guaranteed lower end Value − Radius of the computed
	// Crouzeix–Raviart eigenvalue (the bound increases in λ_CR).
	Lower float64
	// Upper is the conforming P1 eigenvalue (Rayleigh–Ritz: an upper bound).
	Upper float64
	// CR is the computed Crouzeix–Raviart eigenvalue, H the mesh size.
	CR, H float64
}

// FirstEigenvalue brackets the first Dirichlet Laplace eigenvalue of the
// polygon meshed by m (2-D) with Crouzeix–Raviart (guaranteed lower bound,
// Liu 2015; Carstensen & Gedicke 2014 for the form) and P1 (upper bound).
// The lower bound assumes the Krylov–Weinstein interval of the computed CR
// eigenvalue holds the smallest one, i.e. inverse iteration converged to
// the first eigenpair (a positive start vector is not orthogonal to it).
func FirstEigenvalue(ctx context.Context, m *mesh.Mesh) (EigenBracket, error) {
	if m == nil || m.Dim != 2 {
		return EigenBracket{}, errors.New("eigenvalue bracket: need a 2-D mesh (in 1-D the width bound is sharp)")
	}
	cr, err := fem.NewCR(m)
	if err != nil {
		return EigenBracket{}, fmt.Errorf("eigenvalue bracket: %w", err)
	}
	ec, err := cr.FirstEigenvalue(ctx)
	if err != nil {
		return EigenBracket{}, fmt.Errorf("eigenvalue bracket: %w", err)
	}
	p1, err := fem.NewP1(m)
	if err != nil {
		return EigenBracket{}, fmt.Errorf("eigenvalue bracket: %w", err)
	}
	ep, err := p1.FirstEigenvalue(ctx)
	if err != nil {
		return EigenBracket{}, fmt.Errorf("eigenvalue bracket: %w", err)
	}
	h := m.MaxH()
	lcr := ec.Value - ec.Radius
	if !(lcr > 0) {
		return EigenBracket{}, fmt.Errorf("eigenvalue bracket: the CR eigenvalue %g ± %g is not resolved; refine the mesh", ec.Value, ec.Radius)
	}
	ch := LiuConstant * h
	return EigenBracket{Lower: lcr / (1 + ch*ch*lcr), Upper: ep.Value, CR: ec.Value, H: h}, nil
}

// FriedrichsConstant returns the best guaranteed C_F,α of the domain meshed
// by m: the width bound, and for α = 2 on a polygon also λ₁^{-1/2} from
// the guaranteed lower eigenvalue bound of FirstEigenvalue, whichever is
// smaller (docs/math.md §6).
func FriedrichsConstant(ctx context.Context, m *mesh.Mesh, alpha float64) (Constant, error) {
	c, err := WidthConstant(m, alpha)
	if err != nil || alpha != 2 || m.Dim != 2 {
		return c, err
	}
	b, err := FirstEigenvalue(ctx, m)
	if err != nil {
		return c, err
	}
	if e := 1 / math.Sqrt(b.Lower); e < c.Value {
		c = Constant{Value: e, Label: convex.Guaranteed,
			Method: fmt.Sprintf("Crouzeix–Raviart lower eigenvalue bound λ₁ ≥ %.8g (h = %.4g)", b.Lower, b.H)}
	}
	return c, nil
}

// AlphaEigenvalue estimates the first Dirichlet eigenvalue
// λ_α = min ∫|∇w|^α / ∫|w|^α of the α-Laplacian on the P1 space s by the
// inverse power method (Biezuner, Ercole & Martins, J. Comput. Appl. Math.
// 2009): w ← z/‖z‖_α with −Δ_α z = |w|^{α−2}w, each step a convex
// minimisation solved by damped Newton with SGS-preconditioned CG. It
// returns the Rayleigh quotient and C = λ_α^{−1/α} labelled Estimate: a
// discrete eigenvalue is an upper bound of λ_α, the wrong side for a
// guaranteed constant.
func AlphaEigenvalue(ctx context.Context, s *fem.P1, alpha float64) (float64, Constant, error) {
	if s == nil || s.NumFree() == 0 {
		return 0, Constant{}, errors.New("α-eigenvalue: need a P1 space with interior nodes; refine the mesh")
	}
	G, err := convex.Power(alpha)
	if err != nil {
		return 0, Constant{}, fmt.Errorf("α-eigenvalue: %w", err)
	}
	n, nc := s.NumNodes(), s.Mesh.NumCells()
	w, z := make([]float64, n), make([]float64, n)
	for _, i := range s.FreeNodes {
		w[i] = 1
	}
	rule := s.Rule(6)
	dim := s.Mesh.Dim
	// pointwise visits every quadrature point with the value of u there.
	pointwise := func(u []float64, visit func(k int, lam [3]float64, wt, val float64)) {
		for k, c := range s.Mesh.Cells {
			for q, pt := range rule.Points {
				lam, scale := cellPoint(dim, pt)
				val := 0.0
				for a := range dim + 1 {
					val += lam[a] * u[c[a]]
				}
				visit(k, lam, rule.Weights[q]*scale*s.Area[k], val)
			}
		}
	}
	normA := func(u []float64) float64 {
		var t float64
		pointwise(u, func(_ int, _ [3]float64, wt, val float64) { t += wt * math.Pow(math.Abs(val), alpha) })
		return math.Pow(t, 1/alpha)
	}
	grad := make([][2]float64, nc)
	gradEnergy := func(u []float64) float64 {
		s.Gradient(u, grad)
		var t float64
		for k, g := range grad {
			t += s.Area[k] * math.Pow(math.Hypot(g[0], g[1]), alpha)
		}
		return t
	}
	scale := func(u []float64, f float64) {
		for i := range u {
			u[i] *= f
		}
	}
	scale(w, 1/normA(w))
	lam := gradEnergy(w)
	nf := s.NumFree()
	b, g, d, free := make([]float64, n), make([]float64, nf), make([]float64, nf), make([]float64, nf)
	coef := make([][3]float64, nc)
	a := s.NewMatrix()
	trial := make([]float64, n)
	energy := func(u []float64) float64 {
		e := gradEnergy(u) / alpha
		for i := range u {
			e -= b[i] * u[i]
		}
		return e
	}
	for outer := 0; outer < 200; outer++ {
		if err := ctx.Err(); err != nil {
			return 0, Constant{}, err
		}
		clear(b)
		pointwise(w, func(k int, l [3]float64, wt, val float64) {
			f := wt * math.Pow(math.Abs(val), alpha-2) * val
			for i, node := range s.Mesh.Cells[k][:dim+1] {
				b[node] += f * l[i]
			}
		})
		copy(z, w)
		scale(z, math.Pow(lam, -1/(alpha-1)))
		for it := 0; it < 60; it++ {
			s.Gradient(z, grad)
			sigma := make([][2]float64, nc)
			var gmax float64
			for k, gk := range grad {
				sigma[k] = convex.Flux(G, gk)
				gmax = math.Max(gmax, math.Hypot(gk[0], gk[1]))
			}
			full := make([]float64, n)
			s.FluxLoad(sigma, full)
			for i, node := range s.FreeNodes {
				g[i] = full[node] - b[node]
			}
			for k, gk := range grad {
				coef[k] = convex.Hessian(G, gk, 1e-6*gmax)
			}
			if err := s.Stiffness(coef, a); err != nil {
				return 0, Constant{}, err
			}
			pre, err := fem.NewSGS(a)
			if err != nil {
				return 0, Constant{}, err
			}
			clear(d)
			if _, err := fem.PCG(ctx, a, pre, g, d, 1e-10, 10*nf+100); err != nil {
				return 0, Constant{}, fmt.Errorf("α-eigenvalue: inner solve: %w", err)
			}
			dec := 0.0
			for i := range g {
				dec += g[i] * d[i]
			}
			e0 := energy(z)
			step := 1.0
			for ; step > 1e-8; step /= 2 {
				copy(trial, z)
				s.ToFree(z, free)
				for i := range free {
					free[i] -= step * d[i]
				}
				s.FromFree(free, trial)
				if energy(trial) <= e0-1e-4*step*dec || step == 1 && energy(trial) <= e0 {
					break
				}
			}
			copy(z, trial)
			if dec <= 1e-22*math.Max(1, math.Abs(e0)) || math.Abs(dec) < 1e-13*math.Abs(e0) {
				break
			}
		}
		scale(z, 1/normA(z))
		w, z = z, w
		next := gradEnergy(w)
		done := math.Abs(next-lam) <= 1e-11*next
		lam = next
		if done {
			return lam, Constant{Value: math.Pow(lam, -1/alpha), Label: convex.Estimate,
				Method: fmt.Sprintf("P1 inverse power iteration, %d steps", outer+1)}, nil
		}
	}
	return lam, Constant{}, fmt.Errorf("α-eigenvalue: inverse power iteration did not settle in 200 steps (last %g)", lam)
}
