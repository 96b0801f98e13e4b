package mesh

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// checkMesh verifies the identities every mesh must satisfy (common practice,
// no source): positive (counter-clockwise) cells whose areas sum to the
// domain's, Euler's V − E + F = 1 for a simply connected domain, conformity
// (each edge in one or two cells; the edges in one cell are exactly the
// boundary edges, with the domain on their left), boundary nodes, and the
// hierarchy (new nodes are midpoints of their Parents, each cell lies in its
// CellParent, and children's areas add up to their parent's).
func checkMesh(t *testing.T, name string, m *Mesh, area float64) {
	t.Helper()
	sum := 0.0
	for k := range m.Cells {
		a := m.Area(k)
		if !(a > 0) {
			t.Fatalf("%s: cell %d has area %g (not counter-clockwise)", name, k, a)
		}
		sum += a
	}
	if math.Abs(sum-area) > 1e-12*area {
		t.Fatalf("%s: areas sum to %.16g, want %.16g", name, sum, area)
	}
	if m.Dim != 2 {
		return
	}
	edges, _ := m.Edges()
	if v, e, f := len(m.Nodes), len(edges), len(m.Cells); v-e+f != 1 {
		t.Fatalf("%s: V − E + F = %d − %d + %d = %d, want 1", name, v, e, f, v-e+f)
	}
	uses := map[[2]int32]int{}
	for _, c := range m.Cells {
		for i := range 3 {
			uses[[2]int32{c[i], c[(i+1)%3]}]++
		}
	}
	once := 0
	for ab, n := range uses {
		if n != 1 {
			t.Fatalf("%s: directed edge %v used %d times", name, ab, n)
		}
		if uses[[2]int32{ab[1], ab[0]}] == 0 {
			once++
		}
	}
	if once != len(m.BoundaryEdges) {
		t.Fatalf("%s: %d edges in one cell, %d boundary edges (hanging node?)", name, once, len(m.BoundaryEdges))
	}
	for _, be := range m.BoundaryEdges {
		if uses[be] != 1 || uses[[2]int32{be[1], be[0]}] != 0 {
			t.Fatalf("%s: boundary edge %v is not an edge of exactly one cell with the domain on its left", name, be)
		}
	}
	nb := 0
	for _, b := range m.Boundary {
		if b {
			nb++
		}
	}
	if nb != len(m.BoundaryEdges) {
		t.Fatalf("%s: %d boundary nodes, %d boundary edges", name, nb, len(m.BoundaryEdges))
	}
	if m.Coarse == nil {
		return
	}
	c := m.Coarse
	if len(m.Parents) != len(m.Nodes) || len(m.CellParent) != len(m.Cells) {
		t.Fatalf("%s: %d parents for %d nodes, %d cell parents for %d cells", name, len(m.Parents), len(m.Nodes), len(m.CellParent), len(m.Cells))
	}
	for i, p := range m.Parents {
		a, b := c.Nodes[p[0]], c.Nodes[p[1]]
		if math.Abs(m.Nodes[i].X-(a.X+b.X)/2)+math.Abs(m.Nodes[i].Y-(a.Y+b.Y)/2) > 1e-14 {
			t.Fatalf("%s: node %d is not the midpoint of its parents %v", name, i, p)
		}
	}
	// Renumbering must keep each coarse node exactly once, and node 0 in
	// place (a space pinned at node 0 relies on it).
	seen := make([]int, len(c.Nodes))
	for _, p := range m.Parents {
		if p[0] == p[1] {
			seen[p[0]]++
		}
	}
	for j, n := range seen {
		if n != 1 {
			t.Fatalf("%s: coarse node %d is %d fine nodes, want 1", name, j, n)
		}
	}
	if m.Parents[0] != [2]int32{0, 0} {
		t.Fatalf("%s: fine node 0 has parents %v, want coarse node 0", name, m.Parents[0])
	}
	childArea := make([]float64, len(c.Cells))
	for k, p := range m.CellParent {
		childArea[p] += m.Area(k)
		q := m.Cells[k]
		g := Point{(m.Nodes[q[0]].X + m.Nodes[q[1]].X + m.Nodes[q[2]].X) / 3, (m.Nodes[q[0]].Y + m.Nodes[q[1]].Y + m.Nodes[q[2]].Y) / 3}
		pc := c.Cells[p]
		for i := range 3 {
			if orient(c.Nodes[pc[i]], c.Nodes[pc[(i+1)%3]], g) <= 0 {
				t.Fatalf("%s: cell %d is not inside its parent %d", name, k, p)
			}
		}
	}
	for p, a := range childArea {
		if math.Abs(a-c.Area(p)) > 1e-12*c.Area(p) {
			t.Fatalf("%s: children of cell %d have area %g, parent %g", name, p, a, c.Area(p))
		}
	}
}

