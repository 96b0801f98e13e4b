package mesh

import "fmt"

// Bisect refines the marked cells by newest-vertex bisection and returns the
// new mesh. Each marked cell is bisected at least once, through the midpoint
// of its refinement edge (the edge opposite vertex 0); the closure then
// bisects neighbours until no hanging node is left, so the result is
// conforming. The new midpoint becomes the newest vertex (vertex 0) of both
// halves.
//
// Method: newest-vertex bisection (Sewell 1972; Mitchell 1991) in the edge
// marking form of Funken, Praetorius & Wissgott, Comput. Methods Appl.
// Math. 11 (2011): the
// closure marks the refinement edge of every cell with a marked edge, then
// each cell is cut into 2, 3 or 4 children. It stays conforming from any
// labelling; from a compatible one (Rectangle, LShape and their uniform
// refinements) the cells keep the similarity classes of the coarse mesh.
//
// The result has Coarse = m, Parents (each new node is the midpoint of an
// edge of m) and CellParent. Large 2-D results are renumbered for locality
// as in Refine (node 0 of m stays node 0). In 1-D the marked intervals are
// halved.
func (m *Mesh) Bisect(marked []bool) (*Mesh, error) {
	if len(marked) != len(m.Cells) {
		return nil, fmt.Errorf("bisect: %d marks for %d cells; give one mark per cell", len(marked), len(m.Cells))
	}
	if m.Dim == 1 {
		return m.bisect1(marked)
	}
	lookup, edges, cellEdges := m.edgeTable()
	// Cells around each edge (at most two), for the closure.
	around := make([][2]int32, len(edges))
	for e := range around {
		around[e] = [2]int32{-1, -1}
	}
	for k, ce := range cellEdges {
		for _, e := range ce {
			if around[e][0] < 0 {
				around[e][0] = int32(k)
			} else {
				around[e][1] = int32(k)
			}
		}
	}
	split := make([]bool, len(edges))
	var stack []int32
	mark := func(e int32) {
		if !split[e] {
			split[e] = true
			stack = append(stack, e)
		}
	}
	for k, yes := range marked {
		if yes {
			mark(cellEdges[k][0])
		}
	}
	for len(stack) > 0 {
		e := stack[len(stack)-1]
		stack = stack[:len(stack)-1]
		for _, k := range around[e] {
			if k >= 0 {
				mark(cellEdges[k][0])
			}
		}
	}

	nv := len(m.Nodes)
	newNode := make([]int32, len(edges))
	count := 0
	for e, s := range split {
		if s {
			newNode[e] = int32(nv + count)
			count++
		}
	}
	if err := checkBudget(nv+count, len(m.Cells)+3*count); err != nil {
		return nil, fmt.Errorf("bisect: %w", err)
	}
	f := &Mesh{Dim: 2, Coarse: m}
	f.Nodes = make([]Point, nv+count)
	copy(f.Nodes, m.Nodes)
	f.Parents = make([][2]int32, nv+count)
	for i := range nv {
		f.Parents[i] = [2]int32{int32(i), int32(i)}
	}
	for e, s := range split {
		if s {
			ab := edges[e]
			p, q := m.Nodes[ab[0]], m.Nodes[ab[1]]
			f.Nodes[newNode[e]] = Point{(p.X + q.X) / 2, (p.Y + q.Y) / 2}
			f.Parents[newNode[e]] = ab
		}
	}
	f.Cells = make([][3]int32, 0, len(m.Cells)+2*count)
	f.CellParent = make([]int32, 0, len(m.Cells)+2*count)
	for k, c := range m.Cells {
		ce := cellEdges[k]
		before := len(f.Cells)
		if !split[ce[0]] {
			f.Cells = append(f.Cells, c)
		} else {
			// [v0 v1 v2] → [x v0 v1], [x v2 v0] with x the midpoint of v1v2;
			// each half is bisected again if its refinement edge (an old
			// edge of c) is split.
			x := newNode[ce[0]]
			if split[ce[2]] {
				y := newNode[ce[2]]
				f.Cells = append(f.Cells, [3]int32{y, x, c[0]}, [3]int32{y, c[1], x})
			} else {
				f.Cells = append(f.Cells, [3]int32{x, c[0], c[1]})
			}
			if split[ce[1]] {
				y := newNode[ce[1]]
				f.Cells = append(f.Cells, [3]int32{y, x, c[2]}, [3]int32{y, c[0], x})
			} else {
				f.Cells = append(f.Cells, [3]int32{x, c[2], c[0]})
			}
		}
		for range len(f.Cells) - before {
			f.CellParent = append(f.CellParent, int32(k))
		}
	}
	f.BoundaryEdges = make([][2]int32, 0, len(m.BoundaryEdges)+count)
	for _, be := range m.BoundaryEdges {
		e := lookup.find(be[0], be[1])
		if e < 0 {
			return nil, fmt.Errorf("bisect: boundary edge %v is not an edge of any cell", be)
		}
		if split[e] {
			x := newNode[e]
			f.BoundaryEdges = append(f.BoundaryEdges, [2]int32{be[0], x}, [2]int32{x, be[1]})
		} else {
			f.BoundaryEdges = append(f.BoundaryEdges, be)
		}
	}
	f.renumber()
	f.markBoundary()
	return f, nil
}

func (m *Mesh) bisect1(marked []bool) (*Mesh, error) {
	nv, count := len(m.Nodes), 0
	for _, yes := range marked {
		if yes {
			count++
		}
	}
	if err := checkBudget(nv+count, len(m.Cells)+count); err != nil {
		return nil, fmt.Errorf("bisect: %w", err)
	}
	f := &Mesh{Dim: 1, Coarse: m, Nodes: make([]Point, nv, nv+count), Parents: make([][2]int32, nv, nv+count)}
	copy(f.Nodes, m.Nodes)
	for i := range nv {
		f.Parents[i] = [2]int32{int32(i), int32(i)}
	}
	f.Cells = make([][3]int32, 0, len(m.Cells)+count)
	f.CellParent = make([]int32, 0, len(m.Cells)+count)
	for k, c := range m.Cells {
		if !marked[k] {
			f.Cells = append(f.Cells, c)
			f.CellParent = append(f.CellParent, int32(k))
			continue
		}
		x := int32(len(f.Nodes))
		f.Nodes = append(f.Nodes, Point{X: (m.Nodes[c[0]].X + m.Nodes[c[1]].X) / 2})
		f.Parents = append(f.Parents, [2]int32{c[0], c[1]})
		f.Cells = append(f.Cells, [3]int32{c[0], x, -1}, [3]int32{x, c[1], -1})
		f.CellParent = append(f.CellParent, int32(k), int32(k))
	}
	f.Boundary = make([]bool, len(f.Nodes))
	copy(f.Boundary, m.Boundary)
	return f, nil
}
