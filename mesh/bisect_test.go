package mesh

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Random newest-vertex bisections keep the mesh conforming (checkMesh), the
// hierarchy exact, every marked cell cut, and the angles bounded below.
// On Rectangle and LShape all cells are right isosceles triangles with the
// hypotenuse as refinement edge, and bisection maps that class to itself:
// the minimum angle stays exactly π/4 (Mitchell 1991). On the other meshes
// NVB produces at most four similarity classes per coarse cell (Sewell 1972;
// Mitchell 1991), so the minimum angle is bounded below by a fixed fraction
// of the coarse one; observed: it never fell below 0.5 of it here.
func TestBisectRandom(t *testing.T) {
	ngon := func(n int, R float64) float64 { return float64(n) / 2 * R * R * math.Sin(2*math.Pi/float64(n)) }
	cases := []struct {
		name  string
		build func() (*Mesh, error)
		area  float64
		exact bool // minimum angle must stay π/4
	}{
		{"rectangle", func() (*Mesh, error) { return Rectangle(0, 2, 0, 1, 2, 1) }, 2, true},
		{"L-shape refined", func() (*Mesh, error) { return LShape(2) }, 3, true},
		{"disk 16", func() (*Mesh, error) { return Disk(1, 16, 1) }, ngon(16, 1), false},
		{"disk 16 refined", func() (*Mesh, error) { return Disk(1, 16, 0.2) }, ngon(16, 1), false},
		{"comb", func() (*Mesh, error) { return Polygon(comb, 10) }, 14, false},
	}
	r := rand.New(rand.NewPCG(1, 2))
	for _, tc := range cases {
		m, err := tc.build()
		if err != nil {
			t.Fatalf("%s: %v", tc.name, err)
		}
		a0 := m.MinAngle()
		worst := 1.0
		for round := range 12 {
			marks := randomMarks(r, len(m.Cells), 0.15)
			if round%4 == 3 { // a single marked cell: the closure alone
				marks = make([]bool, len(m.Cells))
				marks[r.IntN(len(marks))] = true
			}
			f, err := m.Bisect(marks)
			if err != nil {
				t.Fatalf("%s: %v", tc.name, err)
			}
			checkMesh(t, tc.name, f, tc.area)
			children := make([]int, len(m.Cells))
			for _, p := range f.CellParent {
				children[p]++
			}
			for k, yes := range marks {
				if yes && children[k] < 2 {
					t.Fatalf("%s: marked cell %d was not bisected", tc.name, k)
				}
			}
			if f.Level() != m.Level()+1 {
				t.Fatalf("%s: level %d after %d", tc.name, f.Level(), m.Level())
			}
			m = f
			worst = min(worst, m.MinAngle()/a0)
		}
		if tc.exact && math.Abs(m.MinAngle()-math.Pi/4) > 1e-12 {
			t.Errorf("%s: minimum angle %g after bisection, want π/4", tc.name, m.MinAngle())
		}
		if worst < 0.5 {
			t.Errorf("%s: minimum angle fell to %.3f of the coarse mesh's", tc.name, worst)
		}
		t.Logf("%s: %d cells, min angle %.2f°, ratio to coarse %.3f", tc.name, len(m.Cells), m.MinAngle()*180/math.Pi, worst)
	}
}

// Bisecting every cell twice halves every edge once: the same node set and
// cell count as one uniform refinement (an identity of NVB, common practice,
// no source), starting from a compatible labelling.
func TestBisectTwiceIsRefinementSized(t *testing.T) {
	m := must(t)(LShape(1))
	all := func(m *Mesh) []bool {
		b := make([]bool, len(m.Cells))
		for i := range b {
			b[i] = true
		}
		return b
	}
	b1 := must(t)(m.Bisect(all(m)))
	b2 := must(t)(b1.Bisect(all(b1)))
	r := must(t)(m.Refine())
	if len(b2.Cells) != len(r.Cells) || len(b2.Nodes) != len(r.Nodes) {
		t.Fatalf("two bisections: %d cells, %d nodes; refinement: %d, %d", len(b2.Cells), len(b2.Nodes), len(r.Cells), len(r.Nodes))
	}
	// On a compatible mesh one round of bisection of all cells makes no
	// closure: exactly 2 children each.
	if len(b1.Cells) != 2*len(m.Cells) {
		t.Fatalf("one bisection of all %d cells gave %d", len(m.Cells), len(b1.Cells))
	}
}

func TestBisectInterval(t *testing.T) {
	m := must(t)(Interval(0, 3, 3))
	f := must(t)(m.Bisect([]bool{false, true, false}))
	if len(f.Cells) != 4 || len(f.Nodes) != 5 || f.Nodes[4].X != 1.5 || f.Parents[4] != [2]int32{1, 2} {
		t.Fatalf("bisected interval: cells %v nodes %v parents %v", f.Cells, f.Nodes, f.Parents)
	}
	if got := f.CellParent; len(got) != 4 || got[0] != 0 || got[1] != 1 || got[2] != 1 || got[3] != 2 {
		t.Fatalf("cell parents %v", got)
	}
	checkMesh(t, "interval", f, 3)
	if !f.Boundary[0] || !f.Boundary[3] || f.Boundary[4] {
		t.Fatalf("boundary %v", f.Boundary)
	}
}

func bigMesh(b *testing.B) *Mesh {
	m, err := LShape(128) // 98304 cells
	if err != nil {
		b.Fatal(err)
	}
	return m
}

func BenchmarkRefine100k(b *testing.B) {
	m := bigMesh(b)
	b.ReportMetric(float64(len(m.Cells)), "cells")
	for b.Loop() {
		if _, err := m.Refine(); err != nil {
			b.Fatal(err)
		}
	}
}

func BenchmarkBisect100k(b *testing.B) {
	m := bigMesh(b)
	marks := randomMarks(rand.New(rand.NewPCG(3, 4)), len(m.Cells), 0.1)
	b.ReportMetric(float64(len(m.Cells)), "cells")
	for b.Loop() {
		if _, err := m.Bisect(marks); err != nil {
			b.Fatal(err)
		}
	}
}
