package estimate

import (
	"context"
	"fmt"
	"math"
	"slices"
	"sort"

	"gonum.org/v1/gonum/floats"

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

// equilibrator holds what the 2-D reconstruction builds from the mesh
// alone: the edges, a spanning tree of the dual graph, and the stream space
// with its multigrid hierarchy and matrix pattern. A sequence of fluxes on
// one mesh (the time steps of an evolution) pays for them once.
type equilibrator struct {
	s         *fem.P1
	order     int
	rt        *fem.RT0
	edgeCells [][2]int32
	// queue lists the cells in breadth-first order from the boundary;
	// parent[k] is the local edge of cell k towards the root.
	queue  []int32
	parent []int8
	st     *stream
	// owner is the flux whose quadratic model the stream matrix holds.
	owner    *Equilibrated
	edgeFlux []float64
	grad     [][2]float64
	sigma    [][2]float64
	// For the power potential (power set by gradients): α, |∇v| and
	// |∇v|^{α−2} per cell; model holds the weights of the quadratic model.
	power        bool
	alpha        float64
	norm, factor []float64
	model        [][3]float64
}

func newEquilibrator(s *fem.P1, order int) (*equilibrator, error) {
	m := s.Mesh
	rt, err := fem.NewRT0(m)
	if err != nil {
		return nil, fmt.Errorf("equilibrated flux: %w", err)
	}
	nc, ne, nn := m.NumCells(), rt.NumEdges(), m.NumNodes()
	if h := ne - nn - nc + 1; h != 0 {
		return nil, fmt.Errorf("equilibrated flux: the mesh has Euler characteristic %d (%d nodes, %d edges, %d cells); the stream-function correction needs a connected domain without holes", nn-ne+nc, nn, ne, nc)
	}
	q := &equilibrator{s: s, order: order, rt: rt, edgeCells: make([][2]int32, ne),
		edgeFlux: make([]float64, ne), grad: make([][2]float64, nc), sigma: make([][2]float64, nc),
		norm: make([]float64, nc), factor: make([]float64, nc), model: make([][3]float64, nc)}
	count := make([]int8, ne)
	for k := range nc {
		for i := range 3 {
			ed := rt.CellEdges[k][i]
			q.edgeCells[ed][count[ed]] = int32(k)
			count[ed]++
		}
	}
	if err := q.tree(); err != nil {
		return nil, err
	}
	if q.st, err = newStream(s, rt, order); err != nil {
		return nil, err
	}
	return q, nil
}

// flux is the 2-D reconstruction described at Equilibrate.
func (q *equilibrator) flux(ctx context.Context, G convex.Potential, v []float64, f Source, opt EquilibrateOptions) (*Equilibrated, error) {
	s, rt := q.s, q.rt
	m := s.Mesh
	nc := m.NumCells()
	e := newEquilibrated(nc, q.order)
	if err := e.project(s, f, opt.Degree); err != nil {
		return nil, err
	}
	gmax := q.gradients(G, v)
	// Edge fluxes of σ averaged across each edge.
	flux := q.edgeFlux
	clear(flux)
	for k := range nc {
		for i := range 3 {
			// |e| n_e is the edge vector turned clockwise (see fem.RT0.Normal).
			ed := rt.CellEdges[k][i]
			a, b := m.Nodes[rt.Edges[ed][0]], m.Nodes[rt.Edges[ed][1]]
			w := 0.5
			if rt.OnBoundary[ed] {
				w = 1
			}
			flux[ed] += w * (q.sigma[k][0]*(b.Y-a.Y) - q.sigma[k][1]*(b.X-a.X))
		}
	}
	q.balance(e.proj, flux)
	q.addFields(e, flux, e.proj)
	reg := opt.Reg * gmax
	if reg == 0 {
		reg = opt.Reg
	}
	q.owner = nil
	q.weights(G, reg, q.model)
	if err := q.st.minimise(ctx, e, G, q.grad, q.sigma, q.model, reg, opt); err != nil {
		return nil, err
	}
	if opt.Newton == 0 {
		q.owner = e
	}
	e.finish(s)
	return e, nil
}

// shift returns the flux for v against the load f, where y was built by
// q.flux from the same v against the load f − df. The quadratic model of
// the stream minimisation depends on v only and its minimiser is affine in
// the load, so y plus the minimising correction for df is the flux that
// q.flux would return, at the cost of one solve with the matrix already
// set up (no assembly, no multigrid update, no evaluation of f). When y
// does not hold the current model (another flux was built since, or Newton
// steps followed the model), it is q.flux(v, f).
func (q *equilibrator) shift(ctx context.Context, G convex.Potential, y *Equilibrated, v []float64, df, f Source, opt EquilibrateOptions) (*Equilibrated, error) {
	if y == nil || y != q.owner || opt.Newton > 0 {
		return q.flux(ctx, G, v, f, opt)
	}
	s := q.s
	nc := s.Mesh.NumCells()
	d := newEquilibrated(nc, q.order)
	if err := d.project(s, df, 2); err != nil {
		return nil, err
	}
	e := &Equilibrated{order: y.order, coef: append([][6][2]float64(nil), y.coef...),
		div: make([][3]float64, nc), proj: make([][3]float64, nc)}
	for k := range nc {
		for a := range 3 {
			e.proj[k][a] = y.proj[k][a] + d.proj[k][a]
		}
	}
	flux := q.edgeFlux
	clear(flux)
	q.balance(d.proj, flux)
	q.addFields(e, flux, d.proj)
	q.gradients(G, v)
	if err := q.st.correct(ctx, e, q.sigma, opt); err != nil {
		return nil, err
	}
	q.owner = e
	e.finish(s)
	return e, nil
}

// gradients sets grad = ∇v and sigma = ∂G(∇v) per cell and returns
// max|∇v|. For the power potential σ = |∇v|^{α−2}∇v is formed directly,
// with |∇v| as the square root of the sum of squares where that can
// neither overflow nor underflow (math.Hypot elsewhere), and the norms and
// the factors |∇v|^{α−2} are kept for the model weights.
func (q *equilibrator) gradients(G convex.Potential, v []float64) float64 {
	q.s.Gradient(v, q.grad)
	var gmax float64
	alpha, ok := convex.IsPower(G)
	q.power = ok
	if !ok {
		for k, g := range q.grad {
			q.sigma[k] = convex.Flux(G, g)
			gmax = math.Max(gmax, math.Hypot(g[0], g[1]))
		}
		return gmax
	}
	q.alpha = alpha
	pw := convex.NewFastPow(alpha - 2)
	for k, g := range q.grad {
		t2 := g[0]*g[0] + g[1]*g[1]
		t := math.Sqrt(t2)
		if !(t2 > 1e-290 && t2 < 1e290) {
			t = math.Hypot(g[0], g[1])
		}
		var f float64
		if t > 0 {
			f = pw.Of(t)
		}
		q.norm[k], q.factor[k] = t, f
		q.sigma[k] = [2]float64{f * g[0], f * g[1]}
		gmax = math.Max(gmax, t)
	}
	return gmax
}

// weights sets w to the weight D²G(∇v)⁻¹ of the quadratic model on every
// cell, with D²G frozen below the radius reg as in convex.Hessian. For the
// power potential and |∇v| ≥ reg it is the closed form
// |ξ|^{2−α}(I − (α−2)/(α−1) n⊗n), n = ξ/|ξ|, the inverse of
// |ξ|^{α−2}(I + (α−2) n⊗n).
func (q *equilibrator) weights(G convex.Potential, reg float64, w [][3]float64) {
	c := 0.0
	if q.power {
		c = (q.alpha - 2) / (q.alpha - 1)
	}
	for k, g := range q.grad {
		if t := q.norm[k]; q.power && t >= reg && t > 0 && q.factor[k] > 0 && !math.IsInf(q.factor[k], 0) {
			f, ct := 1/q.factor[k], c/(t*t)
			w[k] = [3]float64{f * (1 - ct*g[0]*g[0]), -f * ct * g[0] * g[1], f * (1 - ct*g[1]*g[1])}
			continue
		}
		w[k] = inv2(convex.Hessian(G, g, reg))
	}
}

// addFields adds to e the RT0 field of the edge fluxes and, for k = 1, the
// interior fields that balance the mean-free part of proj.
func (q *equilibrator) addFields(e *Equilibrated, flux []float64, proj [][3]float64) {
	s, rt := q.s, q.rt
	m := s.Mesh
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
		if q.order == 1 {
			addBubbles(&e.coef[k], &proj[k], &s.Grad[k])
		}
	}
}

