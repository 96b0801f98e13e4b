package mesh

import (
	"fmt"
	"math"
	"sort"
)

// LShape returns the mesh of the L-shaped domain (−1,1)² \ [0,1)×(−1,0]
// (the placement of docs/checks.md item 3), re-entrant corner at the origin,
// with n × n squares per unit square, each cut into two triangles along the
// diagonal from lower left to upper right. When n has a factor 2^k the mesh
// is built as k uniform refinements of a coarser one, so multigrid gets the
// hierarchy through Coarse.
func LShape(n int) (*Mesh, error) {
	if n < 1 {
		return nil, fmt.Errorf("L-shape: need at least 1 cell per unit length, got %d", n)
	}
	if n > 1<<20 {
		return nil, fmt.Errorf("mesh too large: L-shape with %d cells per unit length, the limit is %d nodes (about 1 KB per node for solve and bounds; WebAssembly has under 4 GB)", n, MaxNodes)
	}
	if err := checkBudget(3*n*n+4*n+1, 6*n*n); err != nil {
		return nil, fmt.Errorf("L-shape: %w", err)
	}
	k := 0
	for n%2 == 0 {
		n /= 2
		k++
	}
	m := grid(-1, -1, 1/float64(n), 2*n, 2*n, func(i, j int) bool { return i < n || j >= n })
	for ; k > 0; k-- {
		var err error
		if m, err = m.Refine(); err != nil {
			return nil, err
		}
	}
	return m, nil
}

// grid meshes the union of the squares [x0+i·s, x0+(i+1)·s] × [y0+j·s, …]
// with keep(i, j), 0 ≤ i < nx, 0 ≤ j < ny, in the pattern of Rectangle.
func grid(x0, y0, s float64, nx, ny int, keep func(i, j int) bool) *Mesh {
	index := make([]int32, (nx+1)*(ny+1))
	for i := range index {
		index[i] = -1
	}
	var nodes []Point
	id := func(i, j int) int32 {
		p := j*(nx+1) + i
		if index[p] < 0 {
			index[p] = int32(len(nodes))
			nodes = append(nodes, Point{x0 + s*float64(i), y0 + s*float64(j)})
		}
		return index[p]
	}
	var cells [][3]int32
	for j := 0; j < ny; j++ {
		for i := 0; i < nx; i++ {
			if !keep(i, j) {
				continue
			}
			a, b, c, d := id(i, j), id(i+1, j), id(i+1, j+1), id(i, j+1)
			cells = append(cells, [3]int32{b, c, a}, [3]int32{d, a, c})
		}
	}
	return fromCells(nodes, cells)
}

// fromCells completes a mesh from counter-clockwise triangles: the edges
// that belong to one cell only are the boundary, oriented as in that cell
// (domain on the left).
func fromCells(nodes []Point, cells [][3]int32) *Mesh {
	m := &Mesh{Dim: 2, Nodes: nodes, Cells: cells}
	count := make(map[[2]int32]int, 3*len(cells)/2)
	for _, c := range cells {
		for i := range 3 {
			a, b := c[(i+1)%3], c[(i+2)%3]
			count[[2]int32{min(a, b), max(a, b)}]++
		}
	}
	for _, c := range cells {
		for i := range 3 {
			a, b := c[(i+1)%3], c[(i+2)%3]
			if count[[2]int32{min(a, b), max(a, b)}] == 1 {
				m.BoundaryEdges = append(m.BoundaryEdges, [2]int32{a, b})
			}
		}
	}
	m.markBoundary()
	return m
}

