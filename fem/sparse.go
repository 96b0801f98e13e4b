package fem

import (
	"fmt"
	"slices"
)

// CSR is a sparse matrix in compressed sparse row form. Column indices are
// sorted within each row. Row i holds the entries RowPtr[i] ≤ p <
// RowPtr[i+1] with column Col[p] and value Val[p].
type CSR struct {
	Rows, Cols int
	RowPtr     []int32
	Col        []int32
	Val        []float64
}

// NNZ returns the number of stored entries.
func (a *CSR) NNZ() int { return len(a.Col) }

// patternFromRows builds a CSR pattern with zero values from per-row
// column lists (unsorted, possibly with repeats). Repeats are dropped by a
// stamp per column before the short remaining row is sorted.
func patternFromRows(rows, cols int, rowCols func(i int, buf []int32) []int32) *CSR {
	a := &CSR{Rows: rows, Cols: cols, RowPtr: make([]int32, rows+1), Col: make([]int32, 0, 8*rows)}
	stamp := make([]int32, cols)
	for i := range stamp {
		stamp[i] = -1
	}
	var buf []int32
	for i := range rows {
		buf = rowCols(i, buf[:0])
		first := len(a.Col)
		for _, j := range buf {
			if stamp[j] != int32(i) {
				stamp[j] = int32(i)
				a.Col = append(a.Col, j)
			}
		}
		row := a.Col[first:]
		for p := 1; p < len(row); p++ {
			for q := p; q > 0 && row[q] < row[q-1]; q-- {
				row[q], row[q-1] = row[q-1], row[q]
			}
		}
		a.RowPtr[i+1] = int32(len(a.Col))
	}
	// Patterns live as long as their space: do not keep much unused
	// capacity.
	if cap(a.Col) > len(a.Col)+len(a.Col)/16 {
		a.Col = slices.Clone(a.Col)
	}
	a.Val = make([]float64, len(a.Col))
	return a
}

// Find returns the position of entry (i, j) in Val, or -1 when it is not in
// the pattern (binary search in row i).
func (a *CSR) Find(i, j int) int {
	lo, hi := int(a.RowPtr[i]), int(a.RowPtr[i+1])
	p, ok := slices.BinarySearch(a.Col[lo:hi], int32(j))
	if !ok {
		return -1
	}
	return lo + p
}

// At returns entry (i, j) (zero outside the pattern).
func (a *CSR) At(i, j int) float64 {
	if p := a.Find(i, j); p >= 0 {
		return a.Val[p]
	}
	return 0
}

// MulVec sets dst = A x. dst must not alias x.
func (a *CSR) MulVec(dst, x []float64) {
	rp, col, val := a.RowPtr, a.Col, a.Val
	for i := range a.Rows {
		s := 0.0
		for p := rp[i]; p < rp[i+1]; p++ {
			s += val[p] * x[col[p]]
		}
		dst[i] = s
	}
}

// MulVecT sets dst = Aᵀ x.
func (a *CSR) MulVecT(dst, x []float64) {
	clear(dst[:a.Cols])
	for i := range a.Rows {
		xi := x[i]
		for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
			dst[a.Col[p]] += a.Val[p] * xi
		}
	}
}

// Transpose returns Aᵀ as a new matrix.
func (a *CSR) Transpose() *CSR {
	t := &CSR{Rows: a.Cols, Cols: a.Rows, RowPtr: make([]int32, a.Cols+1), Col: make([]int32, len(a.Col)), Val: make([]float64, len(a.Val))}
	for _, j := range a.Col {
		t.RowPtr[j+1]++
	}
	for j := range a.Cols {
		t.RowPtr[j+1] += t.RowPtr[j]
	}
	next := slices.Clone(t.RowPtr[:a.Cols])
	for i := range a.Rows {
		for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
			j := a.Col[p]
			q := next[j]
			next[j]++
			t.Col[q] = int32(i)
			t.Val[q] = a.Val[p]
		}
	}
	return t
}

// Dense returns the matrix as a row-major dense array (for tests and small
// coarse problems).
func (a *CSR) Dense() []float64 {
	d := make([]float64, a.Rows*a.Cols)
	for i := range a.Rows {
		for p := a.RowPtr[i]; p < a.RowPtr[i+1]; p++ {
			d[i*a.Cols+int(a.Col[p])] += a.Val[p]
		}
	}
	return d
}

// Galerkin computes coarse operators Pᵀ A P for a fixed prolongation P and a
// fixed pattern of A, the way multigrid needs them: the pattern of the
// product is found once, then each Update is one pass over the nonzeros of A
// (about four multiply-adds per nonzero for P1 prolongation) without
// allocation.
type Galerkin struct {
	P, Pt  *CSR
	Coarse *CSR
	mark   []int32 // scratch: column → position in the current coarse row
}

// NewGalerkin prepares the product Pᵀ A P for matrices with the pattern of a.
func NewGalerkin(a, p *CSR) (*Galerkin, error) {
	if a.Rows != a.Cols || p.Rows != a.Rows {
		return nil, fmt.Errorf("galerkin product: A is %d×%d and P is %d×%d; need A square with as many rows as P", a.Rows, a.Cols, p.Rows, p.Cols)
	}
	g := &Galerkin{P: p, Pt: p.Transpose(), mark: make([]int32, p.Cols)}
	for i := range g.mark {
		g.mark[i] = -1
	}
	pt := g.Pt
	g.Coarse = patternFromRows(p.Cols, p.Cols, func(c int, buf []int32) []int32 {
		for q := pt.RowPtr[c]; q < pt.RowPtr[c+1]; q++ {
			i := pt.Col[q]
			for r := a.RowPtr[i]; r < a.RowPtr[i+1]; r++ {
				j := a.Col[r]
				for s := p.RowPtr[j]; s < p.RowPtr[j+1]; s++ {
					buf = append(buf, p.Col[s])
				}
			}
		}
		return buf
	})
	return g, nil
}

// Update recomputes Coarse = Pᵀ A P for new values of A (same pattern as the
// matrix given to NewGalerkin).
func (g *Galerkin) Update(a *CSR) {
	p, pt, c, mark := g.P, g.Pt, g.Coarse, g.mark
	for ci := range c.Rows {
		lo, hi := c.RowPtr[ci], c.RowPtr[ci+1]
		for q := lo; q < hi; q++ {
			mark[c.Col[q]] = q
			c.Val[q] = 0
		}
		for q := pt.RowPtr[ci]; q < pt.RowPtr[ci+1]; q++ {
			i, wi := pt.Col[q], pt.Val[q]
			for r := a.RowPtr[i]; r < a.RowPtr[i+1]; r++ {
				j, aij := a.Col[r], wi*a.Val[r]
				for s := p.RowPtr[j]; s < p.RowPtr[j+1]; s++ {
					c.Val[mark[p.Col[s]]] += aij * p.Val[s]
				}
			}
		}
	}
}
