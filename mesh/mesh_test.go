package mesh

import (
	"math"
	"slices"
	"testing"
)

// Areas of the cells sum to the area of the domain and stay positive
// (counter-clockwise) under refinement: an identity, common practice, no source.
func TestRectangleRefineAreas(t *testing.T) {
	m, err := Rectangle(0, 2, -1, 1, 3, 2)
	if err != nil {
		t.Fatal(err)
	}
	for level := 0; level < 3; level++ {
		sum := 0.0
		for k := range m.Cells {
			a := m.Area(k)
			if a <= 0 {
				t.Fatalf("level %d: cell %d has area %g (not counter-clockwise)", level, k, a)
			}
			sum += a
		}
		if math.Abs(sum-4) > 1e-12 {
			t.Fatalf("level %d: areas sum to %.15g, want 4", level, sum)
		}
		// Euler: V − E + F = 1 for a simply connected triangulation.
		edges, _ := m.Edges()
		if v, e, f := len(m.Nodes), len(edges), len(m.Cells); v-e+f != 1 {
			t.Fatalf("level %d: V−E+F = %d", level, v-e+f)
		}
		nb := 0
		for _, b := range m.Boundary {
			if b {
				nb++
			}
		}
		if nb != len(m.BoundaryEdges) {
			t.Fatalf("level %d: %d boundary nodes, %d boundary edges", level, nb, len(m.BoundaryEdges))
		}
		if m.Level() != level {
			t.Fatalf("Level() = %d, want %d", m.Level(), level)
		}
		if m, err = m.Refine(); err != nil {
			t.Fatal(err)
		}
		for i, p := range m.Parents {
			a, b := m.Coarse.Nodes[p[0]], m.Coarse.Nodes[p[1]]
			if math.Abs(m.Nodes[i].X-(a.X+b.X)/2)+math.Abs(m.Nodes[i].Y-(a.Y+b.Y)/2) > 1e-14 {
				t.Fatalf("node %d is not the midpoint of its parents", i)
			}
		}
	}
}

func TestIntervalRefine(t *testing.T) {
	m, err := Interval(-1, 2, 3)
	if err != nil {
		t.Fatal(err)
	}
	f, err := m.Refine()
	if err != nil {
		t.Fatal(err)
	}
	sum := 0.0
	for k := range f.Cells {
		sum += f.Area(k)
	}
	if len(f.Cells) != 6 || math.Abs(sum-3) > 1e-14 || !f.Boundary[0] || !f.Boundary[3] {
		t.Fatalf("refined interval: %d cells, length %g, boundary %v", len(f.Cells), sum, f.Boundary)
	}
}

// TestRectangleHierarchy checks the coarse chain that Rectangle records for
// even sizes against geometry: every node is a coarse node or the midpoint
// of a coarse edge (its two parents must share a coarse cell), every cell's
// centroid lies in its parent cell, the chain halves down to an odd size,
// and the nodes are those of Refine applied to the coarse rectangle.
func TestRectangleHierarchy(t *testing.T) {
	for _, tc := range []struct{ nx, ny, levels int }{{8, 4, 2}, {6, 6, 1}, {16, 16, 4}, {5, 4, 0}, {1, 1, 0}} {
		m, err := Rectangle(-1, 2, 0, 1.5, tc.nx, tc.ny)
		if err != nil {
			t.Fatal(err)
		}
		if m.Level() != tc.levels {
			t.Fatalf("%d×%d: level %d, want %d", tc.nx, tc.ny, m.Level(), tc.levels)
		}
		for f := m; f.Coarse != nil; f = f.Coarse {
			c := f.Coarse
			shares := func(a, b int32) bool {
				for _, cell := range c.Cells {
					if slices.Contains(cell[:], a) && slices.Contains(cell[:], b) {
						return true
					}
				}
				return false
			}
			for i, par := range f.Parents {
				a, b := c.Nodes[par[0]], c.Nodes[par[1]]
				p := f.Nodes[i]
				if math.Abs((a.X+b.X)/2-p.X) > 1e-14 || math.Abs((a.Y+b.Y)/2-p.Y) > 1e-14 {
					t.Fatalf("%d×%d: node %d at %v is not the midpoint of %v and %v", tc.nx, tc.ny, i, p, a, b)
				}
				if par[0] != par[1] && !shares(par[0], par[1]) {
					t.Fatalf("%d×%d: parents %v of node %d are not an edge of the coarse mesh", tc.nx, tc.ny, par, i)
				}
			}
			for k, cell := range f.Cells {
				var x, y float64
				for _, n := range cell {
					x += f.Nodes[n].X / 3
					y += f.Nodes[n].Y / 3
				}
				if !insideCell(c, int(f.CellParent[k]), x, y) {
					t.Fatalf("%d×%d: centroid of cell %d not in its parent %d", tc.nx, tc.ny, k, f.CellParent[k])
				}
			}
			r, err := c.Refine()
			if err != nil {
				t.Fatal(err)
			}
			want := map[Point]bool{}
			for _, p := range r.Nodes {
				want[Point{X: math.Round(p.X * 1e9), Y: math.Round(p.Y * 1e9)}] = true
			}
			for _, p := range f.Nodes {
				if !want[Point{X: math.Round(p.X * 1e9), Y: math.Round(p.Y * 1e9)}] {
					t.Fatalf("%d×%d: node %v is not a node of the refined coarse mesh", tc.nx, tc.ny, p)
				}
			}
			if len(r.Nodes) != len(f.Nodes) || len(r.Cells) != len(f.Cells) {
				t.Fatalf("%d×%d: %d nodes, %d cells; Refine gives %d, %d", tc.nx, tc.ny, len(f.Nodes), len(f.Cells), len(r.Nodes), len(r.Cells))
			}
		}
	}
}

// insideCell reports whether (x, y) lies strictly inside cell k of m (by the
// signs of the three edge functions of the counter-clockwise triangle).
func insideCell(m *Mesh, k int, x, y float64) bool {
	c := m.Cells[k]
	for e := range 3 {
		a, b := m.Nodes[c[e]], m.Nodes[c[(e+1)%3]]
		if (b.X-a.X)*(y-a.Y)-(b.Y-a.Y)*(x-a.X) <= 0 {
			return false
		}
	}
	return true
}
