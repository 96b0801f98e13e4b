package problem

import (
	"errors"
	"math"
	"strings"
	"testing"

	"gapbook/mesh"
)

// The built-in domains against exact geometry (common practice, no
// source): areas, diameters and convexity of shapes known in closed form,
// and the meshes covering exactly the domain.
func TestDomainGeometry(t *testing.T) {
	hexagon := make([]float64, 0, 12)
	for j := range 6 {
		a := 2 * math.Pi * float64(j) / 6
		hexagon = append(hexagon, 2*math.Cos(a), 2*math.Sin(a))
	}
	cases := []struct {
		s          DomainSpec
		area, diam float64
		convex     bool
	}{
		{DomainSpec{Shape: Interval, X0: -1, X1: 2}, 3, 3, true},
		{DomainSpec{Shape: Rectangle, X0: 0, X1: 3, Y0: 1, Y1: 5}, 12, 5, true},
		{DomainSpec{Shape: LShape}, 3, 2 * math.Sqrt2, false},
		{DomainSpec{Shape: Disk, Radius: 2, Sides: 6}, 6 * math.Sqrt(3), 4, true},
		{DomainSpec{Shape: Polygon, Coords: hexagon}, 6 * math.Sqrt(3), 4, true},
		{DomainSpec{Shape: Polygon, Coords: []float64{0, 0, 2, 0, 2, 2, 1, 1, 0, 2}}, 3, 2 * math.Sqrt2, false},
	}
	for _, c := range cases {
		d, err := NewDomain(c.s)
		if err != nil {
			t.Fatalf("%s: %v", c.s.Shape, err)
		}
		m, err := d.Mesh(4, 0)
		if err != nil {
			t.Fatalf("%s: %v", d, err)
		}
		if a := m.Measure(); math.Abs(a-c.area) > 1e-12*c.area {
			t.Errorf("%s: mesh measure %.15g, exact %.15g", d, a, c.area)
		}
		if a := d.Area(); math.Abs(a-c.area) > 1e-12*c.area {
			t.Errorf("%s: domain area %.15g, exact %.15g", d, a, c.area)
		}
		if g := d.Diameter(); math.Abs(g-c.diam) > 1e-12*c.diam {
			t.Errorf("%s: diameter %.15g, exact %.15g", d, g, c.diam)
		}
		if d.Convex() != c.convex {
			t.Errorf("%s: convex %v, want %v", d, d.Convex(), c.convex)
		}
	}
}

// New blames the input at fault.
func TestNewBlamesTheInput(t *testing.T) {
	base := Spec{Domain: DomainSpec{Shape: Rectangle, X0: 0, X1: 1, Y0: 0, Y1: 1}, Family: Power, P: 3, F: "1"}
	cases := []struct {
		edit  func(*Spec)
		field string
		msg   string
	}{
		{func(s *Spec) { s.Domain.X1 = 0 }, "x_max", "want x_max > x_min"},
		{func(s *Spec) { s.P = 1 }, "p", ""},
		{func(s *Spec) { s.Family = PowerSum; s.P = 1.5 }, "p", "want p > 2 for the power sum"},
		{func(s *Spec) { s.F = "sn(x)" }, "f", "at column 1"},
		{func(s *Spec) { s.F = "x*t" }, "f", ""},
		{func(s *Spec) { s.F = "" }, "f", "give a source f"},
		{func(s *Spec) { s.Family = Formula; s.G = "t^3/3 - t^2" }, "g", ""},
		{func(s *Spec) { s.Domain = DomainSpec{Shape: Polygon, Coords: []float64{0, 0, 1}} }, "vertices", "at least 3 vertices"},
	}
	for _, c := range cases {
		s := base
		c.edit(&s)
		_, err := New(s)
		var ie *InputError
		if !errors.As(err, &ie) || ie.Field != c.field || !strings.Contains(ie.Msg, c.msg) {
			t.Errorf("want an error on %s containing %q, got %v", c.field, c.msg, err)
		}
	}
}

