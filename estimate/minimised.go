package estimate

import (
	"context"
	"errors"
	"fmt"
	"math"

	"gonum.org/v1/gonum/optimize"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/problem"
)

// MinimiseOptions configure Minimise.
type MinimiseOptions struct {
	// Friedrichs is C_F,α of the domain (required), as for Estimate.
	Friedrichs Constant
	// Modulus replaces the potential's own modulus, as in Options.
	Modulus *convex.Modulus
	// Rounds is the number of outer rounds (default 2); each costs one
	// Estimate and one inner minimisation.
	Rounds int
	// Iterations bounds the L-BFGS iterations of each inner minimisation
	// (default 30).
	Iterations int
	// Degree is the quadrature degree of the cell integrals, as in
	// Options.Degree (0: DefaultDegree); the inner functional uses the same
	// rule, so its residual means are those of the bounds.
	Degree int
	// Samples are handed to Estimate, as in Options.
	Samples *Samples
}

// Minimised is a flux y* = y0 + z with y0 a given starting flux and z a
// continuous piecewise linear vector field chosen to lower the majorant
// μ̄ of docs/math.md §4 (docs/math.md §5, item 2). It implements Flux.
type Minimised struct {
	start Flux
	// Nodal holds z at every node.
	Nodal [][2]float64
	cells [][3]int32
	div   []float64 // div z, constant on each cell
	dim   int
	// Start and Majorant are μ̄ of the starting flux and of y*;
	// Majorant ≤ Start always.
	Start, Majorant float64
	// Rounds is the number of rounds that lowered μ̄, Evaluations the
	// number of evaluations of the inner functional and its gradient.
	Rounds, Evaluations int
}

// At returns y*(x) = y0(x) + z(x) and div y* at the point of cell k with
// barycentric coordinates lam.
func (m *Minimised) At(k int, lam [3]float64) (y [2]float64, div float64) {
	y, div = m.start.At(k, lam)
	c := &m.cells[k]
	for i := range m.dim + 1 {
		p := &m.Nodal[c[i]]
		y[0] += lam[i] * p[0]
		y[1] += lam[i] * p[1]
	}
	return y, div + m.div[k]
}

// Degree returns the larger of the starting flux's degree and 1.
func (m *Minimised) Degree() int { return max(1, m.start.Degree()) }

