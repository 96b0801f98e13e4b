package problem

import (
	"fmt"
	"math"

	"gapbook/mesh"
)

// Domain shapes.
const (
	Interval  = "interval"
	Rectangle = "rectangle"
	LShape    = "L-shape"
	Disk      = "disk polygon"
	Polygon   = "polygon"
)

// Shapes lists the domain shapes in the order they are offered.
var Shapes = []string{Interval, Rectangle, LShape, Disk, Polygon}

// Domain is the geometry Ω of a problem: one of the built-in shapes with
// its parameters. The zero value is not a domain; build one with
// NewDomain.
type Domain struct {
	// Shape is one of the shape constants.
	Shape string
	// X0 < X1 (interval, rectangle) and Y0 < Y1 (rectangle).
	X0, X1, Y0, Y1 float64
	// Radius and Sides of the disk polygon.
	Radius float64
	Sides  int
	// Vertices of the polygon, in order, the first not repeated.
	Vertices []mesh.Point
}

// DomainSpec is a domain as typed: Coords holds the polygon's vertices as
// x1, y1, x2, y2, ….
type DomainSpec struct {
	Shape          string
	X0, X1, Y0, Y1 float64
	Radius         float64
	Sides          int
	Coords         []float64
}

// NewDomain checks a domain statement; an error is an *InputError naming
// the input at fault.
func NewDomain(s DomainSpec) (*Domain, error) {
	d := &Domain{Shape: s.Shape, X0: s.X0, X1: s.X1, Y0: s.Y0, Y1: s.Y1, Radius: s.Radius, Sides: s.Sides}
	switch s.Shape {
	case Interval, Rectangle:
		if !(d.X0 < d.X1) {
			return nil, inputErr("x_max", "want x_max > x_min = %g, got %g", d.X0, d.X1)
		}
		if s.Shape == Rectangle && !(d.Y0 < d.Y1) {
			return nil, inputErr("y_max", "want y_max > y_min = %g, got %g", d.Y0, d.Y1)
		}
	case LShape:
	case Disk:
		if !(d.Radius > 0) || d.Sides < 3 {
			return nil, inputErr("radius", "want radius > 0 and at least 3 sides, got radius %g, %d sides", d.Radius, d.Sides)
		}
	case Polygon:
		v := s.Coords
		if len(v)%2 != 0 || len(v) < 6 {
			return nil, inputErr("vertices", "want x1, y1, x2, y2, … for at least 3 vertices (an even count of numbers ≥ 6), got %d numbers", len(v))
		}
		for i := 0; i < len(v); i += 2 {
			d.Vertices = append(d.Vertices, mesh.Point{X: v[i], Y: v[i+1]})
		}
	default:
		return nil, inputErr("domain", "unknown shape %q; known: interval, rectangle, L-shape, disk polygon, polygon", s.Shape)
	}
	return d, nil
}

// Dim is the space dimension of the domain (1 or 2).
func (d *Domain) Dim() int {
	if d.Shape == Interval {
		return 1
	}
	return 2
}

// String describes the domain in words.
func (d *Domain) String() string {
	switch d.Shape {
	case Interval:
		return fmt.Sprintf("the interval (%g, %g)", d.X0, d.X1)
	case Rectangle:
		return fmt.Sprintf("the rectangle (%g, %g) × (%g, %g)", d.X0, d.X1, d.Y0, d.Y1)
	case LShape:
		return "the L-shape (−1,1)² \\ [0,1)×(−1,0]"
	case Disk:
		return fmt.Sprintf("the regular %d-gon of circumradius %g", d.Sides, d.Radius)
	}
	return fmt.Sprintf("a polygon with %d vertices", len(d.Vertices))
}

// Mesh builds a mesh of the domain with about n cells across (n per unit
// length for the L-shape), or with cells of diameter at most h when h > 0.
func (d *Domain) Mesh(n int, h float64) (*mesh.Mesh, error) {
	ceil := func(v float64) int {
		if v > 1e8 {
			return 1e8
		}
		return max(1, int(math.Ceil(v-1e-9)))
	}
	switch d.Shape {
	case Interval:
		if h > 0 {
			n = ceil((d.X1 - d.X0) / h)
		}
		return mesh.Interval(d.X0, d.X1, n)
	case Rectangle:
		w, ht := d.X1-d.X0, d.Y1-d.Y0
		s := math.Min(w, ht)
		if h > 0 {
			n = ceil(math.Sqrt2 * s / h)
		}
		return mesh.Rectangle(d.X0, d.X1, d.Y0, d.Y1, ceil(float64(n)*w/s), ceil(float64(n)*ht/s))
	case LShape:
		if h > 0 {
			n = ceil(math.Sqrt2 / h)
		}
		return mesh.LShape(n)
	case Disk:
		if h <= 0 {
			h = 2 * d.Radius / float64(n)
		}
		return mesh.Disk(d.Radius, d.Sides, h)
	default:
		if h <= 0 {
			lo, hi := boundingBox(d.Vertices)
			h = math.Hypot(hi.X-lo.X, hi.Y-lo.Y) / float64(n)
		}
		return mesh.Polygon(d.Vertices, h)
	}
}

func boundingBox(v []mesh.Point) (lo, hi mesh.Point) {
	lo, hi = v[0], v[0]
	for _, q := range v {
		lo.X, lo.Y = math.Min(lo.X, q.X), math.Min(lo.Y, q.Y)
		hi.X, hi.Y = math.Max(hi.X, q.X), math.Max(hi.Y, q.Y)
	}
	return lo, hi
}