// tree builds a spanning tree of the dual graph (cells joined across
// interior edges, the outside reached through boundary edges) by breadth-
// first search from the boundary cells.
func (q *equilibrator) tree() error {
	rt := q.rt
	nc := len(rt.CellEdges)
	parent := make([]int8, nc)
	for k := range parent {
		parent[k] = -1
	}
	queue := make([]int32, 0, nc)
	for k := range nc {
		for i := range 3 {
			if ed := rt.CellEdges[k][i]; rt.OnBoundary[ed] {
				parent[k] = int8(i)
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
			c := q.edgeCells[ed][0]
			if c == k {
				c = q.edgeCells[ed][1]
			}
			if parent[c] < 0 {
				for j := range 3 {
					if rt.CellEdges[c][j] == ed {
						parent[c] = int8(j)
					}
				}
				queue = append(queue, c)
			}
		}
	}
	if len(queue) != nc {
		return fmt.Errorf("equilibrated flux: %d of %d cells cannot be reached from the boundary across edges; the mesh is not connected", nc-len(queue), nc)
	}
	q.queue, q.parent = queue, parent
	return nil
}

// balance corrects the edge fluxes along the spanning tree so that the
// outflow Σ_i sign_i F_i of every cell equals −|T| mean(proj): leaves
// first, each cell pushes its defect through the edge to its parent.
func (q *equilibrator) balance(proj [][3]float64, flux []float64) {
	rt, area := q.rt, q.s.Area
	nc := len(area)
	defect := make([]float64, nc)
	for k := range nc {
		p := &proj[k]
		d := -area[k] * (p[0] + p[1] + p[2]) / 3
		for i := range 3 {
			d -= float64(rt.Sign[k][i]) * flux[rt.CellEdges[k][i]]
		}
		defect[k] = d
	}
	for idx := nc - 1; idx >= 0; idx-- {
		k := q.queue[idx]
		i := q.parent[k]
		ed := rt.CellEdges[k][i]
		df := float64(rt.Sign[k][i]) * defect[k]
		flux[ed] += df
		defect[k] = 0
		if rt.OnBoundary[ed] {
			continue
		}
		c := q.edgeCells[ed][0]
		if c == k {
			c = q.edgeCells[ed][1]
		}
		for j := range 3 {
			if rt.CellEdges[c][j] == ed {
				defect[c] -= float64(rt.Sign[c][j]) * df
			}
		}
	}
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
// solver of its weighted stiffness systems. It keeps the matrix of the
// latest quadratic model and its multigrid, so that a later model with the
// same weights (α = 2, or a load change only) reuses both.
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
	lams  [][3]float64
	coef  [][3]float64
	// The gradient of the model is W(y* − σ) for y* = ye and σ = sig
	// with the weight W = hess, one per cell, formed where rhs needs it;
	// for a Newton step (perPoint) it is gvec with the weight hessPts,
	// both at the quadrature points. held is the weight per cell that
	// the matrix was built from.
	ye         *Equilibrated
	sig        [][2]float64
	gvec       [][2]float64
	hess, held [][3]float64
	hessPts    [][3]float64
	perPoint   bool
	b, x       []float64
	// assembled: the matrix holds held; fresh: the multigrid was updated
	// for it; refIters is the CG count of the first solve after the last
	// multigrid update, lastIters that of the latest solve.
	assembled, fresh bool
	tol              float64
	// warm holds the stream values of the latest model solve of flux
	// (a start for the next one, whose optimum moves little between time
	// steps) and bnorm the norm of its right side.
	warm                []float64
	bnorm               float64
	refIters, lastIters int
}

func newStream(s *fem.P1, rt *fem.RT0, order int) (*stream, error) {
	ps, err := s.WithBoundary(pinnedCopy(s.Mesh))
	if err != nil {
		return nil, fmt.Errorf("equilibrated flux: stream space: %w", err)
	}
	st := &stream{s: s, ps: ps, rt: rt, order: order, n1: ps.NumFree()}
	st.pa = ps.NewMatrix()
	if st.mg, err = fem.NewMultigrid(ps); err != nil {
		return nil, fmt.Errorf("equilibrated flux: stream space: %w", err)
	}
	m := s.Mesh
	nc := m.NumCells()
	st.dof = make([][6]int32, nc)
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
	} else {
		st.n += rt.NumEdges()
		st.a, st.pos = cellMatrix(st.n, st.dof)
		st.diag = make([]float64, st.n)
		st.rule = fem.Triangle(4)
	}
	nq := st.rule.Len()
	st.lams = make([][3]float64, nq)
	for q, p := range st.rule.Points {
		st.lams[q], _ = cellPoint(2, p)
	}
	st.coef = make([][3]float64, nc)
	st.hess = make([][3]float64, nc)
	st.held = make([][3]float64, nc)
	st.b, st.x = make([]float64, st.n), make([]float64, st.n)
	st.warm = make([]float64, st.n)
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

// weight returns the model weight at quadrature point q of cell k.
func (st *stream) weight(k, q int) [3]float64 {
	if st.perPoint {
		return st.hessPts[k*len(st.lams)+q]
	}
	return st.hess[k]
}

// modelGradient makes W(y* − σ) the gradient of the quadratic model
// ½∫ (y* − σ)ᵀ W (y* − σ), W = hess; rhs evaluates it.
func (st *stream) modelGradient(e *Equilibrated, sigma [][2]float64) {
	st.ye, st.sig = e, sigma
}

// modelAt returns W(y* − σ) at barycentric lam of cell k.
func (st *stream) modelAt(k int, lam [3]float64) [2]float64 {
	y, _ := st.ye.At(k, lam)
	w := &st.hess[k]
	d := [2]float64{y[0] - st.sig[k][0], y[1] - st.sig[k][1]}
	return [2]float64{w[0]*d[0] + w[1]*d[1], w[1]*d[0] + w[2]*d[1]}
}

// minimise runs the quadratic-model step, with the weights model per cell,
// and opt.Newton Newton steps on Φ(y*) = ∫ D_G(∇v, y*) over y* = y0 + R∇ψ.
func (st *stream) minimise(ctx context.Context, e *Equilibrated, G convex.Potential, grad, sigma [][2]float64, model [][3]float64, reg float64, opt EquilibrateOptions) error {
	nc := st.s.Mesh.NumCells()
	nq := len(st.lams)
	var phi float64
	st.tol = opt.Tol
	for step := 0; step <= opt.Newton; step++ {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("equilibrated flux: stopped: %w", err)
		}
		if step == 0 {
			copy(st.hess, model)
			st.perPoint = false
			st.modelGradient(e, sigma)
			if err := st.solve(ctx, e, st.tol, true); err != nil {
				return err
			}
		} else {
			if st.hessPts == nil {
				st.hessPts = make([][3]float64, nc*nq)
				st.gvec = make([][2]float64, nc*nq)
			}
			st.perPoint = true
			for k := range nc {
				for q, lam := range st.lams {
					y, _ := e.At(k, lam)
					i := k*nq + q
					xi := convex.DualFlux(G, y)
					st.gvec[i] = [2]float64{xi[0] - grad[k][0], xi[1] - grad[k][1]}
					st.hessPts[i] = inv2(convex.Hessian(G, xi, reg))
				}
			}
		}
		if step > 0 {
			if err := st.solve(ctx, e, st.tol, false); err != nil {
				return err
			}
		}
		if step == 0 {
			copy(st.warm, st.x)
			st.addCurl(e, 1)
			e.Steps++
			if opt.Newton > 0 {
				phi = e.gapIntegral(st.s, G, grad, st.rule)
			}
			continue
		}
		accepted := false
		for t := 1.0; t > 1e-3; t /= 2 {
			st.addCurl(e, t)
			p := e.gapIntegral(st.s, G, grad, st.rule)
			if p < phi {
				phi, accepted = p, true
				break
			}
			st.addCurl(e, -t)
		}
		if !accepted {
			break
		}
		e.Steps++
	}
	return nil
}