func regular(n int, R, phase float64) []Point {
	v := make([]Point, n)
	for i := range v {
		t := phase + 2*math.Pi*float64(i)/float64(n)
		v[i] = Point{R * math.Cos(t), R * math.Sin(t)}
	}
	return v
}

func must(t *testing.T) func(*Mesh, error) *Mesh {
	return func(m *Mesh, err error) *Mesh {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
		return m
	}
}

// A non-convex comb: three teeth of width 1 and height 3 on a 5 × 1 base.
var comb = []Point{{0, 0}, {5, 0}, {5, 4}, {4, 4}, {4, 1}, {3, 1}, {3, 4}, {2, 4}, {2, 1}, {1, 1}, {1, 4}, {0, 4}}

// Areas at every level of the hierarchy; the exact areas are elementary
// geometry: the L-shape 3, the regular n-gon (n/2) R² sin(2π/n), the comb
// 5 + 3·3 = 14.
func TestDomainsAreaAndConformity(t *testing.T) {
	lshape := []Point{{-1, -1}, {0, -1}, {0, 0}, {1, 0}, {1, 1}, {-1, 1}}
	cw := append([]Point(nil), comb...)
	for i, j := 0, len(cw)-1; i < j; i, j = i+1, j-1 {
		cw[i], cw[j] = cw[j], cw[i]
	}
	ngon := func(n int, R float64) float64 { return float64(n) / 2 * R * R * math.Sin(2*math.Pi/float64(n)) }
	cases := []struct {
		name  string
		build func() (*Mesh, error)
		area  float64
		h     float64 // required MaxH, 0 if not asked
	}{
		{"rectangle", func() (*Mesh, error) { return Rectangle(0, 2, -1, 1, 3, 2) }, 4, 0},
		{"L-shape 1", func() (*Mesh, error) { return LShape(1) }, 3, 0},
		{"L-shape 3", func() (*Mesh, error) { return LShape(3) }, 3, 0},
		{"L-shape 4", func() (*Mesh, error) { return LShape(4) }, 3, 0},
		{"L-shape 6", func() (*Mesh, error) { return LShape(6) }, 3, 0},
		{"disk 3", func() (*Mesh, error) { return Disk(2, 3, 0.5) }, ngon(3, 2), 0.5},
		{"disk 6", func() (*Mesh, error) { return Disk(1, 6, 0.3) }, ngon(6, 1), 0.3},
		{"disk 13", func() (*Mesh, error) { return Disk(1, 13, 0.2) }, ngon(13, 1), 0.2},
		{"disk 64", func() (*Mesh, error) { return Disk(1.5, 64, 0.1) }, ngon(64, 1.5), 0.1},
		{"disk 200", func() (*Mesh, error) { return Disk(1, 200, 1) }, ngon(200, 1), 1},
		{"polygon L", func() (*Mesh, error) { return Polygon(lshape, 0.3) }, 3, 0.3},
		{"polygon comb", func() (*Mesh, error) { return Polygon(comb, 0.6) }, 14, 0.6},
		{"polygon comb clockwise", func() (*Mesh, error) { return Polygon(cw, 0.6) }, 14, 0.6},
		{"polygon 17-gon", func() (*Mesh, error) { return Polygon(regular(17, 1, 0.3), 0.25) }, ngon(17, 1), 0.25},
		{"polygon collinear", func() (*Mesh, error) {
			return Polygon([]Point{{0, 0}, {1, 0}, {2, 0}, {2, 1}, {2, 2}, {1, 2}, {0, 2}, {0, 1}}, 0.5)
		}, 4, 0.5},
	}
	for _, tc := range cases {
		m, err := tc.build()
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		if tc.h > 0 && m.MaxH() > tc.h {
			t.Errorf("%s: MaxH %g > requested %g", tc.name, m.MaxH(), tc.h)
		}
		for l := m; l != nil; l = l.Coarse {
			checkMesh(t, tc.name, l, tc.area)
		}
		if math.Abs(m.Measure()-tc.area) > 1e-12*tc.area {
			t.Errorf("%s: Measure %g, want %g", tc.name, m.Measure(), tc.area)
		}
	}
}

