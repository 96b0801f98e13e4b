package nonlinear

import (
	"context"
	"errors"
	"math"
	"testing"

	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// TestEvolveHeat checks implicit Euler for the heat equation against the
// closed form of the discrete scheme: for u0 = sin(πx) the P1 solution is
// (common practice, no source) the discrete eigenvector times
// (1 + τλ_h)^{−n}, where λ_h = (6/h²)(1 − cos πh)/(2 + cos πh) is the P1
// Rayleigh quotient of the nodal sine on a uniform mesh; and that the error
// against e^{−π²t} sin(πx) falls with τ and h.
func TestEvolveHeat(t *testing.T) {
	G := power(t, 2)
	u0 := func(x, _ float64) float64 { return math.Sin(math.Pi * x) }
	var prev float64
	for _, c := range []struct{ cells, steps int }{{16, 8}, {32, 32}} {
		m, err := mesh.Interval(0, 1, c.cells)
		if err != nil {
			t.Fatal(err)
		}
		h := 1 / float64(c.cells)
		lam := 6 / (h * h) * (1 - math.Cos(math.Pi*h)) / (2 + math.Cos(math.Pi*h))
		var progress []EvolveStep
		r, err := Evolve(context.Background(), m, problem.Evolution(G, nil, nil, u0, 0, 0.1),
			EvolveOptions{Steps: c.steps, Newton: Options{ResTol: 1e-13}, Progress: func(s EvolveStep) { progress = append(progress, s) }}, nil)
		if err != nil {
			t.Fatal(err)
		}
		if len(progress) != c.steps || progress[c.steps-1].T1 != 0.1 || progress[0].N != 1 {
			t.Errorf("progress reports %d steps, last %+v", len(progress), progress[len(progress)-1])
		}
		tau := 0.1 / float64(c.steps)
		amp := math.Pow(1+tau*lam, -float64(c.steps))
		for i, p := range m.Nodes {
			if want := amp * math.Sin(math.Pi*p.X); math.Abs(r.V[i]-want) > 1e-10 {
				t.Fatalf("node %d: %.14g, discrete closed form %.14g", i, r.V[i], want)
			}
		}
		s, _ := fem.NewP1(m)
		e := s.L2Error(r.V, func(x, _ float64) float64 { return math.Exp(-math.Pi*math.Pi*0.1) * math.Sin(math.Pi*x) }, s.Rule(8))
		if prev > 0 && !(e < prev/3) {
			t.Errorf("L² error %.3e does not fall from %.3e", e, prev)
		}
		prev = e
	}
}

// TestEvolveCallback checks that the callback sees every step in order
// with v0 equal to the previous v1, that its error stops the run, and that
// a cancelled context stops it with the context's error.
func TestEvolveCallback(t *testing.T) {
	G := power(t, 3)
	m, _ := mesh.Rectangle(0, 1, 0, 1, 4, 4)
	u0 := func(x, y float64) float64 { return x * (1 - x) * y * (1 - y) }
	e := problem.Evolution(G, nil, nil, u0, 0, 0)
	var last []float64
	var t1s []float64
	grid := EvolveOptions{Times: []float64{0, 0.01, 0.03, 0.06}}
	_, err := Evolve(context.Background(), m, e, grid, func(_ context.Context, a, b float64, v0, v1 []float64) error {
		if last != nil {
			for i := range v0 {
				if v0[i] != last[i] {
					return errors.New("v0 is not the previous v1")
				}
			}
		}
		last = append(last[:0], v1...)
		t1s = append(t1s, b)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	if len(t1s) != 3 || t1s[2] != 0.06 {
		t.Errorf("callback times %v", t1s)
	}
	stop := errors.New("stop")
	if _, err := Evolve(context.Background(), m, e, grid, func(context.Context, float64, float64, []float64, []float64) error { return stop }); !errors.Is(err, stop) {
		t.Errorf("callback error: got %v", err)
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := Evolve(ctx, m, e, grid, nil); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: got %v", err)
	}
	for _, bad := range []struct {
		p *problem.Problem
		o EvolveOptions
	}{
		{problem.Evolution(G, nil, nil, nil, 0, 1), EvolveOptions{}},
		{problem.Evolution(G, nil, nil, nil, 1, 1), EvolveOptions{Steps: 2}},
		{problem.Evolution(G, nil, nil, nil, 0, 0), EvolveOptions{Times: []float64{0, 0.5, 0.5}}},
		{problem.Evolution(nil, nil, nil, nil, 0, 1), EvolveOptions{Steps: 1}},
	} {
		if _, err := Evolve(context.Background(), m, bad.p, bad.o, nil); err == nil {
			t.Errorf("%+v: no error", bad)
		}
	}
}

// TestEvolveKeepsLevels checks that Evolve, which keeps the solver's level
// (space, multigrid, mass matrix) across its steps, returns what a fresh
// Solve per step returns, to round-off (an identity: the same equations
// solved by the same steps).
func TestEvolveKeepsLevels(t *testing.T) {
	m, _ := mesh.Rectangle(0, 1, 0, 1, 8, 8)
	f := func(x, y, t float64) float64 { return 1 + x*y + t }
	uD := func(x, y, t float64) float64 { return x + t*y }
	u0 := func(x, y float64) float64 { return x + x*(1-x)*y*(1-y) }
	for _, alpha := range []float64{2, 3} {
		G := power(t, alpha)
		e := problem.Evolution(G, f, uD, u0, 0, 0.2)
		eo := EvolveOptions{Steps: 3}
		r, err := Evolve(context.Background(), m, e, eo, nil)
		if err != nil {
			t.Fatal(err)
		}
		prev := make([]float64, m.NumNodes())
		for i, p := range m.Nodes {
			prev[i] = u0(p.X, p.Y)
			if m.Boundary[i] {
				prev[i] = uD(p.X, p.Y, 0)
			}
		}
		times, _ := eo.Grid(e)
		for n := 1; n < len(times); n++ {
			t1 := times[n]
			p := discrete{G: warmPotential{G}, Mass: 1 / (t1 - times[n-1]), Ref: prev,
				F:         func(x, y float64) float64 { return f(x, y, t1) },
				Dirichlet: func(x, y float64) float64 { return uD(x, y, t1) }}
			s, err := solve(context.Background(), m, p, Options{Initial: prev}, nil)
			if err != nil {
				t.Fatal(err)
			}
			prev = s.U
		}
		for i := range prev {
			if d := math.Abs(prev[i] - r.V[i]); d > 1e-14*(1+math.Abs(prev[i])) {
				t.Fatalf("α = %g, node %d: %.17g by Evolve, %.17g by a fresh Solve per step", alpha, i, r.V[i], prev[i])
			}
		}
	}
}
