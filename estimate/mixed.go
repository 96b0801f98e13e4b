package estimate

import (
	"context"
	"fmt"
	"math"
	"sort"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
)

// equilibrate1 builds the 1-D flux y* = c − ∫_a^x Π_k f, continuous and
// piecewise of degree k + 1, with c minimising ∫ D_G(v', y*).
func (e *Equilibrated) equilibrate1(s *fem.P1, G convex.Potential, v []float64) error {
	m := s.Mesh
	nc := m.NumCells()
	order := make([]int, nc)
	left := func(k int) float64 { return math.Min(m.Nodes[m.Cells[k][0]].X, m.Nodes[m.Cells[k][1]].X) }
	for k := range order {
		order[k] = k
	}
	sort.Slice(order, func(a, b int) bool { return left(order[a]) < left(order[b]) })
	// Values of the c = 0 profile at the two nodes and the midpoint.
	y := 0.0
	for _, k := range order {
		c := m.Cells[k]
		x0, x1 := m.Nodes[c[0]].X, m.Nodes[c[1]].X
		gl, gr, h := e.proj[k][0], e.proj[k][1], x1-x0
		forward := h > 0
		if !forward {
			gl, gr, h = gr, gl, -h
		}
		yl, ym, yr := y, y-h*(3*gl+gr)/8, y-h*(gl+gr)/2
		y0, y1 := yl, yr
		if !forward {
			y0, y1 = yr, yl
		}
		e.coef[k][0][0], e.coef[k][1][0], e.coef[k][5][0] = y0, y1, 4*ym-y0-y1
		y = yr
	}
	r := fem.Line(11)
	nq := r.Len()
	base := make([]float64, nc*nq)
	wt := make([]float64, nc*nq)
	slope := make([]float64, nc)
	var sumSig, sumY, length, scale float64
	for k := range nc {
		c := m.Cells[k]
		slope[k] = (v[c[1]] - v[c[0]]) / (m.Nodes[c[1]].X - m.Nodes[c[0]].X)
		sig := convex.Flux(G, [2]float64{slope[k], 0})[0]
		for q, p := range r.Points {
			yq, _ := e.At(k, [3]float64{1 - p[0], p[0], 0})
			base[k*nq+q] = yq[0]
			wt[k*nq+q] = r.Weights[q] * s.Area[k]
			sumY += wt[k*nq+q] * yq[0]
			scale = math.Max(scale, math.Abs(yq[0]))
		}
		sumSig += s.Area[k] * sig
		length += s.Area[k]
		scale = math.Max(scale, math.Abs(sig))
	}
	// dF/dc = ∫ ((G*)'(y* + c) − v'), increasing in c; its second
	// derivative uses (g*)”(s) = 1/g”((g*)'(s)).
	deriv := func(c float64) (d1, d2 float64) {
		for i, b := range base {
			eta := b + c
			a := math.Abs(eta)
			_, tau := G.Conjugate(a)
			_, _, g2 := G.Profile(tau)
			d1 += wt[i] * (math.Copysign(tau, eta) - slope[i/nq])
			d2 += wt[i] / g2
		}
		return d1, d2
	}
	c := (sumSig - sumY) / length
	if scale == 0 {
		scale = 1
	}
	lo, hi := c, c
	step := 1e-3 * scale
	d, _ := deriv(c)
	e.Iterations++
	switch {
	case d == 0:
	case d < 0:
		for {
			hi += step
			step *= 2
			e.Iterations++
			if dd, _ := deriv(hi); dd >= 0 || math.IsInf(hi, 0) {
				break
			}
			lo = hi
		}
	default:
		for {
			lo -= step
			step *= 2
			e.Iterations++
			if dd, _ := deriv(lo); dd <= 0 || math.IsInf(lo, 0) {
				break
			}
			hi = lo
		}
	}
	if math.IsInf(lo, 0) || math.IsInf(hi, 0) || math.IsNaN(d) {
		return fmt.Errorf("equilibrated flux: the constant of the 1-D flux has no finite optimum (∫ (G*)'(y*) − v' = %g); check the potential and the data", d)
	}
	// Safeguarded Newton (rtsafe, common practice, no source).
	for it := 0; it < 200 && d != 0 && hi-lo > 4e-16*math.Max(math.Abs(lo), math.Abs(hi)); it++ {
		d1, d2 := deriv(c)
		e.Iterations++
		if d1 == 0 {
			break
		}
		if d1 < 0 {
			lo = c
		} else {
			hi = c
		}
		next := c - d1/d2
		if !(next > lo && next < hi) {
			next = lo + (hi-lo)/2
		}
		if next == c {
			break
		}
		c = next
	}
	for k := range nc {
		addConstant(&e.coef[k], [2]float64{c, 0}, 2)
	}
	e.Steps = 1
	return nil
}