// docs/checks.md item 3 fixes the L-shape as (−1,1)² \ [0,1)×(−1,0].
func TestLShapePlacement(t *testing.T) {
	m := must(t)(LShape(4))
	lo, hi := m.BoundingBox()
	if lo != (Point{-1, -1}) || hi != (Point{1, 1}) {
		t.Fatalf("bounding box %v–%v, want (−1,−1)–(1,1)", lo, hi)
	}
	origin := false
	for i, p := range m.Nodes {
		if p.X > 1e-15 && p.Y < -1e-15 {
			t.Fatalf("node %d at %v lies in the removed quadrant", i, p)
		}
		if p == (Point{0, 0}) {
			origin = m.Boundary[i]
		}
	}
	if !origin {
		t.Fatal("the re-entrant corner (0, 0) is not a boundary node")
	}
	// 4 = 2², so two uniform refinements of LShape(1): 6 squares, 12 cells.
	if m.Level() != 2 || len(m.Cells) != 6*16 || m.MaxH() != math.Sqrt2/4 {
		t.Fatalf("level %d, %d cells, MaxH %g; want 2, 96, √2/4", m.Level(), len(m.Cells), m.MaxH())
	}
	// Same count as the direct construction: (2n+1)² − n² nodes.
	if len(m.Nodes) != 81-16 {
		t.Fatalf("%d nodes, want 65", len(m.Nodes))
	}
}

// The coarse polygon mesh is the constrained Delaunay triangulation: no
// interior edge has the opposite vertex of its neighbour strictly inside the
// circumcircle (Lawson 1977, the local criterion is equivalent).
func TestPolygonDelaunay(t *testing.T) {
	v := []Point{{0, 0}, {4, 0}, {4.2, 1}, {3, 3}, {2, 1.2}, {1, 3.5}, {-0.5, 2}, {0.3, 1}}
	m := must(t)(Polygon(v, 10))
	if len(m.Cells) != len(v)-2 || m.Level() != 0 {
		t.Fatalf("%d cells at level %d, want %d at level 0", len(m.Cells), m.Level(), len(v)-2)
	}
	shoelace := 0.0 // the polygon's area by the shoelace formula
	for i, p := range v {
		q := v[(i+1)%len(v)]
		shoelace += (p.X*q.Y - q.X*p.Y) / 2
	}
	checkMesh(t, "delaunay", m, shoelace)
	edges, ce := m.Edges()
	opp := make([][]int32, len(edges))
	for k := range m.Cells {
		for i := range 3 {
			opp[ce[k][i]] = append(opp[ce[k][i]], int32(k)*3+int32(i))
		}
	}
	flipped := 0
	for e, o := range opp {
		if len(o) != 2 {
			continue
		}
		c := m.Cells[o[0]/3]
		d := m.Cells[o[1]/3][o[1]%3]
		if inCircle(m.Nodes[c[0]], m.Nodes[c[1]], m.Nodes[c[2]], m.Nodes[d]) {
			t.Errorf("edge %v is not locally Delaunay", edges[e])
		}
		flipped++
	}
	if flipped != len(v)-3 {
		t.Fatalf("%d interior edges, want %d", flipped, len(v)-3)
	}
}

