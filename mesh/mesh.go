// Package mesh builds conforming simplicial meshes of intervals and polygons,
// refines them (uniformly, keeping a hierarchy for multigrid, and by
// newest-vertex bisection for adaptivity) and answers geometric questions
// (cell diameters, mesh size, widths) that the error bounds need.
package mesh

import (
	"fmt"
	"math"
)

// Point is a node position. In 1-D, Y is zero.
type Point struct{ X, Y float64 }

// Mesh is a conforming mesh of an interval (Dim 1) or of a polygon (Dim 2).
//
// Cells hold Dim+1 node indices each; in 1-D the third entry is -1.
// Triangles are counter-clockwise, and vertex 0 is the newest vertex: the
// edge opposite it (vertices 1, 2) is the refinement edge of newest-vertex
// bisection.
type Mesh struct {
	Dim   int
	Nodes []Point
	Cells [][3]int32

	// Boundary marks the nodes on ∂Ω (Dirichlet nodes).
	Boundary []bool
	// BoundaryEdges lists the boundary edges (2-D) as node pairs with the
	// domain on their left; in 1-D it is empty.
	BoundaryEdges [][2]int32

	// Coarse is the mesh this one was refined from, or nil. Parents maps each
	// node of this mesh to the two nodes of Coarse whose midpoint it is
	// (both entries equal for a node that Coarse already had). Together they
	// define the prolongation of P1 functions used by multigrid.
	Coarse  *Mesh
	Parents [][2]int32
	// CellParent maps each cell of this mesh to the cell of Coarse it lies
	// in (nil when Coarse is nil); adaptive loops transfer cell data with it.
	CellParent []int32
}

// NumNodes returns the number of nodes.
func (m *Mesh) NumNodes() int { return len(m.Nodes) }

// NumCells returns the number of cells.
func (m *Mesh) NumCells() int { return len(m.Cells) }

// Vertices returns the Dim+1 vertex indices of cell k.
func (m *Mesh) Vertices(k int) []int32 { return m.Cells[k][:m.Dim+1] }

// Level returns the number of refinements between m and the coarsest mesh of
// its hierarchy.
func (m *Mesh) Level() int {
	l := 0
	for c := m.Coarse; c != nil; c = c.Coarse {
		l++
	}
	return l
}

// Area returns the length (1-D) or the area (2-D) of cell k.
func (m *Mesh) Area(k int) float64 {
	c := m.Cells[k]
	a, b := m.Nodes[c[0]], m.Nodes[c[1]]
	if m.Dim == 1 {
		return math.Abs(b.X - a.X)
	}
	d := m.Nodes[c[2]]
	return 0.5 * ((b.X-a.X)*(d.Y-a.Y) - (d.X-a.X)*(b.Y-a.Y))
}

// Edges numbers the edges of a 2-D mesh. It returns the edges as sorted node
// pairs (lower index first) and, for each cell, the edge opposite each of its
// three vertices. In 1-D the "edges" are the nodes and it returns nil.
func (m *Mesh) Edges() (edges [][2]int32, cellEdges [][3]int32) {
	if m.Dim != 2 {
		return nil, nil
	}
	_, edges, cellEdges = m.edgeTable()
	return edges, cellEdges
}

// edgeLookup finds the number of the edge {a, b}: the edges of each node
// to higher-numbered nodes sit in one short run of slots (compressed rows,
// no hashing: Refine and Bisect spend most of their time here).
type edgeLookup struct {
	start, other, id []int32
}

func (t *edgeLookup) find(a, b int32) int32 {
	if a > b {
		a, b = b, a
	}
	for s := t.start[a]; s < t.start[a+1]; s++ {
		if t.other[s] == b {
			return t.id[s]
		}
		if t.other[s] < 0 {
			break
		}
	}
	return -1
}