// equilibrate2 is the 2-D reconstruction described at Equilibrate.
func (e *Equilibrated) equilibrate2(ctx context.Context, s *fem.P1, G convex.Potential, v []float64, opt EquilibrateOptions) error {
	m := s.Mesh
	rt, err := fem.NewRT0(m)
	if err != nil {
		return fmt.Errorf("equilibrated flux: %w", err)
	}
	nc, ne, nn := m.NumCells(), rt.NumEdges(), m.NumNodes()
	if h := ne - nn - nc + 1; h != 0 {
		return fmt.Errorf("equilibrated flux: the mesh has Euler characteristic %d (%d nodes, %d edges, %d cells); the stream-function correction needs a connected domain without holes", nn-ne+nc, nn, ne, nc)
	}
	grad := make([][2]float64, nc)
	s.Gradient(v, grad)
	sigma := make([][2]float64, nc)
	var gmax float64
	for k := range nc {
		sigma[k] = convex.Flux(G, grad[k])
		gmax = math.Max(gmax, math.Hypot(grad[k][0], grad[k][1]))
	}
	// Edge fluxes of σ averaged across each edge, and the cells of each edge.
	flux := make([]float64, ne)
	count := make([]int8, ne)
	edgeCells := make([][2]int32, ne)
	for k := range nc {
		for i := range 3 {
			ed := rt.CellEdges[k][i]
			nx, ny := rt.Normal(m, int(ed))
			flux[ed] += rt.Length[ed] * (sigma[k][0]*nx + sigma[k][1]*ny)
			edgeCells[ed][count[ed]] = int32(k)
			count[ed]++
		}
	}
	for ed := range flux {
		flux[ed] /= float64(count[ed])
	}
	if err := e.balance(rt, s.Area, flux, edgeCells); err != nil {
		return err
	}
	for k, c := range m.Cells {
		var Y [3][2]float64
		for i := range 3 {
			w := float64(rt.Sign[k][i]) * flux[rt.CellEdges[k][i]] / (2 * s.Area[k])
			pi := m.Nodes[c[i]]
			for j := range 3 {
				pj := m.Nodes[c[j]]
				Y[j][0] += w * (pj.X - pi.X)
				Y[j][1] += w * (pj.Y - pi.Y)
			}
		}
		addLinear(&e.coef[k], Y, 3)
		if e.order == 1 {
			e.addBubbles(k, &s.Grad[k])
		}
	}
	st, err := newStream(s, rt, e.order)
	if err != nil {
		return err
	}
	reg := opt.Reg * gmax
	if reg == 0 {
		reg = opt.Reg
	}
	return st.minimise(ctx, e, G, grad, sigma, reg, opt)
}