// MinWidth against widths derived by hand: the minimum width of a convex
// polygon is attained perpendicular to one of its edges (Shamos 1978), so
// it is the least, over the hull's edges, of the largest distance of a
// vertex from that edge's line. Unit square: 1. L-shape (−1,1)² \
// [0,1)×(−1,0]: its hull is the pentagon (−1,−1), (0,−1), (1,0), (1,1),
// (−1,1); the four axis-parallel edges give 2, the cut edge x − y = 1 gives
// the distance of (−1, 1), 3/√2 ≈ 2.12; so 2. Regular n-gon of
// circumradius R: 2R cos(π/n) for even n (opposite sides), R(1 + cos(π/n))
// for odd n (side to opposite vertex). A 1 × 3 rectangle rotated by 0.4: 1.
// Each is also compared with a brute-force minimum over 4000 directions.
func TestMinWidth(t *testing.T) {
	rot := func(p []Point, a float64) []Point {
		q := make([]Point, len(p))
		for i, v := range p {
			q[i] = Point{v.X*math.Cos(a) - v.Y*math.Sin(a), v.X*math.Sin(a) + v.Y*math.Cos(a)}
		}
		return q
	}
	cases := []struct {
		name string
		m    func() (*Mesh, error)
		want float64
	}{
		{"unit square", func() (*Mesh, error) { return Rectangle(0, 1, 0, 1, 3, 3) }, 1},
		{"L-shape", func() (*Mesh, error) { return LShape(2) }, 2},
		{"rotated 1×3", func() (*Mesh, error) { return Polygon(rot([]Point{{0, 0}, {3, 0}, {3, 1}, {0, 1}}, 0.4), 5) }, 1},
		{"hexagon", func() (*Mesh, error) { return Disk(1, 6, 1) }, 2 * math.Cos(math.Pi/6)},
		{"disk 64", func() (*Mesh, error) { return Disk(2, 64, 1) }, 4 * math.Cos(math.Pi/64)},
		{"triangle", func() (*Mesh, error) { return Disk(1, 3, 0.3) }, 1.5},
		{"9-gon", func() (*Mesh, error) { return Polygon(regular(9, 1, 0.1), 1) }, 1 + math.Cos(math.Pi/9)},
		{"comb", func() (*Mesh, error) { return Polygon(comb, 1) }, 4},
	}
	for _, tc := range cases {
		m, err := tc.m()
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		w := m.MinWidth()
		if math.Abs(w-tc.want) > 1e-12 {
			t.Errorf("%s: MinWidth %.15g, want %.15g", tc.name, w, tc.want)
		}
		// Sampling directions at steps δ overestimates by at most diam·δ.
		const dirs = 4000
		lo, hi := m.BoundingBox()
		tol := math.Hypot(hi.X-lo.X, hi.Y-lo.Y) * math.Pi / dirs
		brute := math.Inf(1)
		for k := range dirs {
			a := math.Pi * float64(k) / dirs
			lo, hi := math.Inf(1), math.Inf(-1)
			for i, p := range m.Nodes {
				if !m.Boundary[i] {
					continue
				}
				s := p.X*math.Cos(a) + p.Y*math.Sin(a)
				lo, hi = min(lo, s), max(hi, s)
			}
			brute = min(brute, hi-lo)
		}
		if brute < w-1e-12 || brute > w+tol {
			t.Errorf("%s: MinWidth %g, brute-force minimum over directions %g", tc.name, w, brute)
		}
	}
	m := must(t)(Interval(-1, 2, 5))
	if m.MinWidth() != 3 {
		t.Errorf("interval width %g, want 3", m.MinWidth())
	}
}

func TestDiametersAndBox(t *testing.T) {
	m := must(t)(Rectangle(0, 3, 0, 4, 1, 1))
	d := m.Diameters()
	if len(d) != 2 || d[0] != 5 || d[1] != 5 || m.MaxH() != 5 {
		t.Fatalf("diameters %v, MaxH %g; want 5 (3-4-5 triangles)", d, m.MaxH())
	}
	lo, hi := m.BoundingBox()
	if lo != (Point{0, 0}) || hi != (Point{3, 4}) {
		t.Fatalf("box %v %v", lo, hi)
	}
	i := must(t)(Interval(0, 1, 4))
	if i.MaxH() != 0.25 || i.Measure() != 1 {
		t.Fatalf("interval MaxH %g, Measure %g", i.MaxH(), i.Measure())
	}
	if a := must(t)(Disk(1, 6, 1)).MinAngle(); math.Abs(a-math.Pi/3) > 1e-12 {
		t.Fatalf("hexagon fan min angle %g, want π/3", a)
	}
}