// correct adds to e the minimiser of the quadratic model held by the
// matrix (set by the latest minimise without Newton steps) over the
// stream corrections: one solve, no assembly.
func (st *stream) correct(ctx context.Context, e *Equilibrated, sigma [][2]float64, opt EquilibrateOptions) error {
	st.tol = opt.Tol
	copy(st.hess, st.held)
	st.perPoint = false
	st.modelGradient(e, sigma)
	// The correction is small: solve it to the accuracy asked of the whole
	// model solve, not to a fraction of its own size.
	st.rhs()
	bn := math.Sqrt(floats.Dot(st.b, st.b))
	if bn <= opt.Tol*st.bnorm {
		return nil
	}
	if err := st.solve(ctx, e, math.Min(opt.Tol, opt.Tol*st.bnorm/bn), false); err != nil {
		return err
	}
	st.addCurl(e, 1)
	e.Steps++
	return nil
}

// solve assembles the stream system for gvec and hess and solves it by
// PCG into st.x. The matrix is rebuilt only when hess changed, and the
// multigrid, whose set-up (Galerkin products, dense Cholesky of the coarsest
// level) costs more than several CG iterations, only when the CG count has
// more than doubled since its last update: an older multigrid built on the
// same pattern stays symmetric positive definite (SPD coarse matrices and
// symmetric Gauss–Seidel smoothing with the current matrix), so it remains
// a valid preconditioner, only a less sharp one (lagged preconditioning,
// common practice, no source).
//
// With warm set, the latest model solution starts the CG when its residual
// is below ‖b‖, and bnorm records ‖b‖.
func (st *stream) solve(ctx context.Context, e *Equilibrated, tol float64, warm bool) error {
	if st.perPoint || !st.assembled || !slices.Equal(st.hess, st.held) {
		if err := st.assemble(); err != nil {
			return err
		}
		// A Newton weight varies within the cells: no later model equals it.
		copy(st.held, st.hess)
		st.assembled = !st.perPoint
		if !st.fresh || st.lastIters > 2*st.refIters+4 {
			st.fresh = false
		}
	}
	st.rhs()
	if warm {
		st.bnorm = math.Sqrt(floats.Dot(st.b, st.b))
	}
	for attempt := 0; ; attempt++ {
		if !st.fresh {
			if err := st.mg.Update(st.pa); err != nil {
				st.assembled = false
				return fmt.Errorf("equilibrated flux: %w", err)
			}
			st.fresh, st.refIters = true, -1
		}
		clear(st.x)
		if warm && attempt == 0 {
			st.a.MulVec(st.x, st.warm)
			floats.Sub(st.x, st.b)
			if floats.Dot(st.x, st.x) < st.bnorm*st.bnorm {
				copy(st.x, st.warm)
			} else {
				clear(st.x)
			}
		}
		stats, err := fem.PCG(ctx, st.a, st.pre(), st.b, st.x, tol, 10000)
		e.Iterations += stats.Iterations
		st.lastIters = stats.Iterations
		if st.refIters < 0 {
			st.refIters = stats.Iterations
		}
		if err != nil && ctx.Err() != nil {
			return fmt.Errorf("equilibrated flux: %w", err)
		}
		if err == nil || st.refIters == stats.Iterations || attempt > 0 {
			// Any stream function keeps the balance; a failed CG only costs
			// optimality, so its iterate is used as it is.
			return nil
		}
		st.fresh = false // a lagged multigrid failed: update and retry
	}
}

