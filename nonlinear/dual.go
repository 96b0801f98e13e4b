package nonlinear

import (
	"context"
	"fmt"
	"math"

	"gapbook/convex"
	"gapbook/fem"
)

// hasConjugate reports whether G evaluates its conjugate (the smoothed
// potentials of continuation do not).
func hasConjugate(G convex.Potential) bool {
	gs, ds := G.Conjugate(1)
	return !math.IsNaN(gs) && !math.IsNaN(ds)
}

// primalDual minimises J for a potential of growth α < 2 by Newton's method
// on the pair (w, σ) of the primal unknown and a cellwise constant flux,
// with the constitutive law in its dual form ∇w = ∂G*(σ) (Chan, Golub &
// Mulet, SIAM J. Sci. Comput. 20 (1999) 1964–1977, for total variation).
// Linearising both equations and eliminating δσ gives, on every cell,
// the Hessian D²G(τ) at the gradient τ = ∂G*(σ) that the flux belongs to,
// not at ∇w: in the cells where ∇w is many decades smaller than its
// neighbours, D²G(∇w) ~ |∇w|^{α−2} is huge, its Newton step overshoots, and
// plain Newton crawls with damped steps; the flux there stays of moderate
// size and so does D²G(τ).
//
// After a full step the new pair satisfies the discrete equilibrium
// Bᵀσ + cM(w − ref) = b up to the linear solver's residual, so
//
//	gap = Σ_T |T| D_G(∇w_T, σ_T) ≥ J(w) − min J
//
// (discrete Fenchel duality; the nonlinear hypercircle of docs/math.md §4 on
// the P1/P0 pair) certifies the energy error of w. Newton stops when the
// gap, with the linear residual's share |wᵀr| added, is below tol times the
// energy scale: the residual test of the primal Newton method is replaced by
// this certificate, which is insensitive to cells whose gradients are
// negligible for the energy. The line search on J (Armijo) globalises; a
// step that is no descent direction restarts from σ = ∂G(∇w), where the
// step is the primal Newton step.
func (sv *solver) primalDual(ctx context.Context, lv *level, G convex.Potential, w []float64, tol float64) (bool, error) {
	const armijo = 1e-4
	nc := len(lv.grad)
	if lv.sigma == nil {
		lv.sigma, lv.lin = make([][2]float64, nc), make([][2]float64, nc)
	}
	sigma, lin := lv.sigma, lv.lin
	J, scale := lv.energy(G, w)
	for k, x := range lv.grad {
		sigma[k] = convex.Flux(G, x)
	}
	eta := 1e-4
	for it := 0; ; it++ {
		gnorm, res, ok, err := sv.stepStart(ctx, lv, G, w, J)
		if !ok {
			return false, err
		}
		if gnorm == 0 {
			sv.record(lv, Step{Energy: J, Residual: res})
			return true, nil
		}
		if it >= sv.o.MaxIter {
			sv.fail(StepsExhausted, "no convergence in %d primal-dual Newton steps on level %d (%d unknowns)", sv.o.MaxIter, lv.index, lv.s.NumFree())
			return false, nil
		}
		reg := sv.o.Reg * rms(lv) * math.Min(1, math.Pow(0.1, 1/(G.Growth()-1))/1e-6)
		for k, x := range lv.grad {
			tau := convex.DualFlux(G, sigma[k])
			c := convex.Hessian(G, tau, reg)
			if math.IsInf(c[0], 0) || math.IsInf(c[2], 0) || math.IsNaN(c[0]+c[1]+c[2]) {
				return false, fmt.Errorf("newton: the Hessian of %v is %v at gradient %v; the potential needs a finite g'' away from 0", G, c, tau)
			}
			lv.coef[k] = c
			dx, dy := x[0]-tau[0], x[1]-tau[1]
			lin[k] = [2]float64{sigma[k][0] + c[0]*dx + c[1]*dy, sigma[k][1] + c[1]*dx + c[2]*dy}
		}
		if err := lv.assemble(); err != nil {
			return false, err
		}
		lv.forces(lin, w, lv.gt)
		for i := range lv.gt {
			lv.gt[i] = -lv.gt[i]
		}
		clear(lv.d)
		st, err := fem.PCG(ctx, lv.hess, lv.mg, lv.gt, lv.d, eta, 1000)
		if err != nil && ctx.Err() != nil {
			return false, fmt.Errorf("newton: stopped on level %d: %w", lv.index, ctx.Err())
		}
		step := Step{Residual: res, Forcing: eta, CG: st.Iterations, MatVecs: st.MatVecs}
		// The full step and its flux σ' = lin + C∇δ.
		for i, n := range lv.s.FreeNodes {
			lv.trial[n] = w[n] + lv.d[i]
		}
		Jt, st1 := lv.energy(G, lv.trial) // leaves ∇w' in lv.grad
		gap := 0.0
		for k := range lin {
			d := lv.cellGrad(k, lv.d)
			c := lv.coef[k]
			lin[k][0] += c[0]*d[0] + c[1]*d[1]
			lin[k][1] += c[1]*d[0] + c[2]*d[1]
			gap += lv.s.Area[k] * convex.Gap(G, lv.grad[k], lin[k])
		}
		// The linear solver leaves Bᵀσ' + cM(w' − ref) − b = r ≠ 0; its
		// share of the bound is about |w'ᵀr|.
		lv.forces(lin, lv.trial, lv.gt)
		share := 0.0
		for i, n := range lv.s.FreeNodes {
			share += lv.trial[n] * lv.gt[i]
		}
		gap += math.Abs(share)
		step.Gap = gap / st1
		step.Decrement = step.Gap
		if step.Gap <= tol {
			copy(w, lv.trial)
			step.Energy, step.StepLength = Jt, 1
			sv.record(lv, step)
			return true, nil
		}
		gd := dot(lv.g, lv.d) // lv.g holds the gradient of J
		s := 1.0
		if !(gd < 0) {
			// Not a descent direction: restart the flux from ∇w.
			s = 0
		}
		for s > 0 {
			if s < 1 {
				for i, n := range lv.s.FreeNodes {
					lv.trial[n] = w[n] + s*lv.d[i]
				}
				Jt, st1 = lv.energy(G, lv.trial)
			}
			if Jt <= J+armijo*s*gd {
				break
			}
			if s == 1 && Jt <= J+(1e-14+1e-15*math.Sqrt(float64(nc)))*scale {
				// Rounding of J: the certificate above still improves.
				break
			}
			if s /= 2; s < 1e-12 {
				s = 0
			}
		}
		if s == 0 {
			lv.s.Gradient(w, lv.grad)
			for k, x := range lv.grad {
				sigma[k] = convex.Flux(G, x)
			}
			step.Energy = J
			sv.record(lv, step)
			if it > 0 && sv.hist[len(sv.hist)-2].StepLength == 0 {
				sv.fail(LineSearchFailed, "line search failed twice on level %d: J does not decrease along the Newton direction", lv.index)
				return false, nil
			}
			continue
		}
		copy(w, lv.trial)
		J, scale = Jt, st1
		for k := range sigma {
			n := [2]float64{sigma[k][0] + s*(lin[k][0]-sigma[k][0]), sigma[k][1] + s*(lin[k][1]-sigma[k][1])}
			// Where C is huge (flux near 0) the linearised flux can
			// overshoot by decades; keep it within a factor of the old
			// flux and of ∂G(∇w).
			lim := 4 * math.Max(math.Hypot(sigma[k][0], sigma[k][1]), norm2(convex.Flux(G, lv.grad[k])))
			if r := math.Hypot(n[0], n[1]); r > lim {
				n[0], n[1] = n[0]*lim/r, n[1]*lim/r
			}
			sigma[k] = n
		}
		step.Energy, step.StepLength = J, s
		sv.record(lv, step)
		// Forcing: the linear residual's share should stay below the gap.
		eta = math.Min(1e-4, math.Max(1e-10, 0.1*math.Sqrt(step.Gap)))
	}
}

// cellGrad returns the gradient on cell k of the P1 function with free
// values d (zero on the boundary).
func (lv *level) cellGrad(k int, d []float64) [2]float64 {
	c := lv.s.Mesh.Cells[k]
	var gx, gy float64
	for a := range lv.s.Mesh.Dim + 1 {
		if f := lv.s.Free[c[a]]; f >= 0 {
			gx += d[f] * lv.s.Grad[k][a][0]
			gy += d[f] * lv.s.Grad[k][a][1]
		}
	}
	return [2]float64{gx, gy}
}

// forces sets dst (free entries) to Bᵀσ + cM(w − ref) − b, the equilibrium
// defect of the cellwise flux σ.
func (lv *level) forces(sigma [][2]float64, w, dst []float64) {
	clear(lv.nodal)
	lv.s.FluxLoad(sigma, lv.nodal)
	lv.addMass(w, lv.nodal)
	for i, n := range lv.s.FreeNodes {
		dst[i] = lv.nodal[n] - lv.load[n]
	}
}

func norm2(v [2]float64) float64 { return math.Hypot(v[0], v[1]) }
