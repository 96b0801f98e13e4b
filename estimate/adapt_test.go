package estimate

import (
	"context"
	"errors"
	"math"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// cornerU is u = r^{2/3} sin(2θ/3) on the L-shape, θ ∈ [0, 3π/2]: harmonic,
// zero on the edges at the re-entrant corner (docs/checks.md item 11, p = 2).
func cornerU(x, y float64) float64 {
	t := math.Atan2(y, x)
	if t < 0 {
		t += 2 * math.Pi
	}
	return math.Pow(math.Hypot(x, y), 2.0/3) * math.Sin(2*t/3)
}

// laplaceSolve is a test-only solver for −Δv = 0 with v = I_h u_D on ∂Ω:
// P1 stiffness, boundary lift, SGS-preconditioned CG.
func laplaceSolve(uD func(x, y float64) float64) SolveFunc {
	return func(ctx context.Context, s *fem.P1) ([]float64, error) {
		v := make([]float64, s.NumNodes())
		for i, p := range s.Mesh.Nodes {
			if s.Mesh.Boundary[i] {
				v[i] = uD(p.X, p.Y)
			}
		}
		a := s.NewMatrix()
		if err := s.Stiffness(nil, a); err != nil {
			return nil, err
		}
		b, x := make([]float64, s.NumFree()), make([]float64, s.NumFree())
		s.Lift(nil, v, b)
		pre, err := fem.NewSGS(a)
		if err != nil {
			return nil, err
		}
		if _, err := fem.PCG(ctx, a, pre, b, x, 1e-12, 20*len(b)+100); err != nil {
			return nil, err
		}
		s.FromFree(x, v)
		return v, nil
	}
}

// crFlux is the test-only equilibrated flux for −Δu = 0 in 2-D: the
// broken gradient of the Crouzeix–Raviart solution (boundary midpoints
// from u_D), which has continuous normal components, i.e. is a
// divergence-free RT0 field (Marini, SIAM J. Numer. Anal. 22 (1985)).
type crFlux struct{ g [][2]float64 }

func (c *crFlux) At(k int, _ [3]float64) ([2]float64, float64) { return c.g[k], 0 }
func (c *crFlux) Degree() int                                  { return 0 }

func crBuilder(uD func(x, y float64) float64) FluxFunc {
	return func(ctx context.Context, s *fem.P1, _ []float64) (Flux, error) {
		m := s.Mesh
		cr, err := fem.NewCR(m)
		if err != nil {
			return nil, err
		}
		val := make([]float64, len(cr.Edges))
		for e, ed := range cr.Edges {
			p, q := m.Nodes[ed[0]], m.Nodes[ed[1]]
			val[e] = uD((p.X+q.X)/2, (p.Y+q.Y)/2)
		}
		a := cr.NewMatrix()
		if err := cr.Stiffness(a); err != nil {
			return nil, err
		}
		b, x := make([]float64, cr.NumFree()), make([]float64, cr.NumFree())
		for k := range m.Cells {
			for i := range 3 {
				fi := cr.Free[cr.CellEdges[k][i]]
				if fi < 0 {
					continue
				}
				for j := range 3 {
					if ej := cr.CellEdges[k][j]; cr.Free[ej] < 0 {
						gi, gj := cr.Grad[k][i], cr.Grad[k][j]
						b[fi] -= 4 * cr.Area[k] * (gi[0]*gj[0] + gi[1]*gj[1]) * val[ej]
					}
				}
			}
		}
		pre, err := fem.NewSGS(a)
		if err != nil {
			return nil, err
		}
		if _, err := fem.PCG(ctx, a, pre, b, x, 1e-13, 20*len(b)+100); err != nil {
			return nil, err
		}
		for i, e := range cr.FreeEdges {
			val[e] = x[i]
		}
		f := &crFlux{g: make([][2]float64, m.NumCells())}
		for k := range m.Cells {
			for i := range 3 {
				u := val[cr.CellEdges[k][i]]
				f.g[k][0] -= 2 * u * cr.Grad[k][i][0]
				f.g[k][1] -= 2 * u * cr.Grad[k][i][1]
			}
		}
		return f, nil
	}
}

// normalJump returns the largest jump of y·n across interior edges relative
// to max |y|: zero for an H(div) field.
func normalJump(m *mesh.Mesh, g [][2]float64) float64 {
	edges, cellEdges := m.Edges()
	first := make([]int32, len(edges))
	for i := range first {
		first[i] = -1
	}
	var jump, big float64
	for k, ce := range cellEdges {
		big = math.Max(big, math.Hypot(g[k][0], g[k][1]))
		for _, e := range ce {
			if first[e] < 0 {
				first[e] = int32(k)
				continue
			}
			p, q := m.Nodes[edges[e][0]], m.Nodes[edges[e][1]]
			nx, ny := q.Y-p.Y, p.X-q.X
			l := math.Hypot(nx, ny)
			o := g[first[e]]
			jump = math.Max(jump, math.Abs((g[k][0]-o[0])*nx+(g[k][1]-o[1])*ny)/l)
		}
	}
	return jump / big
}

// rate fits log μ̄ = c − s log N by least squares over the steps with
// N ≥ minN and returns s.
func rate(n, mu []float64, minN float64) float64 {
	var sx, sy, sxx, sxy, k float64
	for i := range n {
		if n[i] < minN {
			continue
		}
		x, y := math.Log(n[i]), math.Log(mu[i])
		sx, sy, sxx, sxy, k = sx+x, sy+y, sxx+x*x, sxy+x*y, k+1
	}
	return -(k*sxy - sx*sy) / (k*sxx - sx*sx)
}

// TestAdaptLShape: docs/checks.md item 11 (p = 2, k = 2/3). Uniform refinement
// gives μ ~ h^{4/3} ~ N^{−2/3}; the adaptive loop must restore N^{−1}.
// Observed: adaptive 0.96 (22 steps to N = 2772), uniform 0.62 (N ≤ 3000).
func TestAdaptLShape(t *testing.T) {
	ctx := context.Background()
	G := must(convex.Power(2))
	p := problem.Steady(G, func(_, _ float64) float64 { return 0 }, cornerU)
	solve, flux := laplaceSolve(cornerU), crBuilder(cornerU)
	var steps int
	run, err := Adapt(ctx, must(mesh.LShape(2)), p, solve, flux, AdaptOptions{MaxCells: 6000, Share: 0.4,
		Progress: func(AdaptStep) { steps++ }})
	if err != nil {
		t.Fatal(err)
	}
	if run.Reason != "size limit" || steps != len(run.Steps) || len(run.Steps) < 8 {
		t.Fatalf("loop stopped by %q after %d steps (%d progress calls)", run.Reason, len(run.Steps), steps)
	}
	var na, ma []float64
	for _, st := range run.Steps {
		r := st.Result
		if r.Residual > 1e-12 || r.Majorant.Value != r.D {
			t.Fatalf("step %d: residual %g, majorant %g, D %g: the CR flux should be equilibrated", st.Step, r.Residual, r.Majorant.Value, r.D)
		}
		if j := normalJump(st.Mesh, flux2(t, ctx, flux, st)); j > 1e-9 {
			t.Fatalf("step %d: normal jump %g of the CR flux", st.Step, j)
		}
		na, ma = append(na, float64(st.Unknowns)), append(ma, r.Majorant.Value)
		last := r.Assumptions[len(r.Assumptions)-1]
		if last[:4] != "data" {
			t.Errorf("the corner data are not linear on edges, but assumptions are %q", r.Assumptions)
		}
	}
	var nu, mu []float64
	for _, n := range []int{2, 4, 8, 16, 32} {
		m := must(mesh.LShape(n))
		s := must(fem.NewP1(m))
		v := must(solve(ctx, s))
		y := must(flux(ctx, s, v))
		r := must(Estimate(s, p, v, y, Options{Friedrichs: must(WidthConstant(m, 2))}))
		nu, mu = append(nu, float64(s.NumFree())), append(mu, r.Majorant.Value)
	}
	ra, ru := rate(na, ma, 100), rate(nu, mu, 100)
	t.Logf("majorant rate in N: adaptive %.3f (%d steps, N up to %g), uniform %.3f", ra, len(na), na[len(na)-1], ru)
	if ra < 0.85 || ra > 1.2 {
		t.Errorf("adaptive rate %.3f, expected ≈ 1", ra)
	}
	if ru < 0.55 || ru > 0.8 {
		t.Errorf("uniform rate %.3f, expected ≈ 2/3", ru)
	}
	// Cancellation stops the loop with the context's error.
	cctx, cancel := context.WithCancel(ctx)
	_, err = Adapt(cctx, must(mesh.LShape(2)), p, solve, flux, AdaptOptions{Progress: func(AdaptStep) { cancel() }})
	if !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled loop returned %v", err)
	}
	// A target stops it early.
	run, err = Adapt(ctx, must(mesh.LShape(2)), p, solve, flux, AdaptOptions{Target: ma[2]})
	if err != nil || run.Reason != "target reached" || len(run.Steps) > 4 {
		t.Errorf("target: %v, %q after %d steps", err, run.Reason, len(run.Steps))
	}
}

func flux2(t *testing.T, ctx context.Context, f FluxFunc, st AdaptStep) [][2]float64 {
	y, err := f(ctx, must(fem.NewP1(st.Mesh)), st.V)
	if err != nil {
		t.Fatal(err)
	}
	return y.(*crFlux).g
}

// TestMarkBulk: the marked cells are the largest ones holding the share.
func TestMarkBulk(t *testing.T) {
	eta := []float64{1, 5, 2, 2, 0}
	m := must(MarkBulk(eta, 0.6)) // total 10: 5 + 2 + 2 (tie kept) ≥ 6
	want := []bool{false, true, true, true, false}
	for i := range want {
		if m[i] != want[i] {
			t.Fatalf("marked %v, want %v", m, want)
		}
	}
	if _, err := MarkBulk(eta, 0); err == nil {
		t.Error("share 0 accepted")
	}
	if _, err := MarkBulk([]float64{1, math.NaN()}, 0.5); err == nil {
		t.Error("NaN indicator accepted")
	}
}