// Disk returns a mesh of the regular n-gon inscribed in the circle of radius
// R about the origin (a vertex at angle 0), uniformly refined until the
// largest cell diameter is at most h.
//
// The domain is the polygon, exactly: refined boundary nodes stay on its
// edges and are not moved onto the circle, so every bound computed on this
// mesh is a bound for the problem posed on the polygon. Its area is
// (n/2) R² sin(2π/n); compare with values for the disk (docs/checks.md item 9)
// only up to that geometric difference, O(n⁻²).
//
// The coarsest mesh has rings of nodes at radii R·j/m, m ≈ n/(2π), with
// about n·j/m nodes each, zipped together by angle, so its triangles are
// close to equilateral for every n (a fan from the centre would give angles
// of 2π/n).
func Disk(R float64, n int, h float64) (*Mesh, error) {
	if !(R > 0) || math.IsInf(R, 0) {
		return nil, fmt.Errorf("disk: radius must be positive and finite, got %g", R)
	}
	if n < 3 {
		return nil, fmt.Errorf("disk: the polygon needs at least 3 vertices, got %d", n)
	}
	if err := checkH("disk", h); err != nil {
		return nil, err
	}
	rings := max(1, int(math.Round(float64(n)/(2*math.Pi))))
	counts := make([]int, rings+1)
	total := 1
	for j := 1; j <= rings; j++ {
		counts[j] = max(3, int(math.Round(float64(n*j)/float64(rings))))
		total += counts[j]
	}
	counts[rings] = n
	if err := checkBudget(total, 2*total); err != nil {
		return nil, fmt.Errorf("disk with %d vertices: %w", n, err)
	}
	nodes := []Point{{0, 0}}
	start := make([]int32, rings+1)
	for j := 1; j <= rings; j++ {
		start[j] = int32(len(nodes))
		r := R * float64(j) / float64(rings)
		for i := 0; i < counts[j]; i++ {
			t := 2 * math.Pi * float64(i) / float64(counts[j])
			nodes = append(nodes, Point{r * math.Cos(t), r * math.Sin(t)})
		}
	}
	var cells [][3]int32
	for i := 0; i < counts[1]; i++ {
		cells = append(cells, [3]int32{0, start[1] + int32(i), start[1] + int32((i+1)%counts[1])})
	}
	for j := 2; j <= rings; j++ {
		na, nb := counts[j-1], counts[j]
		a := func(i int) int32 { return start[j-1] + int32(i%na) }
		b := func(i int) int32 { return start[j] + int32(i%nb) }
		for i, k := 0, 0; i < na || k < nb; {
			// Advance on the ring whose next node comes first in angle.
			if k < nb && (i == na || float64(k+1)/float64(nb) <= float64(i+1)/float64(na)) {
				cells = append(cells, [3]int32{a(i), b(k), b(k + 1)})
				k++
			} else {
				cells = append(cells, [3]int32{a(i), b(k), a(i + 1)})
				i++
			}
		}
	}
	m := fromCells(nodes, cells)
	for k := range m.Cells {
		if !(m.Area(k) > 0) {
			return nil, fmt.Errorf("disk: internal error: cell %d of the coarse mesh has area %g", k, m.Area(k))
		}
	}
	m.labelLongestEdge()
	return m.refineTo(h, "disk")
}

func checkH(what string, h float64) error {
	if !(h > 0) || math.IsInf(h, 0) {
		return fmt.Errorf("%s: the mesh size h must be positive and finite, got %g", what, h)
	}
	return nil
}

// labelLongestEdge rotates each triangle (keeping it counter-clockwise) so
// that its longest edge is the refinement edge, the usual first labelling
// for newest-vertex bisection (Mitchell 1991).
func (m *Mesh) labelLongestEdge() {
	for k, c := range m.Cells {
		best, bi := -1.0, 0
		for i := range 3 {
			p, q := m.Nodes[c[(i+1)%3]], m.Nodes[c[(i+2)%3]]
			if l := math.Hypot(q.X-p.X, q.Y-p.Y); l > best {
				best, bi = l, i
			}
		}
		m.Cells[k] = [3]int32{c[bi], c[(bi+1)%3], c[(bi+2)%3]}
	}
}

// refineTo refines m uniformly until MaxH() ≤ h. It predicts the size of
// the result before building anything: each red refinement maps
// (V, E, F) to (V + E, 2E + 3F, 4F).
func (m *Mesh) refineTo(h float64, what string) (*Mesh, error) {
	levels := 0
	for H := m.MaxH(); H > h && levels < 2000; H /= 2 {
		levels++
	}
	edges, _ := m.Edges()
	v, e, f := float64(len(m.Nodes)), float64(len(edges)), float64(len(m.Cells))
	for l := 0; l < levels; l++ {
		v, e, f = v+e, 2*e+3*f, 4*f
		if v > MaxNodes {
			for ; l < levels-1; l++ {
				v, e, f = v+e, 2*e+3*f, 4*f
			}
			size := fmt.Sprintf("about %.3g", v)
			if v > 1e30 {
				size = "more than 1e30"
			}
			return nil, fmt.Errorf("%s: mesh too large: h = %g needs %d uniform refinements, %s nodes; the limit is %d nodes (about 1 KB per node for solve and bounds; WebAssembly has under 4 GB)", what, h, levels, size, MaxNodes)
		}
	}
	for l := 0; l < levels; l++ {
		var err error
		if m, err = m.Refine(); err != nil {
			return nil, err
		}
	}
	return m, nil
}

