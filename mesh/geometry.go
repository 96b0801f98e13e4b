package mesh

import (
	"math"
	"sort"
)

// Diameters returns the diameter of every cell: its length in 1-D, its
// longest edge in 2-D.
func (m *Mesh) Diameters() []float64 {
	d := make([]float64, len(m.Cells))
	for k := range m.Cells {
		d[k] = m.diameter(k)
	}
	return d
}

func (m *Mesh) diameter(k int) float64 {
	c := m.Cells[k]
	if m.Dim == 1 {
		return math.Abs(m.Nodes[c[1]].X - m.Nodes[c[0]].X)
	}
	d := 0.0
	for i := range 3 {
		p, q := m.Nodes[c[i]], m.Nodes[c[(i+1)%3]]
		d = max(d, math.Hypot(q.X-p.X, q.Y-p.Y))
	}
	return d
}

// MaxH returns the largest cell diameter, the h of a priori estimates and of
// the Crouzeix–Raviart eigenvalue bound (docs/checks.md item 4).
func (m *Mesh) MaxH() float64 {
	h := 0.0
	for k := range m.Cells {
		h = max(h, m.diameter(k))
	}
	return h
}

// Measure returns the length (1-D) or area (2-D) of the domain.
func (m *Mesh) Measure() float64 {
	s := 0.0
	for k := range m.Cells {
		s += m.Area(k)
	}
	return s
}

// BoundingBox returns the lower left and upper right corners of the
// smallest axis-parallel box holding the mesh.
func (m *Mesh) BoundingBox() (lo, hi Point) {
	if len(m.Nodes) == 0 {
		return
	}
	lo, hi = m.Nodes[0], m.Nodes[0]
	for _, p := range m.Nodes[1:] {
		lo.X, lo.Y = min(lo.X, p.X), min(lo.Y, p.Y)
		hi.X, hi.Y = max(hi.X, p.X), max(hi.Y, p.Y)
	}
	return lo, hi
}

// MinWidth returns the width of the domain: the smallest distance between
// two parallel lines that enclose it, which is the width of its convex hull.
// Ω then lies in a strip of that width, the ℓ of the Friedrichs width bound
// (docs/math.md §6). Method: convex hull by Andrew's monotone chain (Andrew 1979),
// then rotating calipers (Shamos 1978; Toussaint 1983): the minimum width is
// attained with one line through an edge of the hull. In 1-D it is the
// length of the interval.
func (m *Mesh) MinWidth() float64 {
	if m.Dim == 1 {
		lo, hi := m.BoundingBox()
		return hi.X - lo.X
	}
	h := convexHull(m.Nodes)
	n := len(h)
	if n < 3 {
		return 0
	}
	dist := func(i, j int) float64 { // distance of h[j] from the line of edge i
		a, b, p := h[i], h[(i+1)%n], h[j%n]
		return ((b.X-a.X)*(p.Y-a.Y) - (p.X-a.X)*(b.Y-a.Y)) / math.Hypot(b.X-a.X, b.Y-a.Y)
	}
	w := math.Inf(1)
	j := 1
	for i := range n {
		if j < i+1 {
			j = i + 1
		}
		for dist(i, j+1) >= dist(i, j) && j < i+n {
			j++
		}
		w = min(w, dist(i, j))
	}
	return w
}

// convexHull returns the vertices of the convex hull, counter-clockwise,
// without collinear points.
func convexHull(p []Point) []Point {
	s := append([]Point(nil), p...)
	sort.Slice(s, func(i, j int) bool { return s[i].X < s[j].X || (s[i].X == s[j].X && s[i].Y < s[j].Y) })
	cross := func(o, a, b Point) float64 { return (a.X-o.X)*(b.Y-o.Y) - (a.Y-o.Y)*(b.X-o.X) }
	h := make([]Point, 0, 2*len(s))
	for _, q := range s {
		for len(h) >= 2 && cross(h[len(h)-2], h[len(h)-1], q) <= 0 {
			h = h[:len(h)-1]
		}
		h = append(h, q)
	}
	lower := len(h) + 1
	for i := len(s) - 2; i >= 0; i-- {
		for len(h) >= lower && cross(h[len(h)-2], h[len(h)-1], s[i]) <= 0 {
			h = h[:len(h)-1]
		}
		h = append(h, s[i])
	}
	if len(h) > 1 {
		h = h[:len(h)-1]
	}
	return h
}

// MinAngle returns the smallest interior angle of all triangles, in radians
// (0 in 1-D): the shape-regularity measure that newest-vertex bisection
// keeps bounded below.
func (m *Mesh) MinAngle() float64 {
	if m.Dim != 2 {
		return 0
	}
	amin := math.Pi
	for _, c := range m.Cells {
		for i := range 3 {
			o, p, q := m.Nodes[c[i]], m.Nodes[c[(i+1)%3]], m.Nodes[c[(i+2)%3]]
			ux, uy, vx, vy := p.X-o.X, p.Y-o.Y, q.X-o.X, q.Y-o.Y
			amin = min(amin, math.Atan2(math.Abs(ux*vy-uy*vx), ux*vx+uy*vy))
		}
	}
	return amin
}