// edgeTable numbers the edges in the order of their first appearance in
// the cells.
func (m *Mesh) edgeTable() (t *edgeLookup, edges [][2]int32, cellEdges [][3]int32) {
	n := len(m.Nodes)
	t = &edgeLookup{start: make([]int32, n+1)}
	for _, c := range m.Cells {
		for i := range 3 {
			t.start[min(c[(i+1)%3], c[(i+2)%3])+1]++
		}
	}
	for i := 0; i < n; i++ {
		t.start[i+1] += t.start[i]
	}
	t.other = make([]int32, t.start[n])
	t.id = make([]int32, t.start[n])
	for i := range t.other {
		t.other[i] = -1
	}
	edges = make([][2]int32, 0, 3*len(m.Cells)/2+len(m.BoundaryEdges))
	cellEdges = make([][3]int32, len(m.Cells))
	for k, c := range m.Cells {
		for i := range 3 {
			a, b := c[(i+1)%3], c[(i+2)%3]
			if a > b {
				a, b = b, a
			}
			s := t.start[a]
			for t.other[s] >= 0 && t.other[s] != b {
				s++
			}
			if t.other[s] < 0 {
				t.other[s] = b
				t.id[s] = int32(len(edges))
				edges = append(edges, [2]int32{a, b})
			}
			cellEdges[k][i] = t.id[s]
		}
	}
	return t, edges, cellEdges
}

// Interval returns the uniform mesh of (a, b) with n cells.
func Interval(a, b float64, n int) (*Mesh, error) {
	if !(b > a) || math.IsInf(a, 0) || math.IsInf(b, 0) {
		return nil, fmt.Errorf("interval: need a < b, both finite; got (%g, %g)", a, b)
	}
	if n < 1 {
		return nil, fmt.Errorf("interval: need at least 1 cell, got %d", n)
	}
	if err := checkBudget(n+1, n); err != nil {
		return nil, err
	}
	m := &Mesh{Dim: 1, Nodes: make([]Point, n+1), Cells: make([][3]int32, n), Boundary: make([]bool, n+1)}
	for i := 0; i <= n; i++ {
		m.Nodes[i] = Point{X: a + (b-a)*float64(i)/float64(n)}
	}
	m.Nodes[n].X = b
	for i := 0; i < n; i++ {
		m.Cells[i] = [3]int32{int32(i), int32(i + 1), -1}
	}
	m.Boundary[0], m.Boundary[n] = true, true
	return m, nil
}

// Rectangle returns a mesh of [x0, x1] × [y0, y1] with nx × ny squares, each
// cut into two triangles along the diagonal from lower left to upper right.
// When nx and ny are even the rectangle with half as many squares per side
// is its Coarse mesh (recursively), as though it had been refined from it.
func Rectangle(x0, x1, y0, y1 float64, nx, ny int) (*Mesh, error) {
	if !(x1 > x0) || !(y1 > y0) || math.IsInf(x0, 0) || math.IsInf(x1, 0) || math.IsInf(y0, 0) || math.IsInf(y1, 0) {
		return nil, fmt.Errorf("rectangle: need x0 < x1 and y0 < y1, all finite; got [%g, %g] × [%g, %g]", x0, x1, y0, y1)
	}
	if nx < 1 || ny < 1 {
		return nil, fmt.Errorf("rectangle: need at least 1 cell per side, got %d × %d", nx, ny)
	}
	if err := checkBudget((nx+1)*(ny+1), 2*nx*ny); err != nil {
		return nil, err
	}
	m := &Mesh{Dim: 2}
	id := func(i, j int) int32 { return int32(j*(nx+1) + i) }
	for j := 0; j <= ny; j++ {
		for i := 0; i <= nx; i++ {
			m.Nodes = append(m.Nodes, Point{
				X: x0 + (x1-x0)*float64(i)/float64(nx),
				Y: y0 + (y1-y0)*float64(j)/float64(ny),
			})
		}
	}
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			a, b, c, d := id(i, j), id(i+1, j), id(i+1, j+1), id(i, j+1)
			// Newest vertex opposite the diagonal a–c, so bisection cuts it.
			m.Cells = append(m.Cells, [3]int32{b, c, a}, [3]int32{d, a, c})
		}
	}
	for i := 0; i < nx; i++ {
		m.BoundaryEdges = append(m.BoundaryEdges, [2]int32{id(i, 0), id(i+1, 0)}, [2]int32{id(i+1, ny), id(i, ny)})
	}
	for j := 0; j < ny; j++ {
		m.BoundaryEdges = append(m.BoundaryEdges, [2]int32{id(nx, j), id(nx, j+1)}, [2]int32{id(0, j+1), id(0, j)})
	}
	m.markBoundary()
	if nx%2 == 0 && ny%2 == 0 {
		c, err := Rectangle(x0, x1, y0, y1, nx/2, ny/2)
		if err != nil {
			return nil, err
		}
		m.coarsen(c, nx, ny)
	}
	return m, nil
}

