package meshfile

import (
	"bytes"
	"compress/zlib"
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"slices"
	"strings"
	"testing"
)

func read(t *testing.T, name string) *File {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	f, err := Read(name, b)
	if err != nil {
		t.Fatalf("%s: %v", name, err)
	}
	return f
}

// exact is the field the fixtures carry: u = x² + 3y + 1 (testdata/make.py).
func exact(p [3]float64) float64 { return p[0]*p[0] + 3*p[1] + 1 }

// The fixtures written by meshio (python3-meshio, testdata/make.py) in every
// writer it has of our formats: the grid, its triangles and the field u
// come back as written.
func TestMeshioFixtures(t *testing.T) {
	for _, c := range []struct {
		file, ty string
		cells    int
		names    []string
	}{
		{"tri-ascii.vtu", Tri3, 24, []string{"u", "w"}},
		{"tri-zlib.vtu", Tri3, 24, []string{"u", "w"}},
		{"tri-raw.vtu", Tri3, 24, []string{"u", "w"}},
		{"tri.vtk", Tri3, 24, []string{"u", "w"}},
		{"quad-ascii.vtu", Quad4, 12, []string{"u", "w"}},
		{"tri-22.msh", Tri3, 24, []string{"u"}},
		{"tri-41.msh", Tri3, 24, []string{"u"}},
	} {
		f := read(t, c.file)
		if len(f.Points) != 20 || f.Dim() != 2 {
			t.Errorf("%s: %d points, dimension %d; want 20 and 2", c.file, len(f.Points), f.Dim())
		}
		cells := 0
		for _, b := range f.Blocks {
			if b.Type == c.ty {
				cells += b.Len()
			}
		}
		if cells != c.cells {
			t.Errorf("%s: %d %s cells, want %d (blocks %v)", c.file, cells, c.ty, c.cells, blockTypes(f))
		}
		if !slices.Equal(f.Names(), c.names) {
			t.Errorf("%s: arrays %v, want %v", c.file, f.Names(), c.names)
		}
		u, err := f.Array("u")
		if err != nil {
			t.Fatalf("%s: %v", c.file, err)
		}
		// meshio writes ASCII .vtu with 12 significant digits, the other
		// formats with every digit.
		tol := 1e-15
		if strings.HasSuffix(c.file, "ascii.vtu") {
			tol = 1e-11
		}
		for i, p := range f.Points {
			grid := [3]float64{0.5 * float64(i%5), float64(i/5) / 3, 0}
			if math.Abs(p[0]-grid[0]) > tol || math.Abs(p[1]-grid[1]) > tol || p[2] != 0 {
				t.Errorf("%s: node %d at %v, want %v", c.file, i, p, grid)
				break
			}
			if want := exact(grid); math.Abs(u[i]-want) > tol*want {
				t.Errorf("%s: u at node %d %v is %v, want %v", c.file, i, p, u[i], want)
				break
			}
		}
		// The first cell of the grid starts (0,0), (0.5,0).
		b := f.Blocks[len(f.Blocks)-1]
		if b.Nodes[0] != 0 || b.Nodes[1] != 1 {
			t.Errorf("%s: the first cell is %v", c.file, b.Nodes[:NodesOf[b.Type]])
		}
	}
}

func blockTypes(f *File) []string {
	var out []string
	for _, b := range f.Blocks {
		out = append(out, fmt.Sprintf("%s×%d %q", b.Type, b.Len(), b.Group))
	}
	return out
}

// A plate of our own geometry meshed by gmsh (testdata/plate.geo) in MSH
// 2.2 and 4.1: the same nodes and triangles, and the sides as named
// physical groups of lines.
func TestGmshPlate(t *testing.T) {
	var counts [2]map[string]int
	for i, name := range []string{"plate-22.msh", "plate-41.msh"} {
		f := read(t, name)
		counts[i] = map[string]int{}
		for _, b := range f.Blocks {
			counts[i][b.Type+" "+b.Group] += b.Len()
		}
		for _, side := range []string{"bottom", "right", "top", "notch", "left"} {
			if counts[i][Line2+" "+side] == 0 {
				t.Errorf("%s: no lines in the group %q: %v", name, side, blockTypes(f))
			}
		}
		if counts[i][Tri3+" plate"] < 20 {
			t.Errorf("%s: %d triangles in the group plate", name, counts[i][Tri3+" plate"])
		}
	}
	if fmt.Sprint(counts[0]) != fmt.Sprint(counts[1]) {
		t.Errorf("MSH 2.2 and 4.1 differ: %v and %v", counts[0], counts[1])
	}
}

