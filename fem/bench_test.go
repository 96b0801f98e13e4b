package fem

import (
	"context"
	"fmt"
	"math"
	"runtime"
	"testing"
)

// benchSpace returns the unit square with n cells per side (n = 4·2^k),
// refined from a 4 × 4 grid so that multigrid has its hierarchy.
func benchSpace(b *testing.B, n int) *P1 {
	levels := 0
	for 4<<levels < n {
		levels++
	}
	s, err := NewP1(hierarchy(b, 2, 4, levels))
	if err != nil {
		b.Fatal(err)
	}
	return s
}

func pLaplaceCoef(s *P1) [][3]float64 {
	coef := make([][3]float64, s.Mesh.NumCells())
	for k, c := range s.Mesh.Cells {
		p := s.Mesh.Nodes[c[0]]
		gx, gy := 4*math.Cos(4*p.X)*math.Sin(3*p.Y), 3*math.Sin(4*p.X)*math.Cos(3*p.Y)
		n2 := gx*gx + gy*gy
		coef[k] = [3]float64{n2 + 2*gx*gx + 1e-3, 2 * gx * gy, n2 + 2*gy*gy + 1e-3}
	}
	return coef
}

func BenchmarkAssembly(b *testing.B) {
	for _, n := range []int{256, 512} {
		b.Run(fmt.Sprint("n=", n), func(b *testing.B) {
			s := benchSpace(b, n)
			coef := pLaplaceCoef(s)
			a := s.NewMatrix()
			b.ReportAllocs()
			for b.Loop() {
				s.Stiffness(coef, a)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(a.NNZ()), "ns/nnz")
		})
	}
}

func BenchmarkMulVec(b *testing.B) {
	for _, n := range []int{256, 512} {
		b.Run(fmt.Sprint("n=", n), func(b *testing.B) {
			s := benchSpace(b, n)
			a := s.NewMatrix()
			s.Stiffness(nil, a)
			x, y := make([]float64, a.Rows), make([]float64, a.Rows)
			for i := range x {
				x[i] = 1
			}
			for b.Loop() {
				a.MulVec(y, x)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(a.NNZ()), "ns/nnz")
		})
	}
}

func BenchmarkVCycle(b *testing.B) {
	for _, n := range []int{256, 512} {
		b.Run(fmt.Sprint("n=", n), func(b *testing.B) {
			s := benchSpace(b, n)
			a := s.NewMatrix()
			s.Stiffness(pLaplaceCoef(s), a)
			mg, _ := NewMultigrid(s)
			if err := mg.Update(a); err != nil {
				b.Fatal(err)
			}
			r, z := make([]float64, a.Rows), make([]float64, a.Rows)
			for i := range r {
				r[i] = 1
			}
			b.ReportAllocs()
			for b.Loop() {
				mg.Apply(z, r)
			}
			b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(a.Rows), "ns/unknown")
		})
	}
}

// BenchmarkPoissonSolve times what a Newton step does: assemble, rebuild the
// multigrid hierarchy (Galerkin products, coarse Cholesky) and solve to 1e-10.
func BenchmarkPoissonSolve(b *testing.B) {
	for _, coefName := range []string{"laplace", "p-laplace-like"} {
		for _, n := range []int{256, 512} {
			b.Run(fmt.Sprintf("%s/n=%d", coefName, n), func(b *testing.B) {
				s := benchSpace(b, n)
				var coef [][3]float64
				if coefName != "laplace" {
					coef = pLaplaceCoef(s)
				}
				a := s.NewMatrix()
				mg, err := NewMultigrid(s)
				if err != nil {
					b.Fatal(err)
				}
				rhs := make([]float64, s.NumFree())
				for i := range rhs {
					rhs[i] = 1
				}
				x := make([]float64, s.NumFree())
				var st Stats
				for b.Loop() {
					s.Stiffness(coef, a)
					if err := mg.Update(a); err != nil {
						b.Fatal(err)
					}
					clear(x)
					if st, err = PCG(context.Background(), a, mg, rhs, x, 1e-10, 100); err != nil {
						b.Fatal(err)
					}
				}
				b.ReportMetric(float64(st.Iterations), "iterations")
				b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(s.NumFree()), "ns/unknown")
			})
		}
	}
}

// BenchmarkSetup measures building the space and hierarchy once per mesh.
func BenchmarkSetup(b *testing.B) {
	m := hierarchy(b, 2, 4, 7) // 512 cells per side
	for b.Loop() {
		s, err := NewP1(m)
		if err != nil {
			b.Fatal(err)
		}
		if _, err := NewMultigrid(s); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkMillion solves on 1024 cells per side (about a million unknowns)
// and reports the live heap after a Newton-like step.
func BenchmarkMillion(b *testing.B) {
	for b.Loop() {
		s := benchSpace(b, 1024)
		a := s.NewMatrix()
		s.Stiffness(pLaplaceCoef(s), a)
		mg, err := NewMultigrid(s)
		if err != nil {
			b.Fatal(err)
		}
		if err := mg.Update(a); err != nil {
			b.Fatal(err)
		}
		rhs := make([]float64, s.NumFree())
		for i := range rhs {
			rhs[i] = 1
		}
		x := make([]float64, s.NumFree())
		st, err := PCG(context.Background(), a, mg, rhs, x, 1e-10, 100)
		if err != nil {
			b.Fatal(err)
		}
		runtime.GC()
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		b.ReportMetric(float64(ms.HeapInuse)/1e6, "MB-live")
		b.ReportMetric(float64(st.Iterations), "iterations")
		b.ReportMetric(float64(s.NumFree()), "unknowns")
		runtime.KeepAlive(mg)
	}
}
