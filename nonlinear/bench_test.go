package nonlinear

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"testing"
	"time"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// benchProblem is the smooth manufactured problem of the benchmarks:
// u = sin(x + 2y) + x on the unit square, f = −D²G(∇u) : ∇²u in closed form
// (∇u = (cos s + 1, 2 cos s), ∇²u = −sin s [1 2; 2 4], s = x + 2y), checked
// against Manufacture.
func benchProblem(b *testing.B, a float64, n int) (*mesh.Mesh, *problem.Problem) {
	G, err := convex.Power(a)
	if err != nil {
		b.Fatal(err)
	}
	f := func(x, y float64) float64 {
		s := x + 2*y
		c := math.Cos(s)
		d := convex.Hessian(G, [2]float64{c + 1, 2 * c}, 0)
		return math.Sin(s) * (d[0] + 4*d[1] + 4*d[2])
	}
	u := func(x, y float64) float64 { return math.Sin(x+2*y) + x }
	man, err := problem.Manufacture("sin(x + 2*y) + x", G)
	if err != nil {
		b.Fatal(err)
	}
	for _, p := range [][2]float64{{0.1, 0.2}, {0.7, 0.4}, {0.3, 0.9}} {
		if g, w := f(p[0], p[1]), man.Source(p[0], p[1], 0); math.Abs(g-w) > 1e-12*math.Max(1, math.Abs(w)) {
			b.Fatalf("closed-form source %g, Manufacture %g", g, w)
		}
	}
	m, err := mesh.Rectangle(0, 1, 0, 1, 4, 4)
	if err != nil {
		b.Fatal(err)
	}
	for c := 4; c < n; c *= 2 {
		if m, err = m.Refine(); err != nil {
			b.Fatal(err)
		}
	}
	return m, problem.Steady(G, f, u)
}

// matvecTime times one product with a stiffness matrix on m.
func matvecTime(b *testing.B, m *mesh.Mesh) time.Duration {
	s, err := fem.NewP1(m)
	if err != nil {
		b.Fatal(err)
	}
	a := s.NewMatrix()
	s.Stiffness(nil, a)
	x, y := make([]float64, a.Rows), make([]float64, a.Rows)
	for i := range x {
		x[i] = 1
	}
	reps := 20 + 20_000_000/(a.NNZ()+1)
	start := time.Now()
	for range reps {
		a.MulVec(y, x)
	}
	return time.Since(start) / time.Duration(reps)
}

// BenchmarkEllipticSolve solves the manufactured problem to a relative
// energy decrement of 1e-10 (the default) from scratch: spaces, multigrid
// hierarchies, loads, nested iteration. matvecs is the solve time over the
// time of one stiffness-matrix product on the finest mesh.
func BenchmarkEllipticSolve(b *testing.B) {
	for _, a := range []float64{1.5, 3} {
		for _, n := range []int{64, 128, 256, 512} {
			b.Run(fmt.Sprintf("p=%g/n=%d", a, n), func(b *testing.B) {
				m, p := benchProblem(b, a, n)
				mv := matvecTime(b, m)
				var r *Result
				var err error
				for b.Loop() {
					if r, err = Solve(context.Background(), m, p, Options{}); err != nil {
						b.Fatal(err)
					}
				}
				per := b.Elapsed() / time.Duration(b.N)
				nf := m.NumNodes() - countBoundary(m)
				fine := 0
				for _, s := range r.History {
					if s.Unknowns == nf && s.StepLength > 0 {
						fine++
					}
				}
				b.ReportMetric(float64(nf), "dofs")
				b.ReportMetric(float64(r.Newton), "newton")
				b.ReportMetric(float64(fine), "newton-fine")
				b.ReportMetric(float64(r.CG), "cg")
				b.ReportMetric(float64(per)/float64(mv), "matvecs")
				b.ReportMetric(float64(per.Nanoseconds())/float64(nf), "ns/dof")
			})
		}
	}
}

func countBoundary(m *mesh.Mesh) int {
	c := 0
	for _, v := range m.Boundary {
		if v {
			c++
		}
	}
	return c
}

// BenchmarkEllipticMillion solves on 1024 × 1024 cells (about a million
// unknowns) and reports the peak heap in use, sampled after every Newton
// step, and the heap obtained from the system. Not part of make bench's
// table; run with -bench EllipticMillion.
func BenchmarkEllipticMillion(b *testing.B) {
	for b.Loop() {
		m, p := benchProblem(b, 3, 1024)
		var peak uint64
		var ms runtime.MemStats
		r, err := Solve(context.Background(), m, p, Options{Progress: func(Step) {
			runtime.ReadMemStats(&ms)
			peak = max(peak, ms.HeapInuse)
		}})
		if err != nil {
			b.Fatal(err)
		}
		runtime.ReadMemStats(&ms)
		b.ReportMetric(float64(peak)/1e6, "MB-peak-inuse")
		b.ReportMetric(float64(ms.HeapSys)/1e6, "MB-heap-sys")
		b.ReportMetric(float64(len(r.U)), "nodes")
		b.ReportMetric(float64(r.Newton), "newton")
	}
}
