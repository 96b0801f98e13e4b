package estimate

import "gapbook/fem"

// addBubbles adds to the quadratic form co of a cell the RT1 fields with
// zero normal trace b_i = λ_i(λ_j R∇λ_l − λ_l R∇λ_j), (i, j, l) cyclic,
// whose divergence is c(3λ_i − 1) with c = ∇λ_j·R∇λ_l (the same for every
// cyclic pair since Σ∇λ = 0), weighted so that the divergence gains the
// mean-free part of −Σ p_i λ_i (p: Π1 f in barycentric coefficients):
// β_i = t_i/(3c) for the target Σ t_i λ_i, Σ t_i = 0.
func addBubbles(co *[6][2]float64, p *[3]float64, g *[3][2]float64) {
	mean := (p[0] + p[1] + p[2]) / 3
	rp := [3][2]float64{perp(g[0]), perp(g[1]), perp(g[2])}
	c := g[1][0]*rp[2][0] + g[1][1]*rp[2][1]
	for i := range 3 {
		j, l := (i+1)%3, (i+2)%3
		beta := -(p[i] - mean) / (3 * c)
		sj, sl := pairSlot(i, j), pairSlot(i, l)
		co[sj][0] += beta * rp[l][0]
		co[sj][1] += beta * rp[l][1]
		co[sl][0] -= beta * rp[j][0]
		co[sl][1] -= beta * rp[j][1]
	}
}

// cellMatrix returns a zero CSR matrix of n rows whose pattern couples the
// free local dofs of every cell, and the positions of the local entries.
// Each row is gathered from the cells around its dof (a dof-to-cell
// incidence built by counting): a first pass counts its distinct columns,
// a second fills and sorts the short row by insertion and records where
// each column went, so the positions of the local entries need no search.
func cellMatrix(n int, dof [][6]int32) (*fem.CSR, [][36]int32) {
	start := make([]int32, n+1)
	for _, d := range dof {
		for _, a := range d {
			if a >= 0 {
				start[a+1]++
			}
		}
	}
	for i := range n {
		start[i+1] += start[i]
	}
	inc := make([]int32, start[n])
	fill := append([]int32(nil), start[:n]...)
	for k, d := range dof {
		for _, a := range d {
			if a >= 0 {
				inc[fill[a]] = int32(k)
				fill[a]++
			}
		}
	}
	// where[b] is the position of column b in the latest row holding it;
	// rows are filled in order, so where[b] < lo means "not in this row".
	where := make([]int32, n)
	for i := range where {
		where[i] = -1
	}
	a := &fem.CSR{Rows: n, Cols: n, RowPtr: make([]int32, n+1)}
	for i := range n {
		c := int32(0)
		for _, k := range inc[start[i]:start[i+1]] {
			for _, b := range dof[k] {
				if b >= 0 && where[b] != int32(i) {
					where[b] = int32(i)
					c++
				}
			}
		}
		a.RowPtr[i+1] = a.RowPtr[i] + c
	}
	for i := range where {
		where[i] = -1
	}
	a.Col = make([]int32, a.RowPtr[n])
	pos := make([][36]int32, len(dof))
	for k := range pos {
		for j := range pos[k] {
			pos[k][j] = -1
		}
	}
	for i := range n {
		lo, end := a.RowPtr[i], a.RowPtr[i]
		cs := inc[start[i]:start[i+1]]
		for _, k := range cs {
			for _, b := range dof[k] {
				if b >= 0 && where[b] < lo {
					where[b] = lo
					a.Col[end] = b
					end++
				}
			}
		}
		row := a.Col[lo:end]
		for p := 1; p < len(row); p++ {
			for q := p; q > 0 && row[q] < row[q-1]; q-- {
				row[q], row[q-1] = row[q-1], row[q]
			}
		}
		for p, b := range row {
			where[b] = lo + int32(p)
		}
		for _, k := range cs {
			d := &dof[k]
			for x := range 6 {
				if d[x] != int32(i) {
					continue
				}
				for y, b := range d {
					if b >= 0 {
						pos[k][6*x+y] = where[b]
					}
				}
			}
		}
	}
	a.Val = make([]float64, len(a.Col))
	return a, pos
}

// blockPre preconditions the hierarchical P2 stream system by the P1
// multigrid on the P1 block and Jacobi on the edge bubbles (the two-level
// splitting P1 ⊕ bubbles is stable uniformly in h; Bank, Dupont &
// Yserentant, Numer. Math. 52 (1988), from memory).
type blockPre struct {
	mg   *fem.Multigrid
	n1   int
	diag []float64
}

func (p blockPre) Apply(dst, r []float64) {
	p.mg.Apply(dst[:p.n1], r[:p.n1])
	for i := p.n1; i < len(r); i++ {
		dst[i] = r[i] / p.diag[i]
	}
}

// pre returns the preconditioner of the current stream matrix.
func (st *stream) pre() fem.Preconditioner {
	if st.order == 0 {
		return st.mg
	}
	for i := st.n1; i < st.n; i++ {
		st.diag[i] = st.a.At(i, i)
	}
	return blockPre{mg: st.mg, n1: st.n1, diag: st.diag}
}