// The data of a stated problem are its formulas, the exact solution fills
// in what is left out, and each call hands out its own scratch space.
func TestNewData(t *testing.T) {
	p, err := New(Spec{Domain: DomainSpec{Shape: Rectangle, X0: 0, X1: 1, Y0: 0, Y1: 1}, Family: Power, P: 2,
		Exact: "x*x + y", T: 0})
	if err != nil {
		t.Fatal(err)
	}
	if !p.Derived() || !p.HasExact() || p.ZeroDirichlet() {
		t.Fatalf("derived %v, exact %v, zero data %v", p.Derived(), p.HasExact(), p.ZeroDirichlet())
	}
	// −Δ(x² + y) = −2 for p = 2 (a closed form).
	f, g := p.SourceAt(0), p.SourceAt(0)
	if v := f(0.3, 0.7); math.Abs(v+2) > 1e-12 || g(0.1, 0.2) != f(0.1, 0.2) {
		t.Errorf("f = %g, want −2", v)
	}
	if u := p.DirichletAt(0)(0.5, 0.25); u != 0.5 {
		t.Errorf("u_D = %g, want the exact 0.5", u)
	}
	q, err := New(Spec{Domain: DomainSpec{Shape: Interval, X0: 0, X1: 1}, Family: Power, P: 3, F: "2.5"})
	if err != nil {
		t.Fatal(err)
	}
	if q.FConst != 2.5 || !q.ZeroDirichlet() || q.Domain.Dim() != 1 || q.Exponent() != 3 {
		t.Errorf("FConst %g, zero data %v, dim %d, p %g", q.FConst, q.ZeroDirichlet(), q.Domain.Dim(), q.Exponent())
	}
}

// Every boundary edge of a mesh lies on one named part, and the edges of
// each part add up to its exact length (geometry, common practice, no
// source); the end points of an interval are its parts.
func TestBoundaryParts(t *testing.T) {
	cases := []struct {
		s     DomainSpec
		parts map[string]float64
	}{
		{DomainSpec{Shape: Rectangle, X0: 0, X1: 3, Y0: 1, Y1: 5}, map[string]float64{"bottom": 3, "right": 4, "top": 3, "left": 4}},
		{DomainSpec{Shape: LShape}, map[string]float64{"bottom": 1, "notch-vertical": 1, "notch-horizontal": 1, "right": 1, "top": 2, "left": 2}},
		{DomainSpec{Shape: Disk, Radius: 2, Sides: 6}, map[string]float64{"boundary": 12}},
		{DomainSpec{Shape: Polygon, Coords: []float64{0, 0, 2, 0, 2, 2, 1, 1, 0, 2}}, map[string]float64{"edge1": 2, "edge2": 2, "edge3": math.Sqrt2, "edge4": math.Sqrt2, "edge5": 2}},
	}
	for _, c := range cases {
		d, err := NewDomain(c.s)
		if err != nil {
			t.Fatal(err)
		}
		if got := d.Parts(); len(got) != len(c.parts) {
			t.Errorf("%s: parts %v, want %d", d, got, len(c.parts))
		}
		m, err := d.Mesh(6, 0)
		if err != nil {
			t.Fatal(err)
		}
		if m, err = m.Refine(); err != nil {
			t.Fatal(err)
		}
		length := map[string]float64{}
		for _, e := range m.BoundaryEdges {
			a, b := m.Nodes[e[0]], m.Nodes[e[1]]
			part := d.PartOf(a, b)
			if part == "" {
				t.Fatalf("%s: boundary edge %v–%v on no part", d, a, b)
			}
			length[part] += math.Hypot(b.X-a.X, b.Y-a.Y)
		}
		for name, want := range c.parts {
			if math.Abs(length[name]-want) > 1e-12*want {
				t.Errorf("%s: part %s has length %.15g, want %.15g", d, name, length[name], want)
			}
		}
		if d.PartOf(mesh.Point{X: 1e6, Y: 1e6}, mesh.Point{X: 1e6, Y: 2e6}) != "" {
			t.Errorf("%s: a segment far away lies on a part", d)
		}
	}
	d, _ := NewDomain(DomainSpec{Shape: Interval, X0: -1, X1: 2})
	if got := d.Parts(); len(got) != 2 || d.PartOf(mesh.Point{X: -1}, mesh.Point{X: -1}) != "left" || d.PartOf(mesh.Point{X: 2}, mesh.Point{X: 2}) != "right" {
		t.Errorf("interval parts %v", got)
	}
}
