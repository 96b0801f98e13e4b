// Package meshfile reads meshes with nodal fields from open formats: gmsh
// MSH 2.2 and 4.1 (ASCII), VTK XML unstructured grids (.vtu: ascii, base64
// binary with or without zlib, appended raw), legacy ASCII .vtk and CSV
// tables (docs/format.md, "Imported fields"). It only parses: the caller
// turns the cells into a mesh. Files come from elsewhere and are
// untrusted: every problem is an error naming the line or byte offset and
// what was expected, and sizes are checked before anything is allocated
// from them.
package meshfile

import (
	"bytes"
	"fmt"
	"math"
	"sort"
	"strings"
)

// MaxSize is the largest file read (64 MiB).
const MaxSize = 64 << 20

// Element types, by the number of nodes and the dimension.
const (
	Vertex = "vertex"
	Line2  = "line2" // 2-node line
	Line3  = "line3" // 3-node line (ends, then the midpoint)
	Tri3   = "tri3"  // 3-node triangle (P1)
	Tri6   = "tri6"  // 6-node triangle (P2: vertices, then edge midpoints 01, 12, 20)
	Quad4  = "quad4" // 4-node quadrilateral (Q1), nodes in turn round it
)

// NodesOf is the number of nodes of each element type.
var NodesOf = map[string]int{Vertex: 1, Line2: 2, Line3: 3, Tri3: 3, Tri6: 6, Quad4: 4}

// DimOf is the dimension of each element type.
var DimOf = map[string]int{Vertex: 0, Line2: 1, Line3: 1, Tri3: 2, Tri6: 2, Quad4: 2}

// Block is a set of elements of one type; Group is the name of the
// physical group they belong to ("" when the file gives none).
type Block struct {
	Type  string
	Group string
	// Nodes holds NodesOf[Type] node indices (0-based, into File.Points)
	// per element.
	Nodes []int
}

// Len is the number of elements of the block.
func (b *Block) Len() int { return len(b.Nodes) / NodesOf[b.Type] }

// File is what a mesh file holds.
type File struct {
	Format string
	// Points are the node coordinates (x, y, z).
	Points [][3]float64
	Blocks []Block
	// Data holds the point-data arrays with one component, by name.
	Data map[string][]float64
}

// Dim is the largest dimension of the file's elements.
func (f *File) Dim() int {
	d := 0
	for _, b := range f.Blocks {
		d = max(d, DimOf[b.Type])
	}
	return d
}

// Names lists the point-data arrays in order.
func (f *File) Names() []string {
	var out []string
	for n := range f.Data {
		out = append(out, n)
	}
	sort.Strings(out)
	return out
}

// Array returns the point-data array called name, or an error listing the
// arrays the file has.
func (f *File) Array(name string) ([]float64, error) {
	names := f.Names()
	if name == "" {
		if len(names) == 1 {
			return f.Data[names[0]], nil
		}
		if len(names) == 0 {
			return nil, fmt.Errorf("the file has no point-data array with one component")
		}
		return nil, fmt.Errorf("the file has %d point-data arrays; choose one: %s", len(names), strings.Join(names, ", "))
	}
	v, ok := f.Data[name]
	if !ok {
		if len(names) == 0 {
			return nil, fmt.Errorf("the file has no point-data array %q (it has none with one component)", name)
		}
		return nil, fmt.Errorf("the file has no point-data array %q; it has: %s", name, strings.Join(names, ", "))
	}
	return v, nil
}

// check makes sure the file is consistent: indices in range, arrays of the
// right length, finite numbers.
func (f *File) check() error {
	n := len(f.Points)
	if n == 0 {
		return fmt.Errorf("the file has no nodes")
	}
	for i, p := range f.Points {
		for _, c := range p {
			if math.IsNaN(c) || math.IsInf(c, 0) {
				return fmt.Errorf("node %d has the coordinate %g; want finite numbers", i, c)
			}
		}
	}
	cells := 0
	for _, b := range f.Blocks {
		for j, v := range b.Nodes {
			if v < 0 || v >= n {
				return fmt.Errorf("%s element %d refers to node %d; the file has nodes 0 to %d", b.Type, j/NodesOf[b.Type], v, n-1)
			}
		}
		if DimOf[b.Type] > 0 {
			cells += b.Len()
		}
	}
	if cells == 0 {
		return fmt.Errorf("the file has no lines, triangles or quadrilaterals")
	}
	for name, a := range f.Data {
		if len(a) != n {
			return fmt.Errorf("point-data array %q has %d values for %d nodes", name, len(a), n)
		}
		for i, v := range a {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return fmt.Errorf("point-data array %q has the value %g at node %d; want finite numbers", name, v, i)
			}
		}
	}
	return nil
}

// Read parses data, whose format it recognises from its start (name, the
// file name, serves only for messages and the CSV case).
func Read(name string, data []byte) (*File, error) {
	if len(data) > MaxSize {
		return nil, fmt.Errorf("%s: %d bytes; at most %d MiB can be imported", name, len(data), MaxSize>>20)
	}
	var f *File
	var err error
	head := bytes.TrimLeft(data[:min(len(data), 4096)], " \t\r\n\ufeff")
	switch {
	case bytes.HasPrefix(head, []byte("$MeshFormat")):
		f, err = readGmsh(data)
	case bytes.HasPrefix(head, []byte("<?xml")) || bytes.HasPrefix(head, []byte("<VTKFile")):
		f, err = readVTU(data)
	case bytes.HasPrefix(head, []byte("# vtk DataFile")):
		f, err = readVTK(data)
	default:
		return nil, fmt.Errorf("%s: not a mesh file this tool reads (gmsh .msh, VTK .vtu or .vtk); CSV tables are imported as a pair of nodes and cells", name)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	if err := f.check(); err != nil {
		return nil, fmt.Errorf("%s: %w", name, err)
	}
	return f, nil
}