func TestBadInput(t *testing.T) {
	nan := math.NaN()
	cases := []struct {
		name string
		err  func() error
		want []string
	}{
		{"degenerate rectangle", func() error { _, err := Rectangle(0, 0, 0, 1, 2, 2); return err }, []string{"x0 < x1"}},
		{"rectangle past budget", func() error { _, err := Rectangle(0, 1, 0, 1, 5000, 5000); return err }, []string{"25010001 nodes", "3000000"}},
		{"empty interval", func() error { _, err := Interval(0, 1, 0); return err }, []string{"at least 1 cell"}},
		{"two vertices", func() error { _, err := Polygon([]Point{{0, 0}, {1, 0}}, 1); return err }, []string{"at least 3 vertices, got 2"}},
		{"NaN vertex", func() error { _, err := Polygon([]Point{{0, 0}, {1, nan}, {0, 1}}, 1); return err }, []string{"vertex 2", "finite"}},
		{"Inf vertex", func() error { _, err := Polygon([]Point{{0, 0}, {math.Inf(1), 0}, {0, 1}}, 1); return err }, []string{"vertex 2", "finite"}},
		{"closed repeat", func() error { _, err := Polygon([]Point{{0, 0}, {1, 0}, {0, 1}, {0, 0}}, 1); return err }, []string{"zero length", "repeats the first"}},
		{"zero-length edge", func() error { _, err := Polygon([]Point{{0, 0}, {1, 0}, {1, 0}, {0, 1}}, 1); return err }, []string{"edge 2 has zero length", "vertices 2 and 3"}},
		{"repeated vertex", func() error {
			_, err := Polygon([]Point{{0, 0}, {2, 0}, {1, 1}, {2, 2}, {0, 2}, {1, 1}}, 1)
			return err
		}, []string{"vertices 3 and 6 are both (1, 1)"}},
		{"collinear", func() error { _, err := Polygon([]Point{{0, 0}, {1, 1}, {3, 3}}, 1); return err }, []string{"zero area", "one line"}},
		{"bow tie", func() error { _, err := Polygon([]Point{{0, 0}, {1, 0}, {0, 1}, {1, 1}}, 1); return err },
			[]string{"edge 2 from (1, 0) to (0, 1)", "edge 4 from (1, 1) to (0, 0)", "cross at (0.5, 0.5)"}},
		{"touching", func() error { _, err := Polygon([]Point{{0, 0}, {4, 0}, {4, 4}, {2, 0}, {0, 4}}, 1); return err },
			[]string{"edge 1 from (0, 0) to (4, 0)", "cross at (2, 0)"}},
		{"fold back", func() error { _, err := Polygon([]Point{{0, 0}, {2, 0}, {1, 0}, {1, 1}}, 1); return err }, []string{"fold back"}},
		// Coordinates whose cross products overflow or underflow are named
		// as such, not as a zero area.
		{"huge coordinates", func() error {
			_, err := Polygon([]Point{{0, 0}, {1e308, 0}, {1e308, 1e308}, {0, 1e308}}, 1e307)
			return err
		},
			[]string{"vertex 2 is (1e+308, 0)", "coordinates up to 1e+100", "other units"}},
		{"tiny extent", func() error {
			_, err := Polygon([]Point{{0, 0}, {1e-300, 0}, {1e-300, 1e-300}, {0, 1e-300}}, 1e-301)
			return err
		}, []string{"span only 1e-300", "other units"}},
		{"h zero", func() error { _, err := Polygon([]Point{{0, 0}, {1, 0}, {0, 1}}, 0); return err }, []string{"h must be positive", "got 0"}},
		{"h NaN", func() error { _, err := Disk(1, 8, nan); return err }, []string{"h must be positive"}},
		// √2/2^14 ≤ 1e-4 needs 14 levels; a triangle cut into 2^14 per side
		// has (2^14+1)(2^14+2)/2 = 134242305 nodes.
		{"polygon past budget", func() error { _, err := Polygon([]Point{{0, 0}, {1, 0}, {0, 1}}, 1e-4); return err },
			[]string{"mesh too large", "14 uniform refinements", "about 1.34e+08 nodes", "3000000"}},
		{"disk past budget", func() error { _, err := Disk(1, 64, 1e-300); return err }, []string{"mesh too large", "995 uniform refinements", "more than 1e30 nodes"}},
		{"disk radius", func() error { _, err := Disk(-1, 8, 0.1); return err }, []string{"radius must be positive"}},
		{"disk sides", func() error { _, err := Disk(1, 2, 0.1); return err }, []string{"at least 3 vertices"}},
		{"L-shape zero", func() error { _, err := LShape(0); return err }, []string{"at least 1 cell"}},
		{"L-shape past budget", func() error { _, err := LShape(2000); return err }, []string{"12008001 nodes", "limit is 3000000"}},
		{"bisect marks", func() error {
			m, _ := Rectangle(0, 1, 0, 1, 1, 1)
			_, err := m.Bisect([]bool{true})
			return err
		}, []string{"1 marks for 2 cells"}},
	}
	for _, tc := range cases {
		err := tc.err()
		if err == nil {
			t.Errorf("%s: accepted", tc.name)
			continue
		}
		for _, w := range tc.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: error %q does not say %q", tc.name, err, w)
			}
		}
	}
}