// Minimise lowers the majorant μ̄(y*) of v over y* = y0 + z, z a continuous
// piecewise linear vector field (2 unknowns per node), starting from the
// flux y0 (averaged or equilibrated), and returns the result; its majorant
// never exceeds that of y0.
//
// Method. μ̄ is the largest root of μ = D(y*) + R(y*) X(μ) (docs/math.md §4).
// With X̄ = X(μ̄) frozen at the current flux, any y* with
// D(y*) + X̄ R(y*) below the current D + X̄ R = μ̄ has a smaller largest
// root (the root function μ − D − R X(μ) changes sign once, from − to +),
// so each round minimises the convex functional D(y*) + X̄ R_form(y*) for
// the residual form that won at the current flux (R_form ≥ R, equal at the
// start of the round) and recomputes μ̄ by Estimate. This is the
// alternation between y* and θ of docs/math.md §5 written for the root (θ =
// R X'(μ̄) is the Young form's weight at the root), valid for both modulus
// types. The inner problem is solved by L-BFGS (gonum optimize; Nocedal &
// Wright, Numerical Optimization, 2006, §7.2) with D(y*) evaluated as
// ∫ G*(y*) − ∇v·y* (+ the constant ∫ G(∇v)); the reported majorants use
// the cancellation-free Gap of Estimate. For the split form only the cell
// means of the residual depend on z (div z is cellwise constant), so
// R_osc drops out of the inner problem.
//
// Cost: Rounds × (one Estimate + up to about 1.2 × Iterations evaluations
// of a pass over the quadrature points with one G* and ∂G* each), i.e. a
// few tens of bound evaluations: far more than Equilibrate, which is the
// flux to use for sharp bounds; Minimise is offered to improve the
// averaged flux without any global solve, or to trade a little balance of
// an equilibrated flux for a smaller ∫ D_G.
func Minimise(ctx context.Context, s *fem.P1, p *problem.Problem, v []float64, y0 Flux, opt MinimiseOptions) (*Minimised, error) {
	if s == nil || p == nil || p.G == nil || p.SourceAt(p.T0) == nil || y0 == nil {
		return nil, errors.New("minimised flux: need a P1 space, a potential, a source f and a starting flux")
	}
	if len(v) != s.NumNodes() {
		return nil, fmt.Errorf("minimised flux: v has %d values for %d nodes", len(v), s.NumNodes())
	}
	if opt.Rounds < 0 || opt.Iterations < 0 {
		return nil, fmt.Errorf("minimised flux: %d rounds and %d iterations; need 0 or more of each", opt.Rounds, opt.Iterations)
	}
	if opt.Rounds == 0 {
		opt.Rounds = 2
	}
	if opt.Iterations == 0 {
		opt.Iterations = 30
	}
	if opt.Degree <= 0 {
		opt.Degree = DefaultDegree
	}
	m := s.Mesh
	nn, nc, dim := m.NumNodes(), m.NumCells(), m.Dim
	y := &Minimised{start: y0, Nodal: make([][2]float64, nn), cells: m.Cells, div: make([]float64, nc), dim: dim}
	estOpt := Options{Degree: opt.Degree, Friedrichs: opt.Friedrichs, Modulus: opt.Modulus, Samples: opt.Samples}
	res, err := Estimate(s, p, v, y, estOpt)
	if err != nil {
		return nil, fmt.Errorf("minimised flux: %w", err)
	}
	y.Start, y.Majorant = res.Majorant.Value, res.Majorant.Value
	in := newInner(s, p, v, y0, opt.Degree)
	x := make([]float64, dim*nn)
	for range opt.Rounds {
		if err := ctx.Err(); err != nil {
			return nil, fmt.Errorf("minimised flux: stopped: %w", err)
		}
		in.xbar = res.Norm.Value * opt.Friedrichs.Value
		in.split = res.Form == SplitResidual
		prob := optimize.Problem{
			Func: func(x []float64) float64 { return in.eval(x, nil) },
			Grad: func(g, x []float64) { in.eval(x, g) },
		}
		f0 := in.eval(x, nil)
		set := &optimize.Settings{MajorIterations: opt.Iterations,
			Converger: &optimize.FunctionConverge{Relative: 1e-12, Iterations: 10}}
		r, err := optimize.Minimize(prob, append([]float64(nil), x...), set, &optimize.LBFGS{})
		if r == nil || !(r.F < f0) {
			_ = err // a failed line search still leaves the best point found
			break
		}
		saved := append([]float64(nil), x...)
		copy(x, r.X)
		y.setNodal(s, x)
		next, err := Estimate(s, p, v, y, estOpt)
		if err != nil || !(next.Majorant.Value < res.Majorant.Value) {
			copy(x, saved)
			y.setNodal(s, x)
			break
		}
		res = next
		y.Majorant = res.Majorant.Value
		y.Rounds++
	}
	y.Evaluations = in.evals
	return y, nil
}

// setNodal copies the unknowns into z and recomputes div z.
func (y *Minimised) setNodal(s *fem.P1, x []float64) {
	for n := range y.Nodal {
		for d := range y.dim {
			y.Nodal[n][d] = x[y.dim*n+d]
		}
	}
	for k, c := range y.cells {
		var d float64
		for i := range y.dim + 1 {
			for j := range y.dim {
				d += y.Nodal[c[i]][j] * s.Grad[k][i][j]
			}
		}
		y.div[k] = d
	}
}

// inner holds the data of the inner functional at the quadrature points:
// D(y0 + z) + X̄ C_F ‖r‖ (global) or + X̄ C_F ‖Π0 r‖ (split).
type inner struct {
	s     *fem.P1
	G     convex.Potential
	conj  float64
	nq    int
	lam   [][3]float64
	w     []float64    // weights, per cell and point
	y0    [][2]float64 // y0 at the points
	r0    []float64    // f + div y0 at the points
	mean0 []float64    // cell mean of r0
	grad  [][2]float64 // ∇v per cell
	xbar  float64      // X̄ · C_F
	split bool
	evals int
	dr    []float64 // ∂(residual term)/∂(div z) per cell
	divz  []float64
}

