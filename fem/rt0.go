package fem

import (
	"fmt"
	"math"
	"sync"

	"gapbook/mesh"
)

// edgeTopology is the global edge numbering of a triangle mesh with, per
// cell, the orientation of each edge relative to its global normal.
type edgeTopology struct {
	Edges     [][2]int32 // node pairs, lower index first
	CellEdges [][3]int32 // edge opposite each vertex of each cell
	// Sign[k][i] is +1 when the global normal of the edge opposite vertex i
	// points out of cell k, −1 otherwise.
	Sign [][3]int8
	// OnBoundary marks the edges that belong to one cell only.
	OnBoundary []bool
	Length     []float64
	area       []float64 // cell areas, from the orientation determinants
}

func newEdgeTopology(m *mesh.Mesh) (*edgeTopology, error) {
	if m == nil || m.Dim != 2 {
		return nil, fmt.Errorf("edge elements need a 2-D triangle mesh")
	}
	t := &edgeTopology{}
	t.Edges, t.CellEdges = m.Edges()
	t.Sign = make([][3]int8, m.NumCells())
	t.Length = make([]float64, len(t.Edges))
	count := make([]int8, len(t.Edges))
	t.area = make([]float64, m.NumCells())
	for e, ab := range t.Edges {
		p, q := m.Nodes[ab[0]], m.Nodes[ab[1]]
		t.Length[e] = math.Hypot(q.X-p.X, q.Y-p.Y)
	}
	for k, c := range m.Cells {
		p0, p1, p2 := m.Nodes[c[0]], m.Nodes[c[1]], m.Nodes[c[2]]
		det := (p1.X-p0.X)*(p2.Y-p0.Y) - (p2.X-p0.X)*(p1.Y-p0.Y)
		if !(math.Abs(det) > 0) {
			return nil, fmt.Errorf("cell %d (nodes %d, %d, %d) is degenerate", k, c[0], c[1], c[2])
		}
		t.area[k] = math.Abs(det) / 2
		for i := range 3 {
			// The global normal of edge (a, b), a < b, is (b − a) turned
			// clockwise; it points out of a counter-clockwise cell that runs
			// along the edge from a to b.
			s := int8(1)
			if c[(i+1)%3] > c[(i+2)%3] {
				s = -1
			}
			if det < 0 {
				s = -s
			}
			t.Sign[k][i] = s
			count[t.CellEdges[k][i]]++
		}
	}
	t.OnBoundary = make([]bool, len(t.Edges))
	for e, n := range count {
		t.OnBoundary[e] = n == 1
	}
	return t, nil
}

// Normal returns the global unit normal of edge e: the edge direction from
// its lower to its higher node index, turned clockwise by 90°.
func (t *edgeTopology) Normal(m *mesh.Mesh, e int) (nx, ny float64) {
	p, q := m.Nodes[t.Edges[e][0]], m.Nodes[t.Edges[e][1]]
	l := t.Length[e]
	return (q.Y - p.Y) / l, -(q.X - p.X) / l
}

// RT0 is the lowest-order Raviart–Thomas space on a triangle mesh
// (Raviart & Thomas 1977; Brezzi & Fortin, Mixed and Hybrid Finite Element
// Methods, 1991, §III.3). The degree of freedom of edge e is the flux
// ∫_e y·n_e through it along its global normal n_e (see Normal). On cell T
// the basis function of the edge opposite vertex P_i is
// ψ_i(x) = s_i (x − P_i) / (2|T|), s_i = ±1 the orientation sign, so that
// div ψ_i = s_i / |T|.
type RT0 struct {
	Mesh *mesh.Mesh
	edgeTopology
	Area []float64

	// The pattern of RT0 matrices is built on first use: callers that need
	// only the edges and the basis (flux reconstructions) never pay for it.
	once    sync.Once
	pattern *CSR
	pos     [][9]int32
}

// NewRT0 numbers the edges of m and prepares the RT0 basis; the sparsity
// pattern of RT0 matrices (edges sharing a cell) follows on the first
// NewMatrix or Mass.
func NewRT0(m *mesh.Mesh) (*RT0, error) {
	t, err := newEdgeTopology(m)
	if err != nil {
		return nil, fmt.Errorf("rt0 space: %w", err)
	}
	return &RT0{Mesh: m, edgeTopology: *t, Area: t.area}, nil
}

// matrixPattern returns the pattern of RT0 matrices and the positions of
// the local entries of every cell, building them once.
func (r *RT0) matrixPattern() (*CSR, [][9]int32) {
	r.once.Do(func() {
		all := make([]int32, len(r.Edges))
		for i := range all {
			all[i] = int32(i)
		}
		r.pattern, r.pos = cellPattern(r.CellEdges, 3, len(r.Edges), all, all)
	})
	return r.pattern, r.pos
}

// NumEdges returns the number of edges, the dimension of the space.
func (r *RT0) NumEdges() int { return len(r.Edges) }

// Eval returns the value at (x, y) of the RT0 field with edge fluxes coef,
// using its polynomial on cell k.
func (r *RT0) Eval(k int, coef []float64, x, y float64) (vx, vy float64) {
	c := r.Mesh.Cells[k]
	for i := range 3 {
		p := r.Mesh.Nodes[c[i]]
		w := float64(r.Sign[k][i]) * coef[r.CellEdges[k][i]] / (2 * r.Area[k])
		vx += w * (x - p.X)
		vy += w * (y - p.Y)
	}
	return vx, vy
}

