package kinds

import (
	"bytes"
	"compress/gzip"
	"crypto/sha256"
	"encoding/base64"
	"encoding/hex"
	"fmt"
	"io"
	"math"
	"strings"

	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/meshfile"
	"gapbook/notebook"
	"gapbook/problem"
)

func init() { notebook.Register(importKind{}) }

// importKind reads a mesh and a nodal field computed elsewhere, so that a
// bound cell bounds the user's own solution (docs/format.md, "Imported
// fields"; docs/math.md §9).
type importKind struct{}

// Boundary choices of an import.
const (
	boundaryCheck       = "check"
	boundaryInterpolate = "interpolate"
)

func (importKind) Name() string { return "import" }
func (importKind) Doc() string {
	return "A solution computed elsewhere: a mesh and a nodal field read from a gmsh .msh, VTK .vtu or legacy .vtk file, checked against the problem's domain and boundary data; a bound cell then bounds its error."
}
func (importKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "problem", Type: notebook.Ref, RefKinds: []string{"problem"}, Doc: "id of the problem cell the field is an approximate solution of"},
		{Name: "file", Type: notebook.Text, Default: "", MaxLen: 256, Doc: "the name of the file, for messages"},
		{Name: "data", Type: notebook.Text, File: true, Doc: "the file itself, gzip-compressed and base64-encoded (the page fills it in when a file is opened or dropped)"},
		{Name: "array", Type: notebook.Text, Default: "", MaxLen: 256, Doc: "the point-data array that holds the field (may be left empty when the file has one)"},
		{Name: "boundary", Type: notebook.Choice, Default: boundaryCheck, Choices: []string{boundaryCheck, boundaryInterpolate},
			Doc: "check: refuse a field that differs from u_D at a boundary node by more than rounding (a guaranteed bound needs v = u_D there); interpolate: replace the boundary values by u_D and report the change"},
	}
}

// decodeData undoes what the page does to a file: base64, then gzip.
func decodeData(s string) ([]byte, error) {
	z, err := base64.StdEncoding.DecodeString(strings.TrimSpace(s))
	if err != nil {
		return nil, fmt.Errorf("not base64: %v", err)
	}
	r, err := gzip.NewReader(bytes.NewReader(z))
	if err != nil {
		return nil, fmt.Errorf("not gzip data: %v", err)
	}
	raw, err := io.ReadAll(io.LimitReader(r, meshfile.MaxSize+1))
	if err != nil {
		return nil, fmt.Errorf("gzip: %v", err)
	}
	if len(raw) > meshfile.MaxSize {
		return nil, fmt.Errorf("the file is over %d MiB", meshfile.MaxSize>>20)
	}
	return raw, nil
}

// encodeData is what the page stores of a file: gzip, then base64.
func encodeData(raw []byte) string {
	var b bytes.Buffer
	w, _ := gzip.NewWriterLevel(&b, gzip.BestCompression)
	w.Write(raw)
	w.Close()
	return base64.StdEncoding.EncodeToString(b.Bytes())
}

func (importKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	p, ok := c.Object(in.Text("problem"), "problem").(*problem.Problem)
	if !ok {
		return nil, notebook.FieldErr("problem", "cell %s is not a problem cell", in.Text("problem"))
	}
	name := in.Text("file")
	if name == "" {
		name = "the file"
	}
	c.Progress(0.05, "reading "+name)
	raw, err := decodeData(in.Text("data"))
	if err != nil {
		return nil, notebook.FieldErr("data", "%v; open the file again", err)
	}
	f, err := meshfile.Read(name, raw)
	if err != nil {
		return nil, notebook.FieldErr("data", "%v", err)
	}
	vals, err := f.Array(in.Text("array"))
	if err != nil {
		return nil, notebook.FieldErr("array", "%s: %v", name, err)
	}
	c.Progress(0.4, "building the mesh")
	m, v, flipped, err := importMesh(p, f, vals)
	if err != nil {
		return nil, notebook.FieldErr("data", "%s: %v", name, err)
	}
	if err := coversDomain(p.Domain, m); err != nil {
		return nil, notebook.FieldErr("problem", "%s does not mesh the domain of problem %s: %v", name, p.Name, err)
	}
	// A guaranteed majorant needs v = u_D at the boundary nodes.
	worst, at, tol := boundaryMismatch(p, m, v)
	changed := 0
	if worst > tol {
		if in.Text("boundary") == boundaryCheck {
			pt := m.Nodes[at]
			return nil, notebook.FieldErr("boundary", "the field differs from u_D by %.3g at the boundary node (%g, %g) (largest mismatch; rounding allows %.1g): a guaranteed bound needs v = u_D on the boundary; choose interpolate to replace the boundary values by u_D", worst, pt.X, pt.Y, tol)
		}
		uD := dirichletOrZero(p)
		for i, b := range m.Boundary {
			if want := uD(m.Nodes[i].X, m.Nodes[i].Y); b && math.Abs(v[i]-want) > tol {
				v[i] = want
				changed++
			}
		}
	}
	s, err := fem.NewP1(m)
	if err != nil {
		return nil, notebook.FieldErr("data", "%v", err)
	}
	sol := &Solution{Problem: p, Mesh: m, Space: s, V: v, Tolerance: defaultTolerance, MaxNewton: defaultMaxNewton}
	sum := sha256.Sum256(raw)
	res := &notebook.Results{
		Scalars: []notebook.Scalar{
			{Name: "nodes", Value: float64(m.NumNodes()), Label: notebook.Reference, Unit: "count (nodes no cell uses are left out)"},
			{Name: "cells", Value: float64(m.NumCells()), Label: notebook.Reference, Unit: "count"},
			{Name: "file_bytes", Value: float64(len(raw)), Label: notebook.Reference, Unit: fmt.Sprintf("bytes of %s (%s); sha256 %s", name, f.Format, hex.EncodeToString(sum[:]))},
			{Name: "boundary_mismatch", Value: worst, Label: notebook.Reference, Unit: "largest |v − u_D| at a boundary node, as read"},
			{Name: "boundary_changed", Value: float64(changed), Label: notebook.Reference, Unit: "boundary values replaced by u_D"},
			{Name: "cells_turned", Value: float64(flipped), Label: notebook.Reference, Unit: "clockwise triangles turned counter-clockwise"},
		},
		Objects: map[string]any{"solution": sol},
	}
	if m.Dim == 1 {
		res.Plots = append(res.Plots, nodalPlot(m, "v", "imported field v", v))
	} else if m.NumCells() <= fieldCellLimit {
		res.Fields = append(res.Fields, meshField(m, "v", "imported field v (P1)", v, false))
	}
	return res, nil
}