// Polygon returns a mesh of the simple polygon with the given vertices
// (either orientation; do not repeat the first vertex at the end), refined
// uniformly until the largest cell diameter is at most h.
//
// The coarsest mesh is our own: ear clipping (Meisters 1975) followed by
// Lawson's edge flips (Lawson 1977) to the constrained Delaunay
// triangulation of the vertices; its cells are labelled for newest-vertex
// bisection by their longest edges. No points are added inside, so a long
// thin polygon keeps thin cells: insert vertices along long edges to help.
func Polygon(vertices []Point, h float64) (*Mesh, error) {
	if err := checkH("polygon", h); err != nil {
		return nil, err
	}
	pts, err := checkPolygon(vertices)
	if err != nil {
		return nil, err
	}
	if err := checkBudget(len(pts), len(pts)); err != nil {
		return nil, fmt.Errorf("polygon: %w", err)
	}
	cells, err := earClip(pts)
	if err != nil {
		return nil, err
	}
	m := fromCells(pts, cells)
	m.lawsonFlips()
	m.BoundaryEdges = nil
	m = fromCells(m.Nodes, m.Cells)
	m.labelLongestEdge()
	return m.refineTo(h, "polygon")
}

// MaxCoordinate and MinExtent bound the polygons Polygon meshes: products
// of coordinates stay far from overflow and underflow.
const (
	MaxCoordinate = 1e100
	MinExtent     = 1e-100
)

// checkPolygon refuses polygons we cannot mesh, naming what is wrong, and
// returns the vertices counter-clockwise.
func checkPolygon(v []Point) ([]Point, error) {
	n := len(v)
	if n < 3 {
		return nil, fmt.Errorf("polygon: need at least 3 vertices, got %d", n)
	}
	for i, p := range v {
		if math.IsNaN(p.X) || math.IsNaN(p.Y) || math.IsInf(p.X, 0) || math.IsInf(p.Y, 0) {
			return nil, fmt.Errorf("polygon: vertex %d is (%g, %g); coordinates must be finite numbers", i+1, p.X, p.Y)
		}
	}
	// Cross products and squared lengths of coordinates must neither
	// overflow nor underflow: outside this range a polygon would look
	// degenerate for the wrong reason.
	lo, hi := v[0], v[0]
	for i, p := range v {
		if m := math.Max(math.Abs(p.X), math.Abs(p.Y)); m > MaxCoordinate {
			return nil, fmt.Errorf("polygon: vertex %d is (%g, %g); coordinates up to %g in size can be meshed: state the domain in other units", i+1, p.X, p.Y, float64(MaxCoordinate))
		}
		lo.X, lo.Y = math.Min(lo.X, p.X), math.Min(lo.Y, p.Y)
		hi.X, hi.Y = math.Max(hi.X, p.X), math.Max(hi.Y, p.Y)
	}
	if ext := math.Max(hi.X-lo.X, hi.Y-lo.Y); ext < MinExtent {
		return nil, fmt.Errorf("polygon: the vertices span only %g; a domain at least %g across can be meshed: state the domain in other units", ext, float64(MinExtent))
	}
	for i := range n {
		if j := (i + 1) % n; v[i] == v[j] {
			if j == 0 {
				return nil, fmt.Errorf("polygon: edge %d has zero length: the last vertex repeats the first, (%g, %g); leave it out, the polygon closes itself", n, v[i].X, v[i].Y)
			}
			return nil, fmt.Errorf("polygon: edge %d has zero length: vertices %d and %d are both (%g, %g)", i+1, i+1, j+1, v[i].X, v[i].Y)
		}
	}
	seen := make(map[Point]int, n)
	for i, p := range v {
		if j, ok := seen[p]; ok {
			return nil, fmt.Errorf("polygon: vertices %d and %d are both (%g, %g); each corner must appear once", j+1, i+1, p.X, p.Y)
		}
		seen[p] = i
	}
	area := 0.0
	for i := range n {
		p, q := v[i], v[(i+1)%n]
		area += p.X*q.Y - q.X*p.Y
	}
	if collinear(v) {
		return nil, fmt.Errorf("polygon: zero area: all %d vertices lie on one line", n)
	}
	edge := func(i int) string {
		p, q := v[i], v[(i+1)%n]
		return fmt.Sprintf("edge %d from (%g, %g) to (%g, %g)", i+1, p.X, p.Y, q.X, q.Y)
	}
	for i := range n {
		a, b := v[i], v[(i+1)%n]
		for j := i + 1; j < n; j++ {
			c, d := v[j], v[(j+1)%n]
			switch {
			case j == i+1 || (i == 0 && j == n-1):
				// Adjacent edges meet at their shared vertex; refuse only a
				// fold back along the same line.
				p, q, r := a, b, d
				if j != i+1 {
					p, q, r = c, a, b
				}
				if orient(p, q, r) == 0 && (q.X-p.X)*(r.X-q.X)+(q.Y-p.Y)*(r.Y-q.Y) < 0 {
					return nil, fmt.Errorf("polygon: %s and %s fold back on each other; a polygon must be simple", edge(i), edge(j))
				}
			default:
				if x, ok := segmentsMeet(a, b, c, d); ok {
					return nil, fmt.Errorf("polygon: %s and %s cross at (%g, %g); a polygon must be simple", edge(i), edge(j), x.X, x.Y)
				}
			}
		}
	}
	if area == 0 {
		return nil, fmt.Errorf("polygon: zero area")
	}
	out := append([]Point(nil), v...)
	if area < 0 {
		for i, j := 0, n-1; i < j; i, j = i+1, j-1 {
			out[i], out[j] = out[j], out[i]
		}
	}
	return out, nil
}

