package mesh

import (
	"math"
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