func newInner(s *fem.P1, p *problem.Problem, v []float64, y0 Flux, degree int) *inner {
	f := p.SourceAt(p.T0)
	m := s.Mesh
	nc := m.NumCells()
	rule := s.Rule(degree)
	nq := rule.Len()
	alpha := p.G.Growth()
	in := &inner{s: s, G: p.G, conj: alpha / (alpha - 1), nq: nq, lam: make([][3]float64, nq),
		w: make([]float64, nc*nq), y0: make([][2]float64, nc*nq), r0: make([]float64, nc*nq),
		mean0: make([]float64, nc), grad: make([][2]float64, nc), dr: make([]float64, nc),
		divz: make([]float64, nc)}
	s.Gradient(v, in.grad)
	var scale float64
	for q, pt := range rule.Points {
		in.lam[q], scale = cellPoint(m.Dim, pt)
	}
	for k := range nc {
		var wk float64
		for q := range nq {
			i := k*nq + q
			x, yy := physical(s, k, in.lam[q])
			ys, div := y0.At(k, in.lam[q])
			in.w[i] = rule.Weights[q] * scale * s.Area[k]
			in.y0[i] = ys
			in.r0[i] = f(x, yy) + div
			in.mean0[k] += in.w[i] * in.r0[i]
			wk += in.w[i]
		}
		in.mean0[k] /= wk
	}
	return in
}

// eval returns the inner functional at the nodal unknowns x (dim per node)
// and, when g is not nil, its gradient.
func (in *inner) eval(x, g []float64) float64 {
	in.evals++
	s := in.s
	m := s.Mesh
	dim := m.Dim
	nv := dim + 1
	a := in.conj
	if g != nil {
		clear(g)
	}
	var dsum, rsum float64
	for k, c := range m.Cells {
		var dz float64
		for i := range nv {
			for j := range dim {
				dz += x[dim*int(c[i])+j] * s.Grad[k][i][j]
			}
		}
		in.divz[k] = dz
		var rk, dk float64
		if in.split {
			t := in.mean0[k] + dz
			rsum += s.Area[k] * math.Pow(math.Abs(t), a)
			rk = s.Area[k] * math.Pow(math.Abs(t), a-1) * sign(t)
		}
		gv := in.grad[k]
		for q := range in.nq {
			i := k*in.nq + q
			lam := &in.lam[q]
			yq := in.y0[i]
			for n := range nv {
				for j := range dim {
					yq[j] += lam[n] * x[dim*int(c[n])+j]
				}
			}
			w := in.w[i]
			sq := math.Hypot(yq[0], yq[1])
			gs, ds := in.G.Conjugate(sq)
			dk += w * (gs - gv[0]*yq[0] - gv[1]*yq[1])
			if !in.split {
				t := in.r0[i] + dz
				rsum += w * math.Pow(math.Abs(t), a)
				rk += w * math.Pow(math.Abs(t), a-1) * sign(t)
			}
			if g == nil {
				continue
			}
			// ∂/∂y (G*(y) − ∇v·y) = ∂G*(y) − ∇v.
			var e [2]float64
			if sq > 0 {
				e = [2]float64{ds * yq[0] / sq, ds * yq[1] / sq}
			}
			e[0] = w * (e[0] - gv[0])
			e[1] = w * (e[1] - gv[1])
			for n := range nv {
				for j := range dim {
					g[dim*int(c[n])+j] += lam[n] * e[j]
				}
			}
		}
		dsum += dk
		in.dr[k] = rk
	}
	norm := math.Pow(rsum, 1/a)
	f := dsum + in.xbar*norm
	if g == nil || rsum == 0 {
		return f
	}
	// d‖·‖/d(div z_T) = ‖·‖^{1−α'} Σ w |r|^{α'−1} sign r.
	fac := in.xbar * math.Pow(rsum, 1/a-1)
	for k, c := range m.Cells {
		d := fac * in.dr[k]
		for i := range nv {
			for j := range dim {
				g[dim*int(c[i])+j] += d * s.Grad[k][i][j]
			}
		}
	}
	return f
}

func sign(t float64) float64 {
	switch {
	case t > 0:
		return 1
	case t < 0:
		return -1
	}
	return 0
}
