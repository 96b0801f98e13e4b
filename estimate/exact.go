package estimate

import (
	"math"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// ErrorDegree is the exactness degree of the quadrature of true errors
// against an exact solution (docs/math.md §4.5): far above the O(h)
// accuracy of P1 gradients, so the quadrature error does not show in the
// reported digits on usual meshes.
const ErrorDegree = 8

// cellIntegral returns Σ_T ∫_T φ(k, x, y) by the rule of the given degree
// on every cell; the reference weights are rescaled to the cell measure.
func cellIntegral(s *fem.P1, degree int, phi func(k int, x, y float64) float64) []float64 {
	r := s.Rule(degree)
	nq := r.Len()
	pts := make([]mesh.Point, s.Mesh.NumCells()*nq)
	s.QuadPoints(r, pts)
	wsum := 0.0
	for _, w := range r.Weights {
		wsum += w
	}
	out := make([]float64, s.Mesh.NumCells())
	for k := range out {
		acc := 0.0
		for q := range nq {
			p := pts[k*nq+q]
			acc += r.Weights[q] * phi(k, p.X, p.Y)
		}
		out[k] = acc / wsum * s.Area[k]
	}
	return out
}

// GradientError returns ‖∇(u − v)‖_α for the exact gradient grad by
// quadrature of degree ErrorDegree.
func GradientError(s *fem.P1, v []float64, grad func(x, y float64) (float64, float64), alpha float64) float64 {
	gv := make([][2]float64, s.Mesh.NumCells())
	s.Gradient(v, gv)
	per := cellIntegral(s, ErrorDegree, func(k int, x, y float64) float64 {
		gx, gy := grad(x, y)
		return math.Pow(math.Hypot(gx-gv[k][0], gy-gv[k][1]), alpha)
	})
	return math.Pow(sum(per), 1/alpha)
}

// PrimalError returns μ(v) = ∫ D_G(∇v, ∂G(∇u)) = J(v) − J(u), in total and
// per cell, by quadrature of degree ErrorDegree.
func PrimalError(s *fem.P1, G convex.Potential, v []float64, grad func(x, y float64) (float64, float64)) (total float64, cells []float64) {
	gv := make([][2]float64, s.Mesh.NumCells())
	s.Gradient(v, gv)
	cells = cellIntegral(s, ErrorDegree, func(k int, x, y float64) float64 {
		gx, gy := grad(x, y)
		return convex.Gap(G, gv[k], convex.Flux(G, [2]float64{gx, gy}))
	})
	return sum(cells), cells
}

// DualError returns μ*(y*) = ∫ D_G(∇u, y*) by quadrature of the given
// degree (at least ErrorDegree), with y* evaluated through the Flux
// interface.
func DualError(s *fem.P1, G convex.Potential, y Flux, grad func(x, y float64) (float64, float64), degree int) float64 {
	r := s.Rule(max(degree, ErrorDegree))
	wsum := 0.0
	for _, w := range r.Weights {
		wsum += w
	}
	total := 0.0
	for k := range s.Mesh.Cells {
		acc := 0.0
		for q, pt := range r.Points {
			lam, _ := cellPoint(s.Mesh.Dim, pt)
			x, yy := physical(s, k, lam)
			ys, _ := y.At(k, lam)
			gx, gy := grad(x, yy)
			acc += r.Weights[q] * convex.Gap(G, [2]float64{gx, gy}, ys)
		}
		total += acc / wsum * s.Area[k]
	}
	return total
}

// MaxNodalError returns the largest |u − v| at the nodes of m.
func MaxNodalError(m *mesh.Mesh, v []float64, u func(x, y float64) float64) float64 {
	e := 0.0
	for i, q := range m.Nodes {
		e = math.Max(e, math.Abs(u(q.X, q.Y)-v[i]))
	}
	return e
}

func sum(v []float64) float64 {
	t := 0.0
	for _, x := range v {
		t += x
	}
	return t
}
