package fem

import (
	"fmt"
	"math"

	"gapbook/mesh"
)

// P1 is the space of continuous piecewise linear functions on a mesh of an
// interval or a polygon, with homogeneous Dirichlet conditions at the
// boundary nodes for its linear systems.
//
// Nodal vectors (length NumNodes) hold values at every node; free vectors
// (length NumFree) hold the values at the non-boundary nodes only, so that
// stiffness matrices on them are symmetric positive definite. Free maps a
// node to its free index (−1 on the boundary) and FreeNodes back.
type P1 struct {
	Mesh *mesh.Mesh
	// Area is the length (1-D) or area (2-D) of each cell.
	Area []float64
	// Grad holds the gradients of the barycentric coordinates of each
	// cell's vertices (in 1-D entries 0 and 1, y components zero).
	Grad      [][3][2]float64
	Free      []int32
	FreeNodes []int32

	pattern *CSR
	pos     [][9]int32 // position in Val of local entry (a, b), −1 if not free
}

// NewP1 precomputes cell geometry, the free-node numbering and the sparsity
// pattern of P1 matrices (node adjacency) on m.
func NewP1(m *mesh.Mesh) (*P1, error) {
	if m == nil || (m.Dim != 1 && m.Dim != 2) {
		return nil, fmt.Errorf("p1 space: need a 1-D or 2-D mesh")
	}
	area, grad, err := geometry(m)
	if err != nil {
		return nil, fmt.Errorf("p1 space: %w", err)
	}
	s := &P1{Mesh: m, Area: area, Grad: grad}
	s.Free, s.FreeNodes = freeMap(m)
	s.pattern, s.pos = cellPattern(m.Cells, m.Dim+1, m.NumNodes(), s.Free, s.FreeNodes)
	return s, nil
}

// WithBoundary returns the P1 space on m, a copy of s.Mesh that shares its
// Nodes and Cells slices but marks other boundary nodes (or carries another
// hierarchy): the free numbering and the pattern are new, the cell geometry
// is that of s. When m does not share the nodes and cells of s.Mesh it is
// NewP1(m).
func (s *P1) WithBoundary(m *mesh.Mesh) (*P1, error) {
	o := s.Mesh
	if m == nil || o == nil || m.Dim != o.Dim || len(m.Cells) != len(o.Cells) || len(m.Nodes) != len(o.Nodes) ||
		len(m.Cells) == 0 || &m.Cells[0] != &o.Cells[0] || &m.Nodes[0] != &o.Nodes[0] {
		return NewP1(m)
	}
	t := &P1{Mesh: m, Area: s.Area, Grad: s.Grad}
	t.Free, t.FreeNodes = freeMap(m)
	t.pattern, t.pos = cellPattern(m.Cells, m.Dim+1, m.NumNodes(), t.Free, t.FreeNodes)
	return t, nil
}

// geometry returns the cell sizes and the gradients of the barycentric
// coordinates of every cell.
func geometry(m *mesh.Mesh) ([]float64, [][3][2]float64, error) {
	nc := m.NumCells()
	area, grad := make([]float64, nc), make([][3][2]float64, nc)
	for k, c := range m.Cells {
		if m.Dim == 1 {
			h := m.Nodes[c[1]].X - m.Nodes[c[0]].X
			if h == 0 || math.IsNaN(h) {
				return nil, nil, fmt.Errorf("cell %d has zero length", k)
			}
			area[k] = math.Abs(h)
			grad[k][0][0], grad[k][1][0] = -1/h, 1/h
			continue
		}
		p0, p1, p2 := m.Nodes[c[0]], m.Nodes[c[1]], m.Nodes[c[2]]
		det := (p1.X-p0.X)*(p2.Y-p0.Y) - (p2.X-p0.X)*(p1.Y-p0.Y)
		if !(math.Abs(det) > 0) {
			return nil, nil, fmt.Errorf("cell %d (nodes %d, %d, %d) is degenerate", k, c[0], c[1], c[2])
		}
		area[k] = math.Abs(det) / 2
		// ∇λ_i is the inward normal of the opposite edge over twice the area:
		// the edge vector rotated by 90°, divided by the determinant.
		grad[k][0] = [2]float64{(p1.Y - p2.Y) / det, (p2.X - p1.X) / det}
		grad[k][1] = [2]float64{(p2.Y - p0.Y) / det, (p0.X - p2.X) / det}
		grad[k][2] = [2]float64{(p0.Y - p1.Y) / det, (p1.X - p0.X) / det}
	}
	return area, grad, nil
}