// coarsen records the rectangle c of (nx/2) × (ny/2) squares as the coarse
// mesh of m, exactly as if m had been made from c by Refine (each node of m
// is a node or an edge midpoint of c, each cell lies in one cell of c), but
// with the row-by-row numbering of Rectangle. Multigrid and nested
// iteration then see a hierarchy on rectangles too, and their iteration
// counts stay independent of h.
func (m *Mesh) coarsen(c *Mesh, nx, ny int) {
	cx := nx / 2
	cid := func(i, j int) int32 { return int32(j*(cx+1) + i) }
	m.Coarse = c
	m.Parents = make([][2]int32, len(m.Nodes))
	for j := 0; j <= ny; j++ {
		for i := 0; i <= nx; i++ {
			// The diagonal of a coarse square runs from its lower left to
			// its upper right corner, so a node in the middle of the square
			// is the midpoint of that diagonal.
			m.Parents[j*(nx+1)+i] = [2]int32{cid(i/2, j/2), cid((i+1)/2, (j+1)/2)}
		}
	}
	m.CellParent = make([]int32, len(m.Cells))
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			sq := int32(2 * ((j/2)*cx + i/2))
			lower, upper := sq, sq+1 // coarse cells below and above the diagonal
			switch di, dj := i%2, j%2; {
			case di > dj:
				upper = sq
			case di < dj:
				lower = sq + 1
			}
			k := 2 * (j*nx + i)
			m.CellParent[k], m.CellParent[k+1] = lower, upper
		}
	}
}

func (m *Mesh) markBoundary() {
	m.Boundary = make([]bool, len(m.Nodes))
	for _, e := range m.BoundaryEdges {
		m.Boundary[e[0]], m.Boundary[e[1]] = true, true
	}
}

// MaxNodes is the largest mesh the package builds: a P1 solve on it needs
// about 1 KB per node for the matrices, the multigrid hierarchy and the
// error bounds, and WebAssembly has under 4 GB of memory.
const MaxNodes = 3_000_000

func checkBudget(nodes, cells int) error {
	if nodes > MaxNodes || nodes < 0 || cells < 0 {
		return fmt.Errorf("mesh too large: %d nodes requested, the limit is %d (about 1 KB per node for solve and bounds; WebAssembly has under 4 GB)", nodes, MaxNodes)
	}
	return nil
}