func collinear(v []Point) bool {
	for i := 2; i < len(v); i++ {
		if orient(v[0], v[1], v[i]) != 0 {
			return false
		}
	}
	return true
}

// orient returns twice the signed area of (a, b, c): positive when they turn
// counter-clockwise. Values below rounding relative to the coordinates count
// as zero.
func orient(a, b, c Point) float64 {
	d := (b.X-a.X)*(c.Y-a.Y) - (c.X-a.X)*(b.Y-a.Y)
	s := math.Abs(b.X-a.X)*math.Abs(c.Y-a.Y) + math.Abs(c.X-a.X)*math.Abs(b.Y-a.Y)
	if math.Abs(d) <= 1e-14*s {
		return 0
	}
	return d
}

// segmentsMeet reports whether the closed segments ab and cd have a point in
// common, and one such point.
func segmentsMeet(a, b, c, d Point) (Point, bool) {
	d1, d2 := orient(a, b, c), orient(a, b, d)
	d3, d4 := orient(c, d, a), orient(c, d, b)
	if ((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) && ((d3 > 0 && d4 < 0) || (d3 < 0 && d4 > 0)) {
		t := d3 / (d3 - d4)
		return Point{a.X + t*(b.X-a.X), a.Y + t*(b.Y-a.Y)}, true
	}
	on := func(p, q, r Point) bool { // r on segment pq, given collinear
		return math.Min(p.X, q.X) <= r.X && r.X <= math.Max(p.X, q.X) &&
			math.Min(p.Y, q.Y) <= r.Y && r.Y <= math.Max(p.Y, q.Y)
	}
	switch {
	case d1 == 0 && on(a, b, c):
		return c, true
	case d2 == 0 && on(a, b, d):
		return d, true
	case d3 == 0 && on(c, d, a):
		return a, true
	case d4 == 0 && on(c, d, b):
		return b, true
	}
	return Point{}, false
}

// earClip triangulates a simple counter-clockwise polygon by cutting off
// ears: convex corners whose triangle holds no other vertex (Meisters 1975,
// every simple polygon with more than three vertices has two).
func earClip(p []Point) ([][3]int32, error) {
	n := len(p)
	next, prev := make([]int, n), make([]int, n)
	for i := range n {
		next[i], prev[i] = (i+1)%n, (i+n-1)%n
	}
	reflex := make([]bool, n)
	update := func(i int) { reflex[i] = orient(p[prev[i]], p[i], p[next[i]]) <= 0 }
	for i := range n {
		update(i)
	}
	isEar := func(i int) bool {
		if reflex[i] {
			return false
		}
		a, b, c := p[prev[i]], p[i], p[next[i]]
		for j := next[next[i]]; j != prev[i]; j = next[j] {
			if reflex[j] && orient(a, b, p[j]) >= 0 && orient(b, c, p[j]) >= 0 && orient(c, a, p[j]) >= 0 {
				return false
			}
		}
		return true
	}
	cells := make([][3]int32, 0, n-2)
	left, i, miss := n, 0, 0
	for left > 3 {
		if isEar(i) {
			a, c := prev[i], next[i]
			cells = append(cells, [3]int32{int32(a), int32(i), int32(c)})
			next[a], prev[c] = c, a
			left--
			update(a)
			update(c)
			i, miss = c, 0
			continue
		}
		i = next[i]
		if miss++; miss > left {
			return nil, fmt.Errorf("polygon: could not triangulate (no ear among %d remaining vertices); is the polygon simple?", left)
		}
	}
	cells = append(cells, [3]int32{int32(prev[i]), int32(i), int32(next[i])})
	return cells, nil
}

// lawsonFlips flips interior edges until every one is locally Delaunay; the
// boundary edges are kept, so the result is the constrained Delaunay
// triangulation of the vertices (Lawson 1977). Cocircular quadruples (regular
// polygons) are left as they are.
func (m *Mesh) lawsonFlips() {
	for pass := 0; pass < 10*len(m.Cells)+10; pass++ {
		type side struct{ cell, i int32 }
		adj := make(map[[2]int32][]side, 3*len(m.Cells)/2)
		for k, c := range m.Cells {
			for i := range 3 {
				a, b := c[(i+1)%3], c[(i+2)%3]
				key := [2]int32{min(a, b), max(a, b)}
				adj[key] = append(adj[key], side{int32(k), int32(i)})
			}
		}
		keys := make([][2]int32, 0, len(adj))
		for key, s := range adj {
			if len(s) == 2 {
				keys = append(keys, key)
			}
		}
		sort.Slice(keys, func(i, j int) bool {
			return keys[i][0] < keys[j][0] || (keys[i][0] == keys[j][0] && keys[i][1] < keys[j][1])
		})
		touched := make([]bool, len(m.Cells))
		flips := 0
		for _, key := range keys {
			s := adj[key]
			k1, k2 := s[0].cell, s[1].cell
			if touched[k1] || touched[k2] {
				continue
			}
			c1 := m.Cells[k1]
			// c1 = (x, a, b) with x opposite the edge; d opposite in c2.
			x, a, b := c1[s[0].i], c1[(s[0].i+1)%3], c1[(s[0].i+2)%3]
			d := m.Cells[k2][s[1].i]
			P := m.Nodes
			if !inCircle(P[x], P[a], P[b], P[d]) {
				continue
			}
			if orient(P[x], P[a], P[d]) <= 0 || orient(P[x], P[d], P[b]) <= 0 {
				continue
			}
			m.Cells[k1] = [3]int32{x, a, d}
			m.Cells[k2] = [3]int32{x, d, b}
			touched[k1], touched[k2] = true, true
			flips++
		}
		if flips == 0 {
			return
		}
	}
}

// inCircle reports whether d lies strictly inside the circle through the
// counter-clockwise triangle a, b, c, beyond rounding.
func inCircle(a, b, c, d Point) bool {
	ax, ay := a.X-d.X, a.Y-d.Y
	bx, by := b.X-d.X, b.Y-d.Y
	cx, cy := c.X-d.X, c.Y-d.Y
	a2, b2, c2 := ax*ax+ay*ay, bx*bx+by*by, cx*cx+cy*cy
	det := ax*(by*c2-b2*cy) - ay*(bx*c2-b2*cx) + a2*(bx*cy-by*cx)
	scale := math.Abs(ax*(by*c2)) + math.Abs(ax*b2*cy) + math.Abs(ay*bx*c2) + math.Abs(ay*b2*cx) + math.Abs(a2*bx*cy) + math.Abs(a2*by*cx)
	return det > 1e-12*scale
}