// balance corrects the edge fluxes along a spanning tree of the dual graph
// (cells joined across interior edges, the outside reached through boundary
// edges) so that the outflow Σ_i sign_i F_i of every cell equals
// −|T| Π0 f: leaves first, each cell pushes its defect through the edge to
// its parent.
func (e *Equilibrated) balance(rt *fem.RT0, area, flux []float64, edgeCells [][2]int32) error {
	nc := len(area)
	parent := make([]int32, nc)
	for k := range parent {
		parent[k] = -1
	}
	queue := make([]int32, 0, nc)
	for k := range nc {
		for i := range 3 {
			if ed := rt.CellEdges[k][i]; rt.OnBoundary[ed] {
				parent[k] = int32(i)
				queue = append(queue, int32(k))
				break
			}
		}
	}
	for head := 0; head < len(queue); head++ {
		k := queue[head]
		for i := range 3 {
			ed := rt.CellEdges[k][i]
			if rt.OnBoundary[ed] {
				continue
			}
			q := edgeCells[ed][0]
			if q == k {
				q = edgeCells[ed][1]
			}
			if parent[q] < 0 {
				for j := range 3 {
					if rt.CellEdges[q][j] == ed {
						parent[q] = int32(j)
					}
				}
				queue = append(queue, q)
			}
		}
	}
	if len(queue) != nc {
		return fmt.Errorf("equilibrated flux: %d of %d cells cannot be reached from the boundary across edges; the mesh is not connected", nc-len(queue), nc)
	}
	defect := make([]float64, nc)
	for k := range nc {
		p := &e.proj[k]
		d := -area[k] * (p[0] + p[1] + p[2]) / 3
		for i := range 3 {
			d -= float64(rt.Sign[k][i]) * flux[rt.CellEdges[k][i]]
		}
		defect[k] = d
	}
	for idx := nc - 1; idx >= 0; idx-- {
		k := queue[idx]
		i := parent[k]
		ed := rt.CellEdges[k][i]
		df := float64(rt.Sign[k][i]) * defect[k]
		flux[ed] += df
		defect[k] = 0
		if rt.OnBoundary[ed] {
			continue
		}
		q := edgeCells[ed][0]
		if q == k {
			q = edgeCells[ed][1]
		}
		for j := range 3 {
			if rt.CellEdges[q][j] == ed {
				defect[q] -= float64(rt.Sign[q][j]) * df
			}
		}
	}
	return nil
}

// perp is the rotation R a = (a_y, −a_x); R∇ψ is the curl of a stream
// function ψ, divergence free with continuous normal component.
func perp(a [2]float64) [2]float64 { return [2]float64{a[1], -a[0]} }

// pinnedCopy returns a shallow copy of the mesh hierarchy in which only
// node 0 is a boundary node, so that P1 on it is the stream-function space
// modulo constants. Node 0 keeps its number under Refine; the hierarchy is
// cut where it does not.
func pinnedCopy(m *mesh.Mesh) *mesh.Mesh {
	c := *m
	c.Boundary = make([]bool, len(m.Nodes))
	c.Boundary[0] = true
	if m.Coarse != nil && len(m.Parents) == len(m.Nodes) && m.Parents[0] == [2]int32{0, 0} {
		c.Coarse = pinnedCopy(m.Coarse)
	} else {
		c.Coarse, c.Parents = nil, nil
	}
	return &c
}

// stream is the stream-function space P1 (k = 0) or hierarchical P2
// (k = 1: P1 plus the edge bubbles 4λ_jλ_k) with node 0 pinned, and the
// solver of its weighted stiffness systems.
type stream struct {
	s     *fem.P1 // the original space: geometry
	ps    *fem.P1 // pinned P1
	rt    *fem.RT0
	order int
	n1, n int
	a, pa *fem.CSR // system matrix; P1 block for multigrid
	mg    *fem.Multigrid
	dof   [][6]int32  // free dofs of each cell (−1: pinned)
	pos   [][36]int32 // position in a.Val of local entry (a, b), k = 1
	diag  []float64   // diagonal of a, for Jacobi on the bubbles
	rule  fem.Rule
}

func newStream(s *fem.P1, rt *fem.RT0, order int) (*stream, error) {
	ps, err := fem.NewP1(pinnedCopy(s.Mesh))
	if err != nil {
		return nil, fmt.Errorf("equilibrated flux: stream space: %w", err)
	}
	st := &stream{s: s, ps: ps, rt: rt, order: order, n1: ps.NumFree()}
	st.pa = ps.NewMatrix()
	if st.mg, err = fem.NewMultigrid(ps); err != nil {
		return nil, fmt.Errorf("equilibrated flux: stream space: %w", err)
	}
	m := s.Mesh
	st.dof = make([][6]int32, m.NumCells())
	for k, c := range m.Cells {
		for a := range 3 {
			st.dof[k][a] = ps.Free[c[a]]
			st.dof[k][3+a] = -1
			if order == 1 {
				st.dof[k][3+a] = int32(st.n1) + rt.CellEdges[k][a]
			}
		}
	}
	st.n = st.n1
	if order == 0 {
		st.a = st.pa
		st.rule = fem.Triangle(2)
		return st, nil
	}
	st.n += rt.NumEdges()
	st.a, st.pos = cellMatrix(st.n, st.dof)
	st.diag = make([]float64, st.n)
	st.rule = fem.Triangle(4)
	return st, nil
}

