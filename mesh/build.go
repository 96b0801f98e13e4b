package mesh

import (
	"fmt"
	"math"
	"slices"
)

// FromTriangles builds a 2-D mesh from triangles given elsewhere (an
// imported file): nodes that no triangle uses are dropped, clockwise
// triangles are turned counter-clockwise, and the boundary is the set of
// edges of one triangle only. Keep maps each node of the mesh to its index
// in nodes. Degenerate triangles, repeated nodes of a triangle, an edge of
// more than two triangles and two used nodes at one point are errors
// naming them.
func FromTriangles(nodes []Point, cells [][3]int32) (m *Mesh, keep []int, flipped int, err error) {
	if len(cells) == 0 {
		return nil, nil, 0, fmt.Errorf("no triangles")
	}
	if err := checkBudget(len(nodes), len(cells)); err != nil {
		return nil, nil, 0, err
	}
	used := make([]int32, len(nodes))
	for i := range used {
		used[i] = -1
	}
	out := make([][3]int32, len(cells))
	for k, c := range cells {
		for _, v := range c {
			if v < 0 || int(v) >= len(nodes) {
				return nil, nil, 0, fmt.Errorf("triangle %d refers to node %d; there are %d nodes", k, v, len(nodes))
			}
		}
		if c[0] == c[1] || c[1] == c[2] || c[0] == c[2] {
			return nil, nil, 0, fmt.Errorf("triangle %d repeats a node: %v", k, c)
		}
		a, b, d := nodes[c[0]], nodes[c[1]], nodes[c[2]]
		area := (b.X-a.X)*(d.Y-a.Y) - (d.X-a.X)*(b.Y-a.Y)
		scale := math.Max(math.Abs(b.X-a.X)+math.Abs(b.Y-a.Y), math.Abs(d.X-a.X)+math.Abs(d.Y-a.Y))
		if !(math.Abs(area) > 1e-12*scale*scale) {
			return nil, nil, 0, fmt.Errorf("triangle %d is degenerate: its nodes %v, %v, %v are (nearly) on one line", k, a, b, d)
		}
		if area < 0 {
			c[1], c[2] = c[2], c[1]
			flipped++
		}
		out[k] = c
		for _, v := range c {
			used[v] = 0
		}
	}
	for i := range used {
		if used[i] == 0 {
			used[i] = int32(len(keep))
			keep = append(keep, i)
		}
	}
	pts := make([]Point, len(keep))
	for j, i := range keep {
		pts[j] = nodes[i]
	}
	// Two used nodes at one point would leave a crack in the mesh.
	order := make([]int, len(pts))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(i, j int) int {
		if pts[i].X != pts[j].X {
			return cmpFloat(pts[i].X, pts[j].X)
		}
		return cmpFloat(pts[i].Y, pts[j].Y)
	})
	for n := 1; n < len(order); n++ {
		if pts[order[n]] == pts[order[n-1]] {
			return nil, nil, 0, fmt.Errorf("nodes %d and %d are at the same point %v; merge them (the mesh would have a crack)", keep[order[n-1]], keep[order[n]], pts[order[n]])
		}
	}
	for k := range out {
		for i := range 3 {
			out[k][i] = used[out[k][i]]
		}
	}
	count := make(map[[2]int32]int, 3*len(out)/2)
	for k, c := range out {
		for i := range 3 {
			a, b := c[(i+1)%3], c[(i+2)%3]
			e := [2]int32{min(a, b), max(a, b)}
			count[e]++
			if count[e] > 2 {
				return nil, nil, 0, fmt.Errorf("the edge from node %d to node %d belongs to more than two triangles (triangle %d is the third)", keep[a], keep[b], k)
			}
		}
	}
	return fromCells(pts, out), keep, flipped, nil
}

func cmpFloat(a, b float64) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// FromSegments builds a 1-D mesh from line segments given elsewhere: the
// nodes are put in increasing order (Keep maps each node of the mesh to
// its index in xs) and the segments must join them into one interval
// without gaps or overlaps.
func FromSegments(xs []float64, segs [][2]int32) (m *Mesh, keep []int, err error) {
	if len(segs) == 0 {
		return nil, nil, fmt.Errorf("no line segments")
	}
	if err := checkBudget(len(xs), len(segs)); err != nil {
		return nil, nil, err
	}
	seen := map[int]bool{}
	for k, s := range segs {
		for _, v := range s {
			if v < 0 || int(v) >= len(xs) {
				return nil, nil, fmt.Errorf("segment %d refers to node %d; there are %d nodes", k, v, len(xs))
			}
			seen[int(v)] = true
		}
		if xs[s[0]] == xs[s[1]] {
			return nil, nil, fmt.Errorf("segment %d has length zero (nodes %d and %d at x = %g)", k, s[0], s[1], xs[s[0]])
		}
	}
	for i := range seen {
		keep = append(keep, i)
	}
	slices.SortFunc(keep, func(i, j int) int { return cmpFloat(xs[i], xs[j]) })
	pos := map[int]int{}
	for j, i := range keep {
		if j > 0 && xs[i] == xs[keep[j-1]] {
			return nil, nil, fmt.Errorf("nodes %d and %d are at the same point x = %g", keep[j-1], i, xs[i])
		}
		pos[i] = j
	}
	n := len(keep)
	if len(segs) != n-1 {
		return nil, nil, fmt.Errorf("%d segments on %d nodes: they do not join the nodes into one interval", len(segs), n)
	}
	joined := make([]bool, n-1)
	for k, s := range segs {
		a, b := pos[int(s[0])], pos[int(s[1])]
		if a > b {
			a, b = b, a
		}
		if b != a+1 || joined[a] {
			return nil, nil, fmt.Errorf("segment %d (x from %g to %g) skips over a node or repeats a segment", k, xs[s[0]], xs[s[1]])
		}
		joined[a] = true
	}
	m = &Mesh{Dim: 1, Nodes: make([]Point, n), Cells: make([][3]int32, n-1), Boundary: make([]bool, n)}
	for j, i := range keep {
		m.Nodes[j] = Point{X: xs[i]}
	}
	for j := range n - 1 {
		m.Cells[j] = [3]int32{int32(j), int32(j + 1), -1}
	}
	m.Boundary[0], m.Boundary[n-1] = true, true
	return m, keep, nil
}
