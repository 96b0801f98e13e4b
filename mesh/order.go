package mesh

// renumberFrom is the node count from which Refine and Bisect renumber the
// nodes for locality. Below it the vectors of a solve fit in the processor
// caches, so the order costs nothing, and small meshes keep the simple
// numbering (the nodes of Coarse, then the new midpoints in edge order) that
// stored reference solutions are indexed by.
const renumberFrom = 1 << 14

// renumber orders the nodes of a freshly refined 2-D mesh with at least
// renumberFrom nodes by their first appearance in the cells, keeping node 0
// first, and rewrites Nodes, Parents, Cells and BoundaryEdges to match
// (Boundary is marked afterwards by the caller).
//
// Why: Refine and Bisect append the new midpoints after the nodes of Coarse,
// so after a few refinements the two ends of most edges lie far apart in
// memory and a sparse matrix–vector product misses the cache on nearly
// every column. The cells, in contrast, are ordered by parent (the children
// of coarse cell k follow each other), which recursively is a hierarchical,
// quadtree-like order; numbering the nodes as the cells meet them carries
// that locality over to the unknowns (the usual ordering of unknowns by
// traversal of the element list: common practice, no source). Node 0 stays
// node 0 so that a space pinned at node 0 keeps its multigrid hierarchy.
func (f *Mesh) renumber() {
	n := len(f.Nodes)
	if n < renumberFrom {
		return
	}
	perm := make([]int32, n) // old number → new number, −1 while unseen
	for i := range perm {
		perm[i] = -1
	}
	next := int32(0)
	if n > 0 {
		perm[0] = 0
		next = 1
	}
	for _, c := range f.Cells {
		for _, v := range c[:f.Dim+1] {
			if perm[v] < 0 {
				perm[v] = next
				next++
			}
		}
	}
	// Nodes in no cell (none in meshes built here) keep their relative order
	// at the end.
	for i := range perm {
		if perm[i] < 0 {
			perm[i] = next
			next++
		}
	}
	nodes := make([]Point, n)
	parents := make([][2]int32, n)
	for i, p := range perm {
		nodes[p] = f.Nodes[i]
		parents[p] = f.Parents[i]
	}
	f.Nodes, f.Parents = nodes, parents
	for k := range f.Cells {
		for i := range f.Dim + 1 {
			f.Cells[k][i] = perm[f.Cells[k][i]]
		}
	}
	for k := range f.BoundaryEdges {
		f.BoundaryEdges[k] = [2]int32{perm[f.BoundaryEdges[k][0]], perm[f.BoundaryEdges[k][1]]}
	}
}
