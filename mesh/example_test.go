package mesh_test

import (
	"fmt"

	"gapbook/mesh"
)

// An adaptive step on the L-shape: bisect the cells touching the re-entrant
// corner; the closure keeps the mesh conforming.
func ExampleMesh_Bisect() {
	m, _ := mesh.LShape(2)
	marked := make([]bool, m.NumCells())
	for k := range marked {
		for _, v := range m.Vertices(k) {
			if m.Nodes[v] == (mesh.Point{}) {
				marked[k] = true
			}
		}
	}
	f, _ := m.Bisect(marked)
	fmt.Println(m.NumCells(), "cells,", f.NumCells(), "after bisection; width", f.MinWidth(), "area", f.Measure())
	// Output: 24 cells, 30 after bisection; width 2 area 3
}