// Convex reports whether the domain is convex.
func (d *Domain) Convex() bool {
	switch d.Shape {
	case Interval, Rectangle, Disk:
		return true
	case Polygon:
		v := d.Vertices
		sign := 0.0
		for i := range v {
			a, b, c := v[i], v[(i+1)%len(v)], v[(i+2)%len(v)]
			cr := (b.X-a.X)*(c.Y-b.Y) - (b.Y-a.Y)*(c.X-b.X)
			if cr*sign < 0 {
				return false
			}
			if cr != 0 {
				sign = cr
			}
		}
		return true
	}
	return false
}

// Diameter is the largest distance between two points of the domain: for
// a polygon, between two of its vertices.
func (d *Domain) Diameter() float64 {
	var v []mesh.Point
	switch d.Shape {
	case Interval:
		return d.X1 - d.X0
	case Rectangle:
		return math.Hypot(d.X1-d.X0, d.Y1-d.Y0)
	case LShape:
		return 2 * math.Sqrt2
	case Disk:
		for j := range d.Sides {
			a := 2 * math.Pi * float64(j) / float64(d.Sides)
			v = append(v, mesh.Point{X: d.Radius * math.Cos(a), Y: d.Radius * math.Sin(a)})
		}
	default:
		v = d.Vertices
	}
	dm := 0.0
	for i := range v {
		for j := range i {
			dm = math.Max(dm, math.Hypot(v[i].X-v[j].X, v[i].Y-v[j].Y))
		}
	}
	return dm
}

// side is one named piece of the boundary: the segment from A to B (in
// 1-D the point A = B).
type side struct {
	name string
	a, b mesh.Point
}

// sides lists the boundary of the domain as named segments: the sides of
// the built-in shapes, the edges of a polygon, the one boundary of the disk
// polygon (all its sides).
func (d *Domain) sides() []side {
	P := func(x, y float64) mesh.Point { return mesh.Point{X: x, Y: y} }
	switch d.Shape {
	case Interval:
		return []side{{"left", P(d.X0, 0), P(d.X0, 0)}, {"right", P(d.X1, 0), P(d.X1, 0)}}
	case Rectangle:
		return []side{{"bottom", P(d.X0, d.Y0), P(d.X1, d.Y0)}, {"right", P(d.X1, d.Y0), P(d.X1, d.Y1)},
			{"top", P(d.X1, d.Y1), P(d.X0, d.Y1)}, {"left", P(d.X0, d.Y1), P(d.X0, d.Y0)}}
	case LShape:
		return []side{{"bottom", P(-1, -1), P(0, -1)}, {"notch-vertical", P(0, -1), P(0, 0)},
			{"notch-horizontal", P(0, 0), P(1, 0)}, {"right", P(1, 0), P(1, 1)},
			{"top", P(1, 1), P(-1, 1)}, {"left", P(-1, 1), P(-1, -1)}}
	case Disk:
		var out []side
		for j := range d.Sides {
			a0, a1 := 2*math.Pi*float64(j)/float64(d.Sides), 2*math.Pi*float64(j+1)/float64(d.Sides)
			out = append(out, side{"boundary", P(d.Radius*math.Cos(a0), d.Radius*math.Sin(a0)), P(d.Radius*math.Cos(a1), d.Radius*math.Sin(a1))})
		}
		return out
	}
	out := make([]side, len(d.Vertices))
	for i, v := range d.Vertices {
		out[i] = side{fmt.Sprintf("edge%d", i+1), v, d.Vertices[(i+1)%len(d.Vertices)]}
	}
	return out
}

// Parts names the boundary parts of the domain in order around it: left
// and right of an interval; bottom, right, top and left of a rectangle;
// the six sides of the L-shape (bottom, notch-vertical, notch-horizontal,
// right, top, left); the one boundary of the disk polygon; edge1, edge2, …
// of a polygon, edge i running from vertex i to vertex i+1.
func (d *Domain) Parts() []string {
	var out []string
	for _, s := range d.sides() {
		if len(out) == 0 || out[len(out)-1] != s.name {
			out = append(out, s.name)
		}
	}
	return out
}

// PartOf returns the boundary part that holds the segment from a to b (a
// boundary edge of a mesh of the domain; in 1-D a = b is an end point), or
// "" when it lies on no part.
func (d *Domain) PartOf(a, b mesh.Point) string {
	tol := 1e-9 * math.Max(d.Diameter(), 1e-300)
	for _, s := range d.sides() {
		if onSegment(a, s.a, s.b, tol) && onSegment(b, s.a, s.b, tol) {
			return s.name
		}
	}
	return ""
}

// onSegment reports whether p lies within tol of the segment from a to b.
func onSegment(p, a, b mesh.Point, tol float64) bool {
	dx, dy := b.X-a.X, b.Y-a.Y
	l2 := dx*dx + dy*dy
	t := 0.0
	if l2 > 0 {
		t = math.Max(0, math.Min(1, ((p.X-a.X)*dx+(p.Y-a.Y)*dy)/l2))
	}
	return math.Hypot(p.X-(a.X+t*dx), p.Y-(a.Y+t*dy)) <= tol
}

// Area is the measure of the domain: its length in 1-D, else the area
// enclosed by its sides (the shoelace formula over the boundary).
func (d *Domain) Area() float64 {
	if d.Dim() == 1 {
		return d.X1 - d.X0
	}
	s := 0.0
	for _, e := range d.sides() {
		s += e.a.X*e.b.Y - e.b.X*e.a.Y
	}
	return math.Abs(s) / 2
}