func freeMap(m *mesh.Mesh) (free, nodes []int32) {
	free = make([]int32, m.NumNodes())
	for i := range free {
		if i < len(m.Boundary) && m.Boundary[i] {
			free[i] = -1
			continue
		}
		free[i] = int32(len(nodes))
		nodes = append(nodes, int32(i))
	}
	return free, nodes
}

// cellPattern builds the pattern of a space with nv degrees of freedom per
// cell (cells[k][:nv], ndof in all, rows in free numbering) and, for each
// cell, the positions of its local entries. Rows are gathered from a
// dof → cells incidence built by counting: one pass counts the distinct
// columns of each row (a stamp per column), the second fills them, sorts
// the short row by insertion and records where each column went, so the
// local positions need no search and nothing grows by appending.
func cellPattern(cells [][3]int32, nv, nn int, free, freeNodes []int32) (*CSR, [][9]int32) {
	start := make([]int32, nn+1)
	for _, c := range cells {
		for a := range nv {
			start[c[a]+1]++
		}
	}
	for i := range nn {
		start[i+1] += start[i]
	}
	inc := make([]int32, start[nn])
	next := append([]int32(nil), start[:nn]...)
	for k, c := range cells {
		for a := range nv {
			inc[next[c[a]]] = int32(k)
			next[c[a]]++
		}
	}
	nr := len(freeNodes)
	pat := &CSR{Rows: nr, Cols: nr, RowPtr: make([]int32, nr+1)}
	// where[f] is the position of column f in the latest row that holds
	// it; rows are filled in order, so where[f] < lo means "not yet in
	// the row starting at lo".
	where := make([]int32, nr)
	for i := range where {
		where[i] = -1
	}
	for i, node := range freeNodes {
		n := int32(0)
		for _, k := range inc[start[node]:start[node+1]] {
			for _, v := range cells[k][:nv] {
				if f := free[v]; f >= 0 && where[f] != int32(i) {
					where[f] = int32(i)
					n++
				}
			}
		}
		pat.RowPtr[i+1] = pat.RowPtr[i] + n
	}
	for i := range where {
		where[i] = -1
	}
	pat.Col = make([]int32, pat.RowPtr[nr])
	pos := make([][9]int32, len(cells))
	for k := range pos {
		for j := range pos[k] {
			pos[k][j] = -1
		}
	}
	for i, node := range freeNodes {
		lo, end := pat.RowPtr[i], pat.RowPtr[i]
		cs := inc[start[node]:start[node+1]]
		for _, k := range cs {
			for _, v := range cells[k][:nv] {
				if f := free[v]; f >= 0 && where[f] < lo {
					where[f] = lo
					pat.Col[end] = f
					end++
				}
			}
		}
		row := pat.Col[lo:end]
		for a := 1; a < len(row); a++ {
			for b := a; b > 0 && row[b] < row[b-1]; b-- {
				row[b], row[b-1] = row[b-1], row[b]
			}
		}
		for p, f := range row {
			where[f] = lo + int32(p)
		}
		for _, k := range cs {
			c := &cells[k]
			for a := range nv {
				if c[a] != node {
					continue
				}
				for b := range nv {
					if f := free[c[b]]; f >= 0 {
						pos[k][3*a+b] = where[f]
					}
				}
			}
		}
	}
	return pat, pos
}

