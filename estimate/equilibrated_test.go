package estimate

import (
	"context"
	"math"
	"math/rand/v2"
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

func eqMust[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

// eqMeshes are the 2-D domains of the balance test.
func eqMeshes(t *testing.T) map[string]*mesh.Mesh {
	t.Helper()
	sq := eqMust(mesh.Rectangle(0, 1, 0, 1, 4, 4))
	sq = eqMust(sq.Refine())
	return map[string]*mesh.Mesh{
		"square": sq,
		"lshape": eqMust(mesh.LShape(4)),
		"disk":   eqMust(mesh.Disk(1, 24, 0.2)),
	}
}

// eqOutward returns the outward unit normal of edge i (opposite vertex i)
// of cell k.
func eqOutward(m *mesh.Mesh, k, i int) (n [2]float64, length float64) {
	c := m.Cells[k]
	a, b, o := m.Nodes[c[(i+1)%3]], m.Nodes[c[(i+2)%3]], m.Nodes[c[i]]
	dx, dy := b.X-a.X, b.Y-a.Y
	length = math.Hypot(dx, dy)
	n = [2]float64{dy / length, -dx / length}
	if n[0]*(a.X-o.X)+n[1]*(a.Y-o.Y) < 0 {
		n = [2]float64{-n[0], -n[1]}
	}
	return n, length
}

// TestEquilibratedBalance checks, independently of the construction, that
// y* is an H(div) field whose divergence balances f in the sense of RT_k:
// (1) the normal component y*·n agrees from both sides of every interior
// edge; (2) the divergence theorem ∮_∂T y*·n = ∫_T div y* holds; (3) the
// moments ∫_T (div y* + f) φ vanish for φ ∈ P_k(T). The source is not a
// polynomial and v is a rough function, so nothing is balanced by luck.
func TestEquilibratedBalance(t *testing.T) {
	G := eqMust(convex.Power(3))
	f := func(x, y float64) float64 { return math.Exp(x) * math.Cos(3*y) }
	line := fem.Line(6)
	tri := fem.Triangle(8) // the projection's rule: moments vanish to rounding
	for name, m := range eqMeshes(t) {
		for _, order := range []int{0, 1} {
			s := eqMust(fem.NewP1(m))
			rng := rand.New(rand.NewPCG(7, uint64(order)))
			v := make([]float64, m.NumNodes())
			for i, p := range m.Nodes {
				if !m.Boundary[i] {
					v[i] = math.Sin(3*p.X)*p.Y + 0.1*rng.Float64()
				}
			}
			y, err := Equilibrate(context.Background(), s, G, v, FuncSource(m, f), EquilibrateOptions{Order: order})
			if err != nil {
				t.Fatalf("%s k=%d: %v", name, order, err)
			}
			var scale float64
			for k := range m.Cells {
				yy, _ := y.At(k, [3]float64{1.0 / 3, 1.0 / 3, 1.0 / 3})
				scale = math.Max(scale, math.Hypot(yy[0], yy[1]))
			}
			// Normal fluxes per edge from each side, keyed by node pair.
			seen := map[[2]int32][]float64{}
			var worstJump, worstGauss, worstMoment float64
			for k, c := range m.Cells {
				var boundaryFlux float64
				for i := range 3 {
					n, l := eqOutward(m, k, i)
					a, b := (i+1)%3, (i+2)%3
					key := [2]int32{c[a], c[b]}
					pts := make([]float64, len(line.Points))
					for q, p := range line.Points {
						// Points ordered from the lower node number up.
						tq := p[0]
						if c[a] > c[b] {
							key = [2]int32{c[b], c[a]}
							tq = 1 - p[0]
						}
						var lam [3]float64
						lam[a], lam[b] = 1-tq, tq
						yy, _ := y.At(k, lam)
						yn := yy[0]*n[0] + yy[1]*n[1]
						boundaryFlux += l * line.Weights[q] * yn
						pts[q] = yn
					}
					if other, ok := seen[key]; ok {
						// The outward normals are opposite: y·n must cancel.
						for q := range pts {
							worstJump = math.Max(worstJump, math.Abs(pts[q]+other[q]))
						}
					} else {
						seen[key] = pts
					}
				}
				var divInt float64
				var moment [3]float64
				for q, p := range tri.Points {
					lam := [3]float64{1 - p[0] - p[1], p[0], p[1]}
					_, d := y.At(k, lam)
					x, yc := eqPoint(m, k, lam)
					w := 2 * s.Area[k] * tri.Weights[q]
					divInt += w * d
					for a := range 3 {
						phi := 1.0
						if order == 1 {
							phi = lam[a]
						}
						moment[a] += w * (d + f(x, yc)) * phi
					}
				}
				worstGauss = math.Max(worstGauss, math.Abs(boundaryFlux-divInt)/s.Area[k])
				for a := range 3 {
					worstMoment = math.Max(worstMoment, math.Abs(moment[a])/s.Area[k])
				}
			}
			t.Logf("%s k=%d: normal jump %.1e, divergence theorem %.1e, moment %.1e (|y*| up to %.2g)", name, order, worstJump, worstGauss, worstMoment, scale)
			const tol = 1e-11
			if worstJump > tol*scale || worstGauss > tol*scale || worstMoment > tol*(scale+1) {
				t.Errorf("%s k=%d: normal jump %.2e, divergence theorem %.2e, moment %.2e (scale %.2e)", name, order, worstJump, worstGauss, worstMoment, scale)
			}
		}
	}
}