// appended writes a .vtu with raw appended data (uncompressed or zlib):
// meshio writes only inline data, so this writer follows the VTK file
// format's description of appended arrays.
func appended(t *testing.T, compress bool) []byte {
	pts := []float64{0, 0, 0, 1, 0, 0, 0, 1, 0, 1, 1, 0}
	conn := []int64{0, 1, 3, 0, 3, 2}
	offs := []int64{3, 6}
	types := []uint8{5, 5}
	u := []float64{1, 2, 3, 4}
	var blob bytes.Buffer
	var offsets []int
	put := func(v any) {
		offsets = append(offsets, blob.Len())
		var raw bytes.Buffer
		binary.Write(&raw, binary.LittleEndian, v)
		if !compress {
			binary.Write(&blob, binary.LittleEndian, uint32(raw.Len()))
			blob.Write(raw.Bytes())
			return
		}
		var z bytes.Buffer
		w := zlib.NewWriter(&z)
		w.Write(raw.Bytes())
		w.Close()
		binary.Write(&blob, binary.LittleEndian, []uint32{1, uint32(raw.Len()), uint32(raw.Len()), uint32(z.Len())})
		blob.Write(z.Bytes())
	}
	put(pts)
	put(conn)
	put(offs)
	put(types)
	put(u)
	comp := ""
	if compress {
		comp = ` compressor="vtkZLibDataCompressor"`
	}
	s := fmt.Sprintf(`<?xml version="1.0"?>
<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" header_type="UInt32"%s>
<UnstructuredGrid><Piece NumberOfPoints="4" NumberOfCells="2">
<Points><DataArray type="Float64" NumberOfComponents="3" format="appended" offset="%d"/></Points>
<Cells>
<DataArray type="Int64" Name="connectivity" format="appended" offset="%d"/>
<DataArray type="Int64" Name="offsets" format="appended" offset="%d"/>
<DataArray type="UInt8" Name="types" format="appended" offset="%d"/>
</Cells>
<PointData><DataArray type="Float64" Name="temperature" format="appended" offset="%d"/></PointData>
</Piece></UnstructuredGrid>
<AppendedData encoding="raw">
_`, comp, offsets[0], offsets[1], offsets[2], offsets[3], offsets[4])
	return append(append([]byte(s), blob.Bytes()...), "\n</AppendedData>\n</VTKFile>\n"...)
}

func TestAppendedRaw(t *testing.T) {
	for _, z := range []bool{false, true} {
		f, err := Read("appended.vtu", appended(t, z))
		if err != nil {
			t.Fatalf("zlib %v: %v", z, err)
		}
		u, err := f.Array("temperature")
		if err != nil || !slices.Equal(u, []float64{1, 2, 3, 4}) || f.Points[3] != [3]float64{1, 1, 0} {
			t.Errorf("zlib %v: u %v (%v), points %v", z, u, err, f.Points)
		}
		if len(f.Blocks) != 1 || !slices.Equal(f.Blocks[0].Nodes, []int{0, 1, 3, 0, 3, 2}) {
			t.Errorf("zlib %v: blocks %v", z, blockTypes(f))
		}
		if _, err := f.Array("u"); err == nil || !strings.Contains(err.Error(), "temperature") {
			t.Errorf("a wrong array name: %v; want the names listed", err)
		}
	}
}

// Bad files: an error that says where and what, never a crash.
func TestBadFiles(t *testing.T) {
	msh := string(mustRead(t, "tri-22.msh"))
	vtk := string(mustRead(t, "tri.vtk"))
	vtu := string(mustRead(t, "tri-ascii.vtu"))
	for _, c := range []struct {
		name, data, want string
	}{
		{"empty", "", "not a mesh file"},
		{"text", "hello", "not a mesh file"},
		{"truncated msh", msh[:len(msh)/2], "line"},
		{"node out of range", strings.Replace(msh, "$Elements\n24\n1 2 2 1 1 1 2 7", "$Elements\n24\n1 2 2 1 1 1 2 99", 1), "node 99 is not among the nodes"},
		{"duplicate node", strings.Replace(msh, "\n2 5.", "\n1 5.", 1), "node 1 is given twice"},
		{"unknown element", strings.Replace(msh, "$Elements\n24\n1 2 ", "$Elements\n24\n1 4 ", 1), "element type 4 (4-node tetrahedron) is not supported"},
		{"NaN coordinate", strings.Replace(msh, "\n2 5.0000000000000000e-01", "\n2 nan", 1), "finite"},
		{"binary msh", strings.Replace(msh, "2.2 0 8", "2.2 1 8", 1), "binary gmsh"},
		{"vtk unknown cell", strings.Replace(vtk, "CELL_TYPES 24\n5", "CELL_TYPES 24\n10", 1), "tetrahedron"},
		{"vtu not XML", vtu[:len(vtu)/3], "not a readable VTK XML"},
		{"vtu short array", strings.Replace(vtu, `NumberOfPoints="20"`, `NumberOfPoints="21"`, 1), "want 63"},
	} {
		_, err := Read(c.name, []byte(c.data))
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v; want one containing %q", c.name, err, c.want)
		}
	}
}

func mustRead(t *testing.T, name string) []byte {
	b, err := os.ReadFile(filepath.Join("testdata", name))
	if err != nil {
		t.Fatal(err)
	}
	return b
}

// FuzzRead: no input makes Read panic or hang (make test replays the seeds;
// make fuzz runs it longer).
func FuzzRead(f *testing.F) {
	for _, name := range []string{"tri-ascii.vtu", "tri-zlib.vtu", "tri-raw.vtu", "tri.vtk", "tri-22.msh", "tri-41.msh", "plate-41.msh"} {
		b, err := os.ReadFile(filepath.Join("testdata", name))
		if err != nil {
			f.Fatal(err)
		}
		f.Add(b)
	}
	f.Fuzz(func(t *testing.T, b []byte) {
		Read("fuzz", b)
	})
}