// NumFree returns the number of free (non-boundary) nodes.
func (s *P1) NumFree() int { return len(s.FreeNodes) }

// NumNodes returns the number of nodes.
func (s *P1) NumNodes() int { return s.Mesh.NumNodes() }

// NewMatrix returns a zero matrix on the free nodes with the P1 pattern.
// Matrices from one space share their pattern arrays; only Val is new.
func (s *P1) NewMatrix() *CSR {
	p := s.pattern
	return &CSR{Rows: p.Rows, Cols: p.Cols, RowPtr: p.RowPtr, Col: p.Col, Val: make([]float64, len(p.Col))}
}

func (s *P1) checkMatrix(a *CSR) error {
	if a == nil || len(a.Val) != len(s.pattern.Col) || a.Rows != s.pattern.Rows {
		return fmt.Errorf("p1 assembly: the matrix must come from NewMatrix of this space (%d free nodes, %d entries)", s.NumFree(), len(s.pattern.Col))
	}
	return nil
}

// local returns the element stiffness entry |T| ∇λ_a · C ∇λ_b for the
// symmetric coefficient C = (xx, xy, yy) (nil: identity).
func (s *P1) local(k, a, b int, c *[3]float64) float64 {
	ga, gb := &s.Grad[k][a], &s.Grad[k][b]
	if c == nil {
		return s.Area[k] * (ga[0]*gb[0] + ga[1]*gb[1])
	}
	return s.Area[k] * (ga[0]*(c[0]*gb[0]+c[1]*gb[1]) + ga[1]*(c[1]*gb[0]+c[2]*gb[1]))
}

// Stiffness assembles A_ij = Σ_T ∫_T ∇φ_i · C_T ∇φ_j on the free nodes into
// a (from NewMatrix), with one symmetric coefficient C_T = (xx, xy, yy) per
// cell; in 1-D only xx is used. coef == nil means C = identity (the
// Laplacian). One pass over the cells with precomputed positions: no
// allocation, no search.
func (s *P1) Stiffness(coef [][3]float64, a *CSR) error {
	if err := s.checkMatrix(a); err != nil {
		return err
	}
	if coef != nil && len(coef) != len(s.Area) {
		return fmt.Errorf("p1 stiffness: %d coefficients for %d cells", len(coef), len(s.Area))
	}
	clear(a.Val)
	nv := s.Mesh.Dim + 1
	val := a.Val
	for k := range s.pos {
		pos := &s.pos[k]
		g := &s.Grad[k]
		c := [3]float64{1, 0, 1}
		if coef != nil {
			c = coef[k]
		}
		ar := s.Area[k]
		for i := range nv {
			// |T| C∇λ_i, then its products with every ∇λ_j.
			cx := ar * (c[0]*g[i][0] + c[1]*g[i][1])
			cy := ar * (c[1]*g[i][0] + c[2]*g[i][1])
			for j := range nv {
				if p := pos[3*i+j]; p >= 0 {
					val[p] += cx*g[j][0] + cy*g[j][1]
				}
			}
		}
	}
	return nil
}

// Mass assembles M_ij = ∫ φ_i φ_j on the free nodes into a (exact element
// mass matrices: |T|(1 + δ_ij)/12 on triangles, |T|(1 + δ_ij)/6 on
// intervals).
func (s *P1) Mass(a *CSR) error {
	if err := s.checkMatrix(a); err != nil {
		return err
	}
	clear(a.Val)
	nv := s.Mesh.Dim + 1
	den := 12.0
	if nv == 2 {
		den = 6
	}
	for k := range s.pos {
		for i := range nv {
			for j := range nv {
				if p := s.pos[k][3*i+j]; p >= 0 {
					w := s.Area[k] / den
					if i == j {
						w *= 2
					}
					a.Val[p] += w
				}
			}
		}
	}
	return nil
}