// gradBasis returns the gradients of the local stream basis at lam: ∇λ_a
// and, for k = 1, ∇(4λ_jλ_k) = 4(λ_k∇λ_j + λ_j∇λ_k).
func (st *stream) gradBasis(k int, lam [3]float64, dst *[6][2]float64) int {
	g := &st.s.Grad[k]
	for a := range 3 {
		dst[a] = g[a]
	}
	if st.order == 0 {
		return 3
	}
	for i := range 3 {
		j, l := pairs[i][0], pairs[i][1]
		dst[3+i] = [2]float64{4 * (lam[l]*g[j][0] + lam[j]*g[l][0]), 4 * (lam[l]*g[j][1] + lam[j]*g[l][1])}
	}
	return 6
}

// minimise runs the quadratic-model step and opt.Newton Newton steps on
// Φ(y*) = ∫ D_G(∇v, y*) over y* = y0 + R∇ψ.
func (st *stream) minimise(ctx context.Context, e *Equilibrated, G convex.Potential, grad, sigma [][2]float64, reg float64, opt EquilibrateOptions) error {
	m := st.s.Mesh
	nc := m.NumCells()
	r := st.rule
	nq := r.Len()
	lams := make([][3]float64, nq)
	for q, p := range r.Points {
		lams[q] = [3]float64{1 - p[0] - p[1], p[0], p[1]}
	}
	gvec := make([][2]float64, nc*nq)
	hess := make([][3]float64, nc*nq)
	b := make([]float64, st.n)
	x := make([]float64, st.n)
	var phi float64
	for step := 0; step <= opt.Newton; step++ {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("equilibrated flux: stopped: %w", err)
		}
		for k := range nc {
			var w [3]float64
			if step == 0 {
				h := convex.Hessian(G, grad[k], reg)
				w = inv2(h)
			}
			for q := range nq {
				y, _ := e.At(k, lams[q])
				i := k*nq + q
				if step == 0 {
					d := [2]float64{y[0] - sigma[k][0], y[1] - sigma[k][1]}
					gvec[i] = [2]float64{w[0]*d[0] + w[1]*d[1], w[1]*d[0] + w[2]*d[1]}
					hess[i] = w
					continue
				}
				xi := convex.DualFlux(G, y)
				gvec[i] = [2]float64{xi[0] - grad[k][0], xi[1] - grad[k][1]}
				hess[i] = inv2(convex.Hessian(G, xi, reg))
			}
		}
		if err := st.assemble(gvec, hess, b); err != nil {
			return err
		}
		clear(x)
		stats, err := fem.PCG(ctx, st.a, st.pre(), b, x, opt.Tol, 10000)
		e.Iterations += stats.Iterations
		if err != nil && ctx.Err() != nil {
			return fmt.Errorf("equilibrated flux: %w", err)
		}
		// Any stream function keeps the balance; a failed CG only costs
		// optimality, so its iterate is used as it is.
		delta := make([][6][2]float64, nc)
		for k := range nc {
			st.curl(k, x, &delta[k])
		}
		if step == 0 {
			e.addStep(delta, 1)
			e.Steps++
			if opt.Newton > 0 {
				phi = e.gapIntegral(st.s, G, grad, r)
			}
			continue
		}
		accepted := false
		for t := 1.0; t > 1e-3; t /= 2 {
			e.addStep(delta, t)
			p := e.gapIntegral(st.s, G, grad, r)
			if p < phi {
				phi, accepted = p, true
				break
			}
			e.addStep(delta, -t)
		}
		if !accepted {
			break
		}
		e.Steps++
	}
	return nil
}

// inv2 returns the inverse of the symmetric 2×2 matrix (xx, xy, yy).
func inv2(h [3]float64) [3]float64 {
	det := h[0]*h[2] - h[1]*h[1]
	return [3]float64{h[2] / det, -h[1] / det, h[0] / det}
}