// addCurl adds t·R∇ψ for the stream values st.x to the quadratic forms.
func (st *stream) addCurl(e *Equilibrated, t float64) {
	var d [6][2]float64
	for k := range e.coef {
		st.curl(k, st.x, &d)
		for i := range 6 {
			e.coef[k][i][0] += t * d[i][0]
			e.coef[k][i][1] += t * d[i][1]
		}
	}
}

// inv2 returns the inverse of the symmetric 2×2 matrix (xx, xy, yy).
func inv2(h [3]float64) [3]float64 {
	det := h[0]*h[2] - h[1]*h[1]
	return [3]float64{h[2] / det, -h[1] / det, h[0] / det}
}

// gapIntegral returns ∫ D_G(∇v, y*) by the rule r.
func (e *Equilibrated) gapIntegral(s *fem.P1, G convex.Potential, grad [][2]float64, r fem.Rule) float64 {
	var sum float64
	for k := range s.Area {
		for q, p := range r.Points {
			lam, _ := cellPoint(2, p)
			y, _ := e.At(k, lam)
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

// assemble builds the matrix ∫ ∇φ_aᵀ RᵀHR ∇φ_b of the weights hess and
// its cell-mean P1 block for the multigrid preconditioner. RᵀHR =
// (yy, −xy, xx).
func (st *stream) assemble() error {
	m := st.s.Mesh
	nc := m.NumCells()
	r := st.rule
	nq := r.Len()
	if st.order == 1 {
		clear(st.a.Val)
	}
	var gb [6][2]float64
	for k := range nc {
		area := st.s.Area[k]
		var mean [3]float64
		constant := true
		for q := range nq {
			h := st.weight(k, q)
			if !(h[0] > 0 && h[2] > 0 && h[0]*h[2] > h[1]*h[1]) || math.IsInf(h[0]+h[2], 0) {
				return fmt.Errorf("equilibrated flux: the Hessian of G* is not positive definite in cell %d (%v); the potential may not be strictly convex there", k, h)
			}
			kq := [3]float64{h[2], -h[1], h[0]}
			for j := range 3 {
				mean[j] += 2 * r.Weights[q] * kq[j]
			}
			constant = constant && h == st.weight(k, 0)
		}
		st.coef[k] = mean
		if st.order == 0 {
			continue
		}
		if constant {
			st.addLocal(k, mean)
			continue
		}
		for q := range nq {
			w := 2 * area * r.Weights[q]
			h := st.weight(k, q)
			kq := [3]float64{h[2], -h[1], h[0]}
			nb := st.gradBasis(k, st.lams[q], &gb)
			for a := range nb {
				if st.dof[k][a] < 0 {
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
	}
	if err := st.ps.Stiffness(st.coef, st.pa); err != nil {
		return fmt.Errorf("equilibrated flux: %w", err)
	}
	return nil
}

// edgeMidpoints are the barycentric coordinates of the edge midpoints, the
// nodes of the three-point rule with weights |T|/3, exact for quadratics
// (common practice, no source).
var edgeMidpoints = [3][3]float64{{0, 0.5, 0.5}, {0.5, 0, 0.5}, {0.5, 0.5, 0}}

// addLocal adds to the k = 1 stream matrix the element matrix
// ∫_T ∇φ_aᵀ K ∇φ_b of cell k for a weight K = (xx, xy, yy) constant on the
// cell. The gradients of the quadratic stream basis are linear, so the
// edge-midpoint rule integrates it exactly with half the points of the
// general rule.
func (st *stream) addLocal(k int, kq [3]float64) {
	var loc [6][6]float64
	var gb [6][2]float64
	for _, lam := range edgeMidpoints {
		st.gradBasis(k, lam, &gb)
		for a := range 6 {
			cx := kq[0]*gb[a][0] + kq[1]*gb[a][1]
			cy := kq[1]*gb[a][0] + kq[2]*gb[a][1]
			for c := a; c < 6; c++ {
				loc[a][c] += cx*gb[c][0] + cy*gb[c][1]
			}
		}
	}
	w := st.s.Area[k] / 3
	pos := &st.pos[k]
	val := st.a.Val
	for a := range 6 {
		for c := range 6 {
			if pc := pos[6*a+c]; pc >= 0 {
				val[pc] += w * loc[min(a, c)][max(a, c)]
			}
		}
	}
}

// rhs sets b to the right side −∫ ∇φ_a · Rᵀg of the stream system for
// the gradient g of the model.
func (st *stream) rhs() {
	nc := st.s.Mesh.NumCells()
	r := st.rule
	nq := r.Len()
	b := st.b
	clear(b)
	var gb [6][2]float64
	if st.order == 0 && !st.perPoint {
		// y* is linear and W constant on the cell, and so are the stream
		// gradients: only the cell integral |T| g(centroid) enters.
		for k := range nc {
			g := st.modelAt(k, [3]float64{1.0 / 3, 1.0 / 3, 1.0 / 3})
			m := [2]float64{st.s.Area[k] * g[0], st.s.Area[k] * g[1]}
			gr := &st.s.Grad[k]
			for a := range 3 {
				if da := st.dof[k][a]; da >= 0 {
					b[da] -= gr[a][0]*-m[1] + gr[a][1]*m[0]
				}
			}
		}
		return
	}
	for k := range nc {
		area := st.s.Area[k]
		for q, lam := range st.lams {
			w := 2 * area * r.Weights[q]
			var g [2]float64
			if st.perPoint {
				g = st.gvec[k*nq+q]
			} else {
				g = st.modelAt(k, lam)
			}
			rg := [2]float64{-g[1], g[0]}
			nb := st.gradBasis(k, lam, &gb)
			for a := range nb {
				if da := st.dof[k][a]; da >= 0 {
					b[da] -= w * (gb[a][0]*rg[0] + gb[a][1]*rg[1])
				}
			}
		}
	}
}