// Lift adds −Σ_j A_ij g_j over the boundary nodes j to the free vector dst,
// for the stiffness matrix with coefficients coef: the right-hand side
// change that moves nonzero Dirichlet values g (a nodal vector; only its
// boundary entries are read) to the free unknowns.
func (s *P1) Lift(coef [][3]float64, g, dst []float64) {
	nv := s.Mesh.Dim + 1
	for k, c := range s.Mesh.Cells {
		var ck *[3]float64
		if coef != nil {
			ck = &coef[k]
		}
		for i := range nv {
			fi := s.Free[c[i]]
			if fi < 0 {
				continue
			}
			for j := range nv {
				if s.Free[c[j]] < 0 {
					dst[fi] -= s.local(k, i, j, ck) * g[c[j]]
				}
			}
		}
	}
}

// Gradient sets dst[k] to the (constant) gradient of the P1 function with
// nodal values u on cell k; in 1-D dst[k][1] = 0.
func (s *P1) Gradient(u []float64, dst [][2]float64) {
	nv := s.Mesh.Dim + 1
	for k, c := range s.Mesh.Cells {
		var gx, gy float64
		for a := range nv {
			gx += u[c[a]] * s.Grad[k][a][0]
			gy += u[c[a]] * s.Grad[k][a][1]
		}
		dst[k] = [2]float64{gx, gy}
	}
}

// FluxLoad adds Σ_T |T| σ_T · ∇φ_i = ∫ σ · ∇φ_i to the nodal vector dst for a
// cellwise constant vector field σ (the internal force term of a Newton
// residual ∫ DG(∇v) · ∇φ_i).
func (s *P1) FluxLoad(sigma [][2]float64, dst []float64) {
	nv := s.Mesh.Dim + 1
	for k, c := range s.Mesh.Cells {
		for a := range nv {
			dst[c[a]] += s.Area[k] * (sigma[k][0]*s.Grad[k][a][0] + sigma[k][1]*s.Grad[k][a][1])
		}
	}
}

// Rule returns the quadrature rule on the reference cell of this mesh that
// is exact to the given degree (Gauss–Legendre in 1-D, Triangle in 2-D).
func (s *P1) Rule(degree int) Rule {
	if s.Mesh.Dim == 1 {
		return Line(degree)
	}
	return Triangle(degree)
}

// mapPoint returns the physical point of reference point p in cell k, the
// barycentric coordinates and the quadrature weight scale (|T| / |T_ref|).
func (s *P1) mapPoint(k int, p [2]float64) (x, y float64, lam [3]float64, scale float64) {
	c := s.Mesh.Cells[k]
	n := s.Mesh.Nodes
	if s.Mesh.Dim == 1 {
		x = n[c[0]].X + p[0]*(n[c[1]].X-n[c[0]].X)
		return x, 0, [3]float64{1 - p[0], p[0], 0}, s.Area[k]
	}
	p0, p1, p2 := n[c[0]], n[c[1]], n[c[2]]
	x = p0.X + p[0]*(p1.X-p0.X) + p[1]*(p2.X-p0.X)
	y = p0.Y + p[0]*(p1.Y-p0.Y) + p[1]*(p2.Y-p0.Y)
	return x, y, [3]float64{1 - p[0] - p[1], p[0], p[1]}, 2 * s.Area[k]
}

// QuadPoints fills dst[k·r.Len() + q] with the physical position of
// quadrature point q of cell k (dst needs NumCells·r.Len() entries), for
// callers that evaluate data at all points in one sweep.
func (s *P1) QuadPoints(r Rule, dst []mesh.Point) {
	nq := r.Len()
	for k := range s.Area {
		for q, p := range r.Points {
			x, y, _, _ := s.mapPoint(k, p)
			dst[k*nq+q] = mesh.Point{X: x, Y: y}
		}
	}
}