// addStep adds t·delta to the quadratic forms.
func (e *Equilibrated) addStep(delta [][6][2]float64, t float64) {
	for k := range delta {
		for i := range 6 {
			e.coef[k][i][0] += t * delta[k][i][0]
			e.coef[k][i][1] += t * delta[k][i][1]
		}
	}
}

// gapIntegral returns ∫ D_G(∇v, y*) by the rule r.
func (e *Equilibrated) gapIntegral(s *fem.P1, G convex.Potential, grad [][2]float64, r fem.Rule) float64 {
	var sum float64
	for k := range s.Area {
		for q, p := range r.Points {
			y, _ := e.At(k, [3]float64{1 - p[0] - p[1], p[0], p[1]})
			sum += 2 * s.Area[k] * r.Weights[q] * convex.Gap(G, grad[k], y)
		}
	}
	return sum
}

// curl sets dst to the quadratic form of R∇ψ on cell k for the free
// stream values x.
func (st *stream) curl(k int, x []float64, dst *[6][2]float64) {
	*dst = [6][2]float64{}
	g := &st.s.Grad[k]
	var Y [3][2]float64
	var c [2]float64
	for a := range 3 {
		if d := st.dof[k][a]; d >= 0 {
			c[0] += x[d] * g[a][0]
			c[1] += x[d] * g[a][1]
		}
	}
	for j := range 3 {
		Y[j] = perp(c)
	}
	if st.order == 1 {
		for i := range 3 {
			xe := 4 * x[st.dof[k][3+i]]
			j, l := pairs[i][0], pairs[i][1]
			Y[l][0] += xe * g[j][1]
			Y[l][1] -= xe * g[j][0]
			Y[j][0] += xe * g[l][1]
			Y[j][1] -= xe * g[l][0]
		}
	}
	addLinear(dst, Y, 3)
}

// assemble builds the stream systems of one step: the matrix
// ∫ ∇φ_aᵀ RᵀHR ∇φ_b and the right side −∫ ∇φ_a · Rᵀg, and the cell-mean P1
// block for the multigrid preconditioner. RᵀHR = (yy, −xy, xx).
func (st *stream) assemble(gvec [][2]float64, hess [][3]float64, b []float64) error {
	m := st.s.Mesh
	nc := m.NumCells()
	r := st.rule
	nq := r.Len()
	coef := make([][3]float64, nc)
	clear(b)
	if st.order == 1 {
		clear(st.a.Val)
	}
	var gb [6][2]float64
	for k := range nc {
		area := st.s.Area[k]
		var mean [3]float64
		for q, p := range r.Points {
			i := k*nq + q
			w := 2 * area * r.Weights[q]
			h := hess[i]
			if !(h[0] > 0 && h[2] > 0 && h[0]*h[2] > h[1]*h[1]) || math.IsInf(h[0]+h[2], 0) {
				return fmt.Errorf("equilibrated flux: the Hessian of G* is not positive definite in cell %d (%v); the potential may not be strictly convex there", k, h)
			}
			kq := [3]float64{h[2], -h[1], h[0]}
			for j := range 3 {
				mean[j] += 2 * r.Weights[q] * kq[j]
			}
			rg := [2]float64{-gvec[i][1], gvec[i][0]}
			nb := st.gradBasis(k, [3]float64{1 - p[0] - p[1], p[0], p[1]}, &gb)
			for a := range nb {
				da := st.dof[k][a]
				if da < 0 {
					continue
				}
				b[da] -= w * (gb[a][0]*rg[0] + gb[a][1]*rg[1])
				if st.order == 0 {
					continue
				}
				cx := w * (kq[0]*gb[a][0] + kq[1]*gb[a][1])
				cy := w * (kq[1]*gb[a][0] + kq[2]*gb[a][1])
				for c := range nb {
					if pc := st.pos[k][6*a+c]; pc >= 0 {
						st.a.Val[pc] += cx*gb[c][0] + cy*gb[c][1]
					}
				}
			}
		}
		coef[k] = mean
	}
	if err := st.ps.Stiffness(coef, st.pa); err != nil {
		return fmt.Errorf("equilibrated flux: %w", err)
	}
	if err := st.mg.Update(st.pa); err != nil {
		return fmt.Errorf("equilibrated flux: %w", err)
	}
	return nil
}
