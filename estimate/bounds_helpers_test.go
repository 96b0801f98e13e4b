package estimate

import (
	"math"
	"math/rand/v2"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// manufactured is u = a·x + ε Π_i ℓ_i(x) with affine ℓ_i vanishing on the
// boundary pieces of the domain, so u_D = a·x is linear on boundary edges and
// a P1 interpolant carries it exactly. ε is chosen so that |∇u| ≥ 0.6|a|:
// the source f = −D²G(∇u) : ∇²u (chain rule) is then smooth for every α.
type manufactured struct {
	a     [2]float64
	eps   float64
	lines [][3]float64 // ℓ(x) = c + n·x as (c, nx, ny)
	dim   int
}

// bubble returns Π ℓ_i with its gradient and Hessian (xx, xy, yy), built
// one factor at a time by the product rule (linear cost in the number of
// lines).
func (m *manufactured) bubble(x, y float64) (b float64, g [2]float64, h [3]float64) {
	b = 1
	for _, ln := range m.lines {
		l, nx, ny := ln[0]+ln[1]*x+ln[2]*y, ln[1], ln[2]
		h = [3]float64{h[0]*l + 2*g[0]*nx, h[1]*l + g[0]*ny + g[1]*nx, h[2]*l + 2*g[1]*ny}
		g = [2]float64{g[0]*l + b*nx, g[1]*l + b*ny}
		b *= l
	}
	return b, g, h
}

func (m *manufactured) u(x, y float64) float64 {
	b, _, _ := m.bubble(x, y)
	return m.a[0]*x + m.a[1]*y + m.eps*b
}

func (m *manufactured) grad(x, y float64) [2]float64 {
	_, g, _ := m.bubble(x, y)
	return [2]float64{m.a[0] + m.eps*g[0], m.a[1] + m.eps*g[1]}
}

func (m *manufactured) source(G convex.Potential) func(x, y float64) float64 {
	return func(x, y float64) float64 {
		_, g, h := m.bubble(x, y)
		H := convex.Hessian(G, [2]float64{m.a[0] + m.eps*g[0], m.a[1] + m.eps*g[1]}, 0)
		return -m.eps * (H[0]*h[0] + 2*H[1]*h[1] + H[2]*h[2])
	}
}

type testDomain struct {
	name  string
	mesh  func(level int) *mesh.Mesh
	lines [][3]float64
	dim   int
}

func must[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

func domains() []testDomain {
	disk := [][3]float64{}
	const nd = 12
	for i := range nd {
		t := (2*float64(i) + 1) * math.Pi / nd
		disk = append(disk, [3]float64{math.Cos(math.Pi / nd), -math.Cos(t), -math.Sin(t)})
	}
	return []testDomain{
		{"interval", func(l int) *mesh.Mesh { return must(mesh.Interval(0, 1, 8<<l)) }, [][3]float64{{0, 1, 0}, {1, -1, 0}}, 1},
		{"square", func(l int) *mesh.Mesh { return must(mesh.Rectangle(0, 1, 0, 1, 4<<l, 4<<l)) },
			[][3]float64{{0, 1, 0}, {1, -1, 0}, {0, 0, 1}, {1, 0, -1}}, 2},
		{"lshape", func(l int) *mesh.Mesh { return must(mesh.LShape(2 << l)) },
			[][3]float64{{1, 1, 0}, {1, -1, 0}, {1, 0, 1}, {1, 0, -1}, {0, 1, 0}, {0, 0, 1}}, 2},
		{"disk", func(l int) *mesh.Mesh { return must(mesh.Disk(1, nd, 0.5/float64(int(1)<<l))) }, disk, 2},
	}
}

// newManufactured scales ε from sampled |∇Π ℓ_i| on the fine sample mesh.
func newManufactured(d testDomain) *manufactured {
	m := &manufactured{a: [2]float64{1, 0.5}, lines: d.lines, dim: d.dim}
	if d.dim == 1 {
		m.a[1] = 0
	}
	sample := d.mesh(3)
	gmax := 0.0
	for _, p := range sample.Nodes {
		_, g, _ := m.bubble(p.X, p.Y)
		gmax = math.Max(gmax, math.Hypot(g[0], g[1]))
	}
	m.eps = 0.4 * math.Hypot(m.a[0], m.a[1]) / gmax
	return m
}

// perturbed returns the P1 interpolant of u plus δ h times uniform noise in
// [−1, 1] at the interior nodes.
func perturbed(s *fem.P1, u func(x, y float64) float64, delta float64, seed uint64) []float64 {
	v := make([]float64, s.NumNodes())
	s.Interpolate(u, v)
	rng := rand.New(rand.NewPCG(seed, 7))
	h := s.Mesh.MaxH()
	for _, n := range s.FreeNodes {
		v[n] += delta * h * (2*rng.Float64() - 1)
	}
	return v
}

// exactFlux is y* = ∂G(∇u) + δ curl ψ with ψ = sin(πx) sin(2πy) (a constant
// δ in 1-D): equilibrated, div y* = −f, and different from p* when δ ≠ 0.
type exactFlux struct {
	s     *fem.P1
	G     convex.Potential
	m     *manufactured
	delta float64
	f     func(x, y float64) float64
}

func (e *exactFlux) At(k int, lam [3]float64) ([2]float64, float64) {
	x, y := physical(e.s, k, lam)
	p := convex.Flux(e.G, e.m.grad(x, y))
	if e.m.dim == 1 {
		return [2]float64{p[0] + e.delta, 0}, -e.f(x, y)
	}
	px := math.Pi * math.Cos(math.Pi*x) * math.Sin(2*math.Pi*y)
	py := 2 * math.Pi * math.Sin(math.Pi*x) * math.Cos(2*math.Pi*y)
	return [2]float64{p[0] + e.delta*py, p[1] - e.delta*px}, -e.f(x, y)
}

func (e *exactFlux) Degree() int { return 6 }

// truth holds the terms of (E-ID) computed with the exact solution by a
// high-order rule: μ(v), μ*(y*), ∫D_G(∇v, y*), ∫ r(u − v), ‖∇(u − v)‖_α and,
// for α = 2 checks, the plain squares of Prager–Synge.
type truth struct {
	mu, dual, d, ru, norm float64
	ps                    [3]float64 // ‖∇(u−v)‖², ‖∇u − y‖², ‖∇v − y‖²
}

func exactTerms(s *fem.P1, G convex.Potential, m *manufactured, f func(x, y float64) float64, v []float64, y Flux) truth {
	return exactTermsOn(s, G, m, f, v, y, 0)
}

// subCells returns the sub-cells of the reference cell after the given
// number of uniform subdivisions.
func subCells(dim, levels int) []simplex {
	cells := []simplex{unitSimplex}
	for range levels {
		var next []simplex
		for _, c := range cells {
			ch, n := children(dim, c)
			next = append(next, ch[:n]...)
		}
		cells = next
	}
	return cells
}

// exactTermsOn is exactTerms with a composite rule: the high-order rule on
// every sub-cell of the given subdivision level of each cell (for
// integrands that are not smooth where y* or p* vanish).
func exactTermsOn(s *fem.P1, G convex.Potential, m *manufactured, f func(x, y float64) float64, v []float64, y Flux, levels int) truth {
	var rule fem.Rule
	if s.Mesh.Dim == 1 {
		rule = fem.Line(30)
	} else {
		rule = fem.Collapsed(14)
	}
	subs := subCells(s.Mesh.Dim, levels)
	frac := 1 / float64(len(subs))
	alpha := G.Growth()
	grad := make([][2]float64, s.Mesh.NumCells())
	s.Gradient(v, grad)
	var t truth
	for k, c := range s.Mesh.Cells {
		g := grad[k]
		for _, sc := range subs {
			for q, pt := range rule.Points {
				ref, scale := cellPoint(s.Mesh.Dim, pt)
				lam := sc.point(s.Mesh.Dim+1, ref)
				w := rule.Weights[q] * scale * s.Area[k] * frac
				x, yy := physical(s, k, lam)
				gu := m.grad(x, yy)
				ys, div := y.At(k, lam)
				vx := 0.0
				for a := range s.Mesh.Dim + 1 {
					vx += lam[a] * v[c[a]]
				}
				t.mu += w * convex.Gap(G, g, convex.Flux(G, gu))
				t.dual += w * convex.Gap(G, gu, ys)
				t.d += w * convex.Gap(G, g, ys)
				t.ru += w * (f(x, yy) + div) * (m.u(x, yy) - vx)
				e := math.Hypot(gu[0]-g[0], gu[1]-g[1])
				t.norm += w * math.Pow(e, alpha)
				t.ps[0] += w * e * e
				t.ps[1] += w * ((gu[0]-ys[0])*(gu[0]-ys[0]) + (gu[1]-ys[1])*(gu[1]-ys[1]))
				t.ps[2] += w * ((g[0]-ys[0])*(g[0]-ys[0]) + (g[1]-ys[1])*(g[1]-ys[1]))
			}
		}
	}
	t.norm = math.Pow(t.norm, 1/alpha)
	return t
}