// Load adds ∫ f φ_i to the nodal vector dst, by the rule r on every cell.
func (s *P1) Load(f func(x, y float64) float64, r Rule, dst []float64) {
	nv := s.Mesh.Dim + 1
	for k, c := range s.Mesh.Cells {
		for q, p := range r.Points {
			x, y, lam, scale := s.mapPoint(k, p)
			fw := f(x, y) * r.Weights[q] * scale
			for a := range nv {
				dst[c[a]] += fw * lam[a]
			}
		}
	}
}

// Sample sets dst[k·r.Len() + q] to f at quadrature point q of cell k, in
// the order of QuadPoints (for LoadValues, and for error bounds that
// integrate f on the same points).
func (s *P1) Sample(f func(x, y float64) float64, r Rule, dst []float64) {
	nq := r.Len()
	for k := range s.Area {
		for q, p := range r.Points {
			x, y, _, _ := s.mapPoint(k, p)
			dst[k*nq+q] = f(x, y)
		}
	}
}

// LoadValues is Load with f given by its values at the quadrature points
// (vals[k·r.Len() + q], in the order of QuadPoints).
func (s *P1) LoadValues(r Rule, vals, dst []float64) {
	nv := s.Mesh.Dim + 1
	nq := r.Len()
	for k, c := range s.Mesh.Cells {
		for q, p := range r.Points {
			_, _, lam, scale := s.mapPoint(k, p)
			fw := vals[k*nq+q] * r.Weights[q] * scale
			for a := range nv {
				dst[c[a]] += fw * lam[a]
			}
		}
	}
}

// Interpolate sets the nodal vector dst to the values of f at the nodes.
func (s *P1) Interpolate(f func(x, y float64) float64, dst []float64) {
	for i, p := range s.Mesh.Nodes {
		dst[i] = f(p.X, p.Y)
	}
}

// ToFree copies the free entries of the nodal vector u into free.
func (s *P1) ToFree(u, free []float64) {
	for i, n := range s.FreeNodes {
		free[i] = u[n]
	}
}

// FromFree copies the free vector free into the free entries of the nodal
// vector u; boundary entries of u are left as they are.
func (s *P1) FromFree(free, u []float64) {
	for i, n := range s.FreeNodes {
		u[n] = free[i]
	}
}

// L2Error returns ‖u − exact‖_{L²} for the P1 function with nodal values u,
// by the rule r on every cell.
func (s *P1) L2Error(u []float64, exact func(x, y float64) float64, r Rule) float64 {
	nv := s.Mesh.Dim + 1
	sum := 0.0
	for k, c := range s.Mesh.Cells {
		for q, p := range r.Points {
			x, y, lam, scale := s.mapPoint(k, p)
			uh := 0.0
			for a := range nv {
				uh += lam[a] * u[c[a]]
			}
			d := uh - exact(x, y)
			sum += r.Weights[q] * scale * d * d
		}
	}
	return math.Sqrt(sum)
}

// H1Error returns the seminorm ‖∇u − ∇exact‖_{L²} for the P1 function with
// nodal values u, given the exact gradient, by the rule r on every cell.
func (s *P1) H1Error(u []float64, grad func(x, y float64) (gx, gy float64), r Rule) float64 {
	nv := s.Mesh.Dim + 1
	sum := 0.0
	for k, c := range s.Mesh.Cells {
		var ux, uy float64
		for a := range nv {
			ux += u[c[a]] * s.Grad[k][a][0]
			uy += u[c[a]] * s.Grad[k][a][1]
		}
		for q, p := range r.Points {
			x, y, _, scale := s.mapPoint(k, p)
			gx, gy := grad(x, y)
			if s.Mesh.Dim == 1 {
				gy = 0
			}
			sum += r.Weights[q] * scale * ((ux-gx)*(ux-gx) + (uy-gy)*(uy-gy))
		}
	}
	return math.Sqrt(sum)
}