// Refine returns the uniform refinement of m: every interval is halved,
// every triangle is cut into four by its edge midpoints (red refinement).
// The result keeps m as its Coarse mesh, with Parents for the prolongation;
// cell k of m becomes cells 4k…4k+3 (2k, 2k+1 in 1-D). The children are
// labelled so that later newest-vertex bisection (Bisect) sees the same
// similarity classes as on m. The nodes of m come first, then the edge
// midpoints; but a 2-D result of 16384 nodes or more is numbered in the order
// the cells first reach its nodes (node 0 of m stays node 0), so that
// neighbouring nodes lie close together in memory. Either way Parents names
// the node (or edge) of m that each fine node comes from.
func (m *Mesh) Refine() (*Mesh, error) {
	if m.Dim == 1 {
		return m.refine1()
	}
	lookup, edges, cellEdges := m.edgeTable()
	nv := len(m.Nodes)
	if err := checkBudget(nv+len(edges), 4*len(m.Cells)); err != nil {
		return nil, err
	}
	f := &Mesh{Dim: 2, Coarse: m}
	f.Nodes = make([]Point, nv+len(edges))
	copy(f.Nodes, m.Nodes)
	f.Parents = make([][2]int32, nv+len(edges))
	for i := 0; i < nv; i++ {
		f.Parents[i] = [2]int32{int32(i), int32(i)}
	}
	for e, ab := range edges {
		p, q := m.Nodes[ab[0]], m.Nodes[ab[1]]
		f.Nodes[nv+e] = Point{(p.X + q.X) / 2, (p.Y + q.Y) / 2}
		f.Parents[nv+e] = ab
	}
	f.Cells = make([][3]int32, 0, 4*len(m.Cells))
	f.CellParent = make([]int32, 0, 4*len(m.Cells))
	for k, c := range m.Cells {
		// mid[i] is the midpoint of the edge opposite vertex i.
		var mid [3]int32
		for i := range 3 {
			mid[i] = int32(nv) + cellEdges[k][i]
		}
		// Each child is the image of the parent under a similarity (the three
		// homotheties of ratio 1/2 at the corners, the point reflection of
		// ratio −1/2 for the middle one) and inherits the parent's labelling
		// through it: the newest vertex of a child is the image of the
		// parent's. So the children fall into the parent's similarity classes
		// of newest-vertex bisection (Sewell 1972; Mitchell 1991), and a
		// compatible labelling stays compatible: the middle child and the
		// corner child at c[0] share their refinement edge, and the two halves
		// of the parent's refinement edge are refinement edges of the corner
		// children at c[1] and c[2].
		f.Cells = append(f.Cells,
			[3]int32{c[0], mid[2], mid[1]},
			[3]int32{mid[2], c[1], mid[0]},
			[3]int32{mid[1], mid[0], c[2]},
			[3]int32{mid[0], mid[1], mid[2]},
		)
		f.CellParent = append(f.CellParent, int32(k), int32(k), int32(k), int32(k))
	}
	f.BoundaryEdges = make([][2]int32, 0, 2*len(m.BoundaryEdges))
	for _, be := range m.BoundaryEdges {
		a, b := be[0], be[1]
		e := lookup.find(a, b)
		if e < 0 {
			return nil, fmt.Errorf("refine: boundary edge %v is not an edge of any cell", be)
		}
		mid := int32(nv) + e
		f.BoundaryEdges = append(f.BoundaryEdges, [2]int32{a, mid}, [2]int32{mid, b})
	}
	f.renumber()
	f.markBoundary()
	return f, nil
}

func (m *Mesh) refine1() (*Mesh, error) {
	nv, nc := len(m.Nodes), len(m.Cells)
	if err := checkBudget(nv+nc, 2*nc); err != nil {
		return nil, err
	}
	f := &Mesh{Dim: 1, Coarse: m, Nodes: make([]Point, nv+nc), Parents: make([][2]int32, nv+nc)}
	copy(f.Nodes, m.Nodes)
	for i := 0; i < nv; i++ {
		f.Parents[i] = [2]int32{int32(i), int32(i)}
	}
	for k, c := range m.Cells {
		mid := int32(nv + k)
		f.Nodes[mid] = Point{X: (m.Nodes[c[0]].X + m.Nodes[c[1]].X) / 2}
		f.Parents[mid] = [2]int32{c[0], c[1]}
		f.Cells = append(f.Cells, [3]int32{c[0], mid, -1}, [3]int32{mid, c[1], -1})
		f.CellParent = append(f.CellParent, int32(k), int32(k))
	}
	f.Boundary = make([]bool, len(f.Nodes))
	copy(f.Boundary, m.Boundary)
	return f, nil
}