func dirichletOrZero(p *problem.Problem) func(x, y float64) float64 {
	if uD := p.DirichletAt(0); uD != nil {
		return uD
	}
	return func(x, y float64) float64 { return 0 }
}

// boundaryMismatch returns the largest |v − u_D| at the boundary nodes of
// m, the node where it is, and what rounding allows (10⁻¹³ times the
// largest |v|, at least 10⁻¹³).
func boundaryMismatch(p *problem.Problem, m *mesh.Mesh, v []float64) (worst float64, at int, tol float64) {
	uD := dirichletOrZero(p)
	scale := 1.0
	for _, x := range v {
		scale = math.Max(scale, math.Abs(x))
	}
	at = -1
	for i, b := range m.Boundary {
		if !b {
			continue
		}
		if d := math.Abs(v[i] - uD(m.Nodes[i].X, m.Nodes[i].Y)); d > worst {
			worst, at = d, i
		}
	}
	return worst, at, 1e-13 * scale
}

// importMesh builds the P1 mesh of the file's cells of the problem's
// dimension and the nodal values on it.
func importMesh(p *problem.Problem, f *meshfile.File, vals []float64) (*mesh.Mesh, []float64, int, error) {
	dim := p.Domain.Dim()
	var cells [][3]int32
	var segs [][2]int32
	for _, b := range f.Blocks {
		if meshfile.DimOf[b.Type] != dim {
			continue
		}
		switch b.Type {
		case meshfile.Tri3:
			for k := range b.Len() {
				n := b.Nodes[3*k:]
				cells = append(cells, [3]int32{int32(n[0]), int32(n[1]), int32(n[2])})
			}
		case meshfile.Line2:
			for k := range b.Len() {
				segs = append(segs, [2]int32{int32(b.Nodes[2*k]), int32(b.Nodes[2*k+1])})
			}
		default:
			return nil, nil, 0, fmt.Errorf("%d %s elements: only 3-node triangles (2-D) and 2-node lines (1-D) are bounded so far", b.Len(), b.Type)
		}
	}
	var m *mesh.Mesh
	var keep []int
	var flipped int
	var err error
	if dim == 1 {
		xs := make([]float64, len(f.Points))
		for i, pt := range f.Points {
			if pt[1] != 0 || pt[2] != 0 {
				return nil, nil, 0, fmt.Errorf("node %d is at (%g, %g, %g), off the x axis of the 1-D problem", i, pt[0], pt[1], pt[2])
			}
			xs[i] = pt[0]
		}
		if len(segs) == 0 {
			return nil, nil, 0, fmt.Errorf("no 2-node lines for the 1-D problem")
		}
		m, keep, err = mesh.FromSegments(xs, segs)
	} else {
		pts := make([]mesh.Point, len(f.Points))
		for i, pt := range f.Points {
			if pt[2] != 0 {
				return nil, nil, 0, fmt.Errorf("node %d has z = %g; a 2-D field lies in the plane z = 0", i, pt[2])
			}
			pts[i] = mesh.Point{X: pt[0], Y: pt[1]}
		}
		if len(cells) == 0 {
			return nil, nil, 0, fmt.Errorf("no triangles for the 2-D problem")
		}
		m, keep, flipped, err = mesh.FromTriangles(pts, cells)
	}
	if err != nil {
		return nil, nil, 0, err
	}
	v := make([]float64, len(keep))
	for j, i := range keep {
		v[j] = vals[i]
	}
	return m, v, flipped, nil
}

// coversDomain checks that m meshes the domain: every boundary edge lies
// on the domain's boundary and the measures agree to rounding.
func coversDomain(d *problem.Domain, m *mesh.Mesh) error {
	if m.Dim == 1 {
		lo, hi := m.Nodes[0].X, m.Nodes[len(m.Nodes)-1].X
		if tol := 1e-12 * (d.X1 - d.X0); math.Abs(lo-d.X0) > tol || math.Abs(hi-d.X1) > tol {
			return fmt.Errorf("the mesh spans (%g, %g), the domain (%g, %g)", lo, hi, d.X0, d.X1)
		}
		return nil
	}
	for _, e := range m.BoundaryEdges {
		a, b := m.Nodes[e[0]], m.Nodes[e[1]]
		if d.PartOf(a, b) == "" {
			return fmt.Errorf("the mesh's boundary edge from (%g, %g) to (%g, %g) is not on the domain's boundary (a hole, a crack or another domain)", a.X, a.Y, b.X, b.Y)
		}
	}
	area, want := m.Measure(), d.Area()
	if math.Abs(area-want) > 1e-10*want {
		return fmt.Errorf("the mesh's area is %.15g, the domain's %.15g", area, want)
	}
	return nil
}
