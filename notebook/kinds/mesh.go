package kinds

import (
	"fmt"
	"math"

	"gapbook/mesh"
	"gapbook/notebook"
	"gapbook/problem"
)

func init() { notebook.Register(meshKind{}) }

// meshKind discretises the domain of a problem cell.
type meshKind struct{}

// fieldCellLimit is the largest mesh drawn as a field in results: bigger
// fields make saved files and pages heavy without showing more.
const fieldCellLimit = 20000

func (meshKind) Name() string { return "mesh" }
func (meshKind) Doc() string {
	return "A conforming triangle (or interval) mesh of the problem's domain, by cells across or a target cell size, with uniform refinements."
}
func (meshKind) Inputs() []notebook.Input {
	return []notebook.Input{
		{Name: "problem", Type: notebook.Ref, RefKinds: []string{"problem"}, Doc: "id of the problem cell whose domain is meshed"},
		{Name: "cells", Type: notebook.Integer, Default: 8, Low: notebook.AtLeast(1), High: notebook.AtMost(4096),
			Doc: "cells across the domain: per unit length on the L-shape, across the shorter side of a rectangle, across the diameter of a disk or polygon"},
		{Name: "h", Type: notebook.Number, Default: 0.0, Low: notebook.Above(0),
			Doc: "target largest cell diameter; when given it replaces cells (leave it out to use cells)"},
		{Name: "refinements", Type: notebook.Integer, Default: 0, Low: notebook.AtLeast(0), High: notebook.AtMost(12),
			Doc: "uniform refinements after that (each halves h and keeps the hierarchy the multigrid solver uses)"},
	}
}

// Discretisation is the object a mesh cell hands on (name "mesh").
type Discretisation struct {
	Problem *problem.Problem
	Mesh    *mesh.Mesh
}

func (meshKind) Evaluate(c *notebook.Context, in notebook.Values) (*notebook.Results, error) {
	p, ok := c.Object(in.Text("problem"), "problem").(*problem.Problem)
	if !ok {
		return nil, notebook.FieldErr("problem", "cell %s is not a problem cell", in.Text("problem"))
	}
	m, err := p.Domain.Mesh(in.Int("cells"), in.Number("h"))
	if err != nil {
		field := "cells"
		if in.Number("h") > 0 {
			field = "h"
		}
		return nil, notebook.FieldErr(field, "%v", err)
	}
	for i := range in.Int("refinements") {
		if err := c.Err(); err != nil {
			return nil, err
		}
		if m, err = m.Refine(); err != nil {
			return nil, notebook.FieldErr("refinements", "refinement %d: %v", i+1, err)
		}
	}
	return meshResults(p, m), nil
}

// meshResults describes a mesh: sizes as exact numbers and, when small,
// the mesh itself coloured by cell diameter.
func meshResults(p *problem.Problem, m *mesh.Mesh) *notebook.Results {
	// Counts and sizes are exact properties of the discretisation, not
	// approximations or bounds: they carry the label of outside values.
	r := &notebook.Results{
		Scalars: []notebook.Scalar{
			{Name: "nodes", Value: float64(m.NumNodes()), Label: notebook.Reference, Unit: "count, exact"},
			{Name: "cells", Value: float64(m.NumCells()), Label: notebook.Reference, Unit: "count, exact"},
			{Name: "h", Value: m.MaxH(), Label: notebook.Reference, Unit: "largest cell diameter, exact geometry"},
		},
		Objects: map[string]any{"mesh": &Discretisation{Problem: p, Mesh: m}},
	}
	if m.Dim == 2 {
		r.Scalars = append(r.Scalars, notebook.Scalar{Name: "min_angle", Value: m.MinAngle() * 180 / math.Pi, Label: notebook.Reference, Unit: "degrees, smallest angle of any triangle"})
		if m.NumCells() <= fieldCellLimit {
			r.Fields = append(r.Fields, meshField(m, "mesh", fmt.Sprintf("mesh: %d cells, coloured by diameter", m.NumCells()), m.Diameters(), true))
		}
	}
	return r
}

// meshField turns values on m (per node or per cell) into a Field.
func meshField(m *mesh.Mesh, name, title string, values []float64, perCell bool) notebook.Field {
	f := notebook.Field{Name: name, Title: title, X: make([]float64, len(m.Nodes)), Y: make([]float64, len(m.Nodes)), Tri: m.Cells, PerCell: perCell, Values: values}
	for i, q := range m.Nodes {
		f.X[i], f.Y[i] = q.X, q.Y
	}
	return f
}

// nodalPlot draws values on the nodes of a 1-D mesh as a line.
func nodalPlot(m *mesh.Mesh, name, title string, values []float64) notebook.Plot {
	xs := make([]float64, len(m.Nodes))
	for i, q := range m.Nodes {
		xs[i] = q.X
	}
	return notebook.Plot{Name: name, Title: title, XLabel: "x", YLabel: name, Series: []notebook.Series{{Name: name, X: xs, Y: values}}}
}