// randomMarks marks each cell with probability p.
func randomMarks(r *rand.Rand, n int, p float64) []bool {
	m := make([]bool, n)
	for i := range m {
		m[i] = r.Float64() < p
	}
	return m
}

// The ring construction keeps the coarse disk mesh shape-regular for every
// n, where a fan from the centre would have angles 2π/n (1.8° at n = 200).
// Observed minimum over n = 3…500: 24.65° (n = 10, 16); 30° for n ≥ 24.
func TestDiskQuality(t *testing.T) {
	for _, n := range []int{3, 5, 7, 10, 16, 24, 64, 200} {
		m := must(t)(Disk(1, n, 10))
		if a := m.MinAngle() * 180 / math.Pi; a < 24 {
			t.Errorf("disk with %d vertices: minimum angle %.2f°, want ≥ 24°", n, a)
		}
		// The boundary is the n-gon itself: n boundary edges, each a side
		// of length 2 sin(π/n).
		if len(m.BoundaryEdges) != n {
			t.Fatalf("disk with %d vertices: %d boundary edges", n, len(m.BoundaryEdges))
		}
		for _, e := range m.BoundaryEdges {
			p, q := m.Nodes[e[0]], m.Nodes[e[1]]
			if l := math.Hypot(q.X-p.X, q.Y-p.Y); math.Abs(l-2*math.Sin(math.Pi/float64(n))) > 1e-12 {
				t.Fatalf("disk with %d vertices: boundary edge of length %g", n, l)
			}
		}
	}
}

// Edges: cellEdges[k][i] is the edge opposite vertex i of cell k, stored with
// the lower node first, and each edge appears once.
func TestEdges(t *testing.T) {
	m := must(t)(Disk(1, 12, 0.3))
	edges, ce := m.Edges()
	seen := map[[2]int32]bool{}
	for _, e := range edges {
		if e[0] >= e[1] || seen[e] {
			t.Fatalf("edge %v out of order or repeated", e)
		}
		seen[e] = true
	}
	for k, c := range m.Cells {
		for i := range 3 {
			a, b := c[(i+1)%3], c[(i+2)%3]
			if edges[ce[k][i]] != [2]int32{min(a, b), max(a, b)} {
				t.Fatalf("cell %d: edge opposite vertex %d is %v, want {%d, %d}", k, i, edges[ce[k][i]], a, b)
			}
		}
	}
}