// Div sets dst[k] to the (constant) divergence of the RT0 field with edge
// fluxes coef on cell k: the net outward flux over |T|.
func (r *RT0) Div(coef, dst []float64) {
	for k := range r.Mesh.Cells {
		s := 0.0
		for i := range 3 {
			s += float64(r.Sign[k][i]) * coef[r.CellEdges[k][i]]
		}
		dst[k] = s / r.Area[k]
	}
}

// Interpolate sets dst[e] to the flux ∫_e f·n_e of the vector field f
// through every edge, by Gauss–Legendre quadrature exact to the given
// degree along the edge: the canonical RT0 interpolant, which commutes with
// the divergence (div Π f = cell mean of div f).
func (r *RT0) Interpolate(f func(x, y float64) (fx, fy float64), degree int, dst []float64) {
	rule := Line(degree)
	for e, ab := range r.Edges {
		p, q := r.Mesh.Nodes[ab[0]], r.Mesh.Nodes[ab[1]]
		nx, ny := r.Normal(r.Mesh, e)
		s := 0.0
		for j, pt := range rule.Points {
			t := pt[0]
			fx, fy := f(p.X+t*(q.X-p.X), p.Y+t*(q.Y-p.Y))
			s += rule.Weights[j] * (fx*nx + fy*ny)
		}
		dst[e] = s * r.Length[e]
	}
}

// NewMatrix returns a zero edge-by-edge matrix with the RT0 pattern.
func (r *RT0) NewMatrix() *CSR {
	p, _ := r.matrixPattern()
	return &CSR{Rows: p.Rows, Cols: p.Cols, RowPtr: p.RowPtr, Col: p.Col, Val: make([]float64, len(p.Col))}
}

// Mass assembles M_ef = Σ_T ∫_T ψ_e · W_T ψ_f into a (from NewMatrix) with a
// symmetric weight W_T = (xx, xy, yy) per cell (nil: identity), the flux
// block of a mixed problem (for a nonlinear dual problem, W_T = D²G* at the
// current flux). The cell integrals of the quadratic integrand are exact by
// the edge-midpoint rule.
func (r *RT0) Mass(weight [][3]float64, a *CSR) error {
	pat, pos := r.matrixPattern()
	if a == nil || len(a.Val) != len(pat.Col) {
		return fmt.Errorf("rt0 mass: the matrix must come from NewMatrix of this space (%d entries)", len(pat.Col))
	}
	if weight != nil && len(weight) != len(r.Area) {
		return fmt.Errorf("rt0 mass: %d weights for %d cells", len(weight), len(r.Area))
	}
	clear(a.Val)
	for k, c := range r.Mesh.Cells {
		w := [3]float64{1, 0, 1}
		if weight != nil {
			w = weight[k]
		}
		var pts [3]mesh.Point
		for i := range 3 {
			pts[i] = r.Mesh.Nodes[c[i]]
		}
		var mid [3][2]float64
		for i := range 3 {
			a, b := pts[(i+1)%3], pts[(i+2)%3]
			mid[i] = [2]float64{(a.X + b.X) / 2, (a.Y + b.Y) / 2}
		}
		scale := 1 / (4 * r.Area[k] * r.Area[k]) * r.Area[k] / 3
		for i := range 3 {
			for j := range 3 {
				s := 0.0
				for _, m := range mid {
					ux, uy := m[0]-pts[i].X, m[1]-pts[i].Y
					vx, vy := m[0]-pts[j].X, m[1]-pts[j].Y
					s += ux*(w[0]*vx+w[1]*vy) + uy*(w[1]*vx+w[2]*vy)
				}
				a.Val[pos[k][3*i+j]] += float64(r.Sign[k][i]*r.Sign[k][j]) * scale * s
			}
		}
	}
	return nil
}

// DivMatrix returns B with B_{T,e} = ∫_T div ψ_e = ±1 (cells × edges): for
// cellwise constant q, qᵀ B y = ∫ q div y, the constraint block of a mixed
// problem.
func (r *RT0) DivMatrix() *CSR {
	nc := r.Mesh.NumCells()
	b := &CSR{Rows: nc, Cols: len(r.Edges), RowPtr: make([]int32, nc+1), Col: make([]int32, 0, 3*nc), Val: make([]float64, 0, 3*nc)}
	for k := range nc {
		type ent struct {
			e int32
			s float64
		}
		var es [3]ent
		for i := range 3 {
			es[i] = ent{r.CellEdges[k][i], float64(r.Sign[k][i])}
		}
		// Columns sorted within the row.
		for i := 1; i < 3; i++ {
			for j := i; j > 0 && es[j].e < es[j-1].e; j-- {
				es[j], es[j-1] = es[j-1], es[j]
			}
		}
		for _, x := range es {
			b.Col = append(b.Col, x.e)
			b.Val = append(b.Val, x.s)
		}
		b.RowPtr[k+1] = int32(len(b.Col))
	}
	return b
}
