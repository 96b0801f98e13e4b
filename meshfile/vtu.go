package meshfile

import (
	"bytes"
	"compress/zlib"
	"encoding/base64"
	"encoding/binary"
	"encoding/xml"
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
)

// vtkTypes maps VTK cell type numbers to ours.
var vtkTypes = map[int]string{1: Vertex, 3: Line2, 21: Line3, 5: Tri3, 22: Tri6, 9: Quad4}

var vtkNames = map[int]string{7: "polygon", 8: "pixel", 10: "tetrahedron", 12: "hexahedron", 13: "wedge", 14: "pyramid", 23: "quadratic quadrilateral", 24: "quadratic tetrahedron", 28: "biquadratic quadrilateral"}

func vtkType(code int) (string, error) {
	if ty, ok := vtkTypes[code]; ok {
		return ty, nil
	}
	if n, ok := vtkNames[code]; ok {
		return "", fmt.Errorf("cell type %d (%s) is not supported; this tool reads vertices, 2- and 3-node lines, 3- and 6-node triangles and 4-node quadrilaterals", code, n)
	}
	return "", fmt.Errorf("unknown cell type %d", code)
}

type vtuArray struct {
	Type       string `xml:"type,attr"`
	Name       string `xml:"Name,attr"`
	Components int    `xml:"NumberOfComponents,attr"`
	Format     string `xml:"format,attr"`
	Offset     string `xml:"offset,attr"`
	Text       string `xml:",chardata"`
}

type vtuFile struct {
	XMLName    xml.Name `xml:"VTKFile"`
	Type       string   `xml:"type,attr"`
	ByteOrder  string   `xml:"byte_order,attr"`
	HeaderType string   `xml:"header_type,attr"`
	Compressor string   `xml:"compressor,attr"`
	Pieces     []struct {
		Points    int        `xml:"NumberOfPoints,attr"`
		Cells     int        `xml:"NumberOfCells,attr"`
		Coords    []vtuArray `xml:"Points>DataArray"`
		CellArray []vtuArray `xml:"Cells>DataArray"`
		PointData []vtuArray `xml:"PointData>DataArray"`
	} `xml:"UnstructuredGrid>Piece"`
	Appended struct {
		Encoding string `xml:"encoding,attr"`
	} `xml:"AppendedData"`
}

// vtuReader decodes the data arrays of one file.
type vtuReader struct {
	order      binary.ByteOrder
	header     int // bytes of a header word
	compressed bool
	appended   []byte // the raw appended data after the "_"
	base64App  bool
}

func readVTU(data []byte) (*File, error) {
	// Raw appended data is not XML: cut it out before parsing.
	var appended []byte
	head := data
	if i := bytes.Index(data, []byte("<AppendedData")); i >= 0 {
		j := bytes.IndexByte(data[i:], '_')
		k := bytes.LastIndex(data, []byte("</AppendedData>"))
		if j < 0 || k < i+j {
			return nil, fmt.Errorf("byte %d: the appended data has no start mark _ or no end", i)
		}
		appended = data[i+j+1 : k]
		head = append(append(append([]byte{}, data[:i+j]...), "</AppendedData>"...), data[k+len("</AppendedData>"):]...)
	}
	var v vtuFile
	dec := xml.NewDecoder(bytes.NewReader(head))
	dec.Strict = true
	if err := dec.Decode(&v); err != nil {
		return nil, fmt.Errorf("not a readable VTK XML file: %v", err)
	}
	if v.Type != "UnstructuredGrid" {
		return nil, fmt.Errorf("VTK XML file of type %q; want UnstructuredGrid", clip(v.Type))
	}
	r := &vtuReader{order: binary.LittleEndian, header: 4, appended: appended}
	switch v.ByteOrder {
	case "", "LittleEndian":
	case "BigEndian":
		r.order = binary.BigEndian
	default:
		return nil, fmt.Errorf("byte_order %q; want LittleEndian or BigEndian", clip(v.ByteOrder))
	}
	switch v.HeaderType {
	case "", "UInt32":
	case "UInt64":
		r.header = 8
	default:
		return nil, fmt.Errorf("header_type %q; want UInt32 or UInt64", clip(v.HeaderType))
	}
	switch v.Compressor {
	case "":
	case "vtkZLibDataCompressor":
		r.compressed = true
	default:
		return nil, fmt.Errorf("compressor %q is not supported; save without compression or with zlib", clip(v.Compressor))
	}
	switch v.Appended.Encoding {
	case "", "raw":
	case "base64":
		r.base64App = true
	default:
		return nil, fmt.Errorf("appended data encoding %q; want raw or base64", clip(v.Appended.Encoding))
	}
	if len(v.Pieces) != 1 {
		return nil, fmt.Errorf("the file has %d pieces; want one", len(v.Pieces))
	}
	p := v.Pieces[0]
	if p.Points < 1 || p.Points > MaxSize || p.Cells < 0 || p.Cells > MaxSize {
		return nil, fmt.Errorf("NumberOfPoints %d, NumberOfCells %d: out of range", p.Points, p.Cells)
	}
	f := &File{Format: "vtu", Data: map[string][]float64{}}
	if len(p.Coords) != 1 {
		return nil, fmt.Errorf("<Points> has %d data arrays; want one", len(p.Coords))
	}
	xyz, err := r.array(&p.Coords[0], 3*p.Points, "the points")
	if err != nil {
		return nil, err
	}
	f.Points = make([][3]float64, p.Points)
	for i := range f.Points {
		copy(f.Points[i][:], xyz[3*i:3*i+3])
	}
	var conn, offs, types []float64
	for i := range p.CellArray {
		a := &p.CellArray[i]
		switch a.Name {
		case "connectivity":
			conn, err = r.array(a, -1, "connectivity")
		case "offsets":
			offs, err = r.array(a, p.Cells, "offsets")
		case "types":
			types, err = r.array(a, p.Cells, "types")
		}
		if err != nil {
			return nil, err
		}
	}
	if conn == nil || offs == nil || types == nil {
		return nil, fmt.Errorf("<Cells> needs the arrays connectivity, offsets and types")
	}
	if err := addCells(f, conn, offs, types); err != nil {
		return nil, err
	}
	for i := range p.PointData {
		a := &p.PointData[i]
		if a.Components > 1 {
			continue
		}
		vals, err := r.array(a, p.Points, fmt.Sprintf("point data %q", a.Name))
		if err != nil {
			return nil, err
		}
		name := a.Name
		if name == "" {
			name = fmt.Sprintf("data%d", i+1)
		}
		f.Data[name] = vals
	}
	return f, nil
}

// addCells turns VTK's cell arrays into blocks.
func addCells(f *File, conn, offs, types []float64) error {
	blocks := map[string]int{}
	start := 0
	for k, code := range types {
		ty, err := vtkType(int(code))
		if err != nil {
			return fmt.Errorf("cell %d: %v", k, err)
		}
		end := int(offs[k])
		if end < start || end > len(conn) || end-start != NodesOf[ty] {
			return fmt.Errorf("cell %d (%s): offsets %d to %d do not hold its %d nodes", k, ty, start, end, NodesOf[ty])
		}
		bi, ok := blocks[ty]
		if !ok {
			bi = len(f.Blocks)
			blocks[ty] = bi
			f.Blocks = append(f.Blocks, Block{Type: ty})
		}
		for _, v := range conn[start:end] {
			f.Blocks[bi].Nodes = append(f.Blocks[bi].Nodes, int(v))
		}
		start = end
	}
	return nil
}

// sizeOf is the byte size of a VTK data type.
func sizeOf(ty string) int {
	switch ty {
	case "Int8", "UInt8":
		return 1
	case "Int16", "UInt16":
		return 2
	case "Int32", "UInt32", "Float32":
		return 4
	case "Int64", "UInt64", "Float64":
		return 8
	}
	return 0
}

// array decodes a data array into float64 values; want is the number of
// values expected (-1: any).
func (r *vtuReader) array(a *vtuArray, want int, what string) ([]float64, error) {
	size := sizeOf(a.Type)
	if size == 0 {
		return nil, fmt.Errorf("%s: data type %q; want Int8 … Int64, UInt8 … UInt64, Float32 or Float64", what, clip(a.Type))
	}
	var out []float64
	switch a.Format {
	case "ascii":
		for _, w := range strings.Fields(a.Text) {
			v, err := strconv.ParseFloat(w, 64)
			if err != nil {
				return nil, fmt.Errorf("%s: %q is not a number", what, clip(w))
			}
			out = append(out, v)
			if want >= 0 && len(out) > want {
				break
			}
		}
	case "binary":
		raw, err := r.inline(strings.TrimSpace(a.Text))
		if err != nil {
			return nil, fmt.Errorf("%s: %v", what, err)
		}
		out, err = r.values(raw, a.Type, size)
		if err != nil {
			return nil, fmt.Errorf("%s: %v", what, err)
		}
	case "appended":
		off, err := strconv.Atoi(a.Offset)
		if err != nil || off < 0 || off > len(r.appended) {
			return nil, fmt.Errorf("%s: offset %q is not within the appended data (%d bytes)", what, clip(a.Offset), len(r.appended))
		}
		raw, err := r.fromAppended(off)
		if err != nil {
			return nil, fmt.Errorf("%s (appended data, offset %d): %v", what, off, err)
		}
		out, err = r.values(raw, a.Type, size)
		if err != nil {
			return nil, fmt.Errorf("%s: %v", what, err)
		}
	default:
		return nil, fmt.Errorf("%s: format %q; want ascii, binary or appended", what, clip(a.Format))
	}
	if want >= 0 && len(out) != want {
		return nil, fmt.Errorf("%s: %d values; want %d", what, len(out), want)
	}
	return out, nil
}

func (r *vtuReader) word(b []byte) uint64 {
	if r.header == 8 {
		return r.order.Uint64(b)
	}
	return uint64(r.order.Uint32(b))
}

// inline decodes a base64 array: the header and the data together when
// uncompressed, the header and then the compressed blocks, each encoded
// on its own, when compressed.
func (r *vtuReader) inline(text string) ([]byte, error) {
	enc := base64.StdEncoding
	if !r.compressed {
		b, err := enc.DecodeString(text)
		if err != nil {
			return nil, fmt.Errorf("not base64: %v", err)
		}
		if len(b) < r.header {
			return nil, fmt.Errorf("the data has no header")
		}
		n := r.word(b)
		if n > uint64(len(b)-r.header) {
			return nil, fmt.Errorf("the header says %d bytes, the data has %d", n, len(b)-r.header)
		}
		return b[r.header : r.header+int(n)], nil
	}
	first := 4 * r.header // base64 of the three first header words
	if len(text) < first {
		return nil, fmt.Errorf("the data has no header")
	}
	h3, err := enc.DecodeString(text[:first])
	if err != nil {
		return nil, fmt.Errorf("not base64: %v", err)
	}
	nb := r.word(h3)
	if nb > uint64(len(text)) {
		return nil, fmt.Errorf("the header says %d blocks, more than the data can hold", nb)
	}
	hl := (3 + int(nb)) * r.header
	hchars := 4 * ((hl + 2) / 3)
	if len(text) < hchars {
		return nil, fmt.Errorf("the header of %d blocks is cut short", nb)
	}
	hdr, err := enc.DecodeString(text[:hchars])
	if err != nil {
		return nil, fmt.Errorf("not base64: %v", err)
	}
	body, err := enc.DecodeString(text[hchars:])
	if err != nil {
		return nil, fmt.Errorf("not base64: %v", err)
	}
	return r.inflate(hdr, body)
}

// fromAppended decodes the array at byte off of the appended data.
func (r *vtuReader) fromAppended(off int) ([]byte, error) {
	b := r.appended[off:]
	if r.base64App {
		return nil, fmt.Errorf("base64 appended data is not read; save the file with raw appended data or inline binary")
	}
	if len(b) < r.header {
		return nil, fmt.Errorf("the data has no header")
	}
	if !r.compressed {
		n := r.word(b)
		if n > uint64(len(b)-r.header) {
			return nil, fmt.Errorf("the header says %d bytes, the data has %d", n, len(b)-r.header)
		}
		return b[r.header : r.header+int(n)], nil
	}
	if len(b) < 3*r.header {
		return nil, fmt.Errorf("the data has no header")
	}
	nb := r.word(b)
	if nb > uint64(len(b)) {
		return nil, fmt.Errorf("the header says %d blocks, more than the data can hold", nb)
	}
	hl := (3 + int(nb)) * r.header
	if len(b) < hl {
		return nil, fmt.Errorf("the header of %d blocks is cut short", nb)
	}
	return r.inflate(b[:hl], b[hl:])
}

// inflate uncompresses zlib blocks as the header describes them.
func (r *vtuReader) inflate(hdr, body []byte) ([]byte, error) {
	w := func(i int) uint64 { return r.word(hdr[i*r.header:]) }
	nb, bs, last := w(0), w(1), w(2)
	total := uint64(0)
	if nb > 0 {
		total = (nb-1)*bs + last
		if last == 0 {
			total = nb * bs
		}
	}
	// zlib expands at most about 1032 times.
	if total > 4*MaxSize || total > 1100*uint64(len(body))+1024 {
		return nil, fmt.Errorf("the header says %d bytes uncompressed from %d compressed; too large", total, len(body))
	}
	out := make([]byte, 0, total)
	pos := uint64(0)
	for i := range int(nb) {
		cs := w(3 + i)
		if pos+cs > uint64(len(body)) {
			return nil, fmt.Errorf("block %d of %d is cut short", i+1, nb)
		}
		zr, err := zlib.NewReader(bytes.NewReader(body[pos : pos+cs]))
		if err != nil {
			return nil, fmt.Errorf("block %d is not zlib data: %v", i+1, err)
		}
		blk, err := io.ReadAll(io.LimitReader(zr, int64(bs)+1))
		if err != nil {
			return nil, fmt.Errorf("block %d: %v", i+1, err)
		}
		out = append(out, blk...)
		pos += cs
	}
	if uint64(len(out)) != total {
		return nil, fmt.Errorf("the blocks hold %d bytes, the header says %d", len(out), total)
	}
	return out, nil
}

// values converts raw bytes of a data type into float64 values.
func (r *vtuReader) values(raw []byte, ty string, size int) ([]float64, error) {
	if len(raw)%size != 0 {
		return nil, fmt.Errorf("%d bytes is not a whole number of %s values", len(raw), ty)
	}
	out := make([]float64, len(raw)/size)
	o := r.order
	for i := range out {
		b := raw[i*size:]
		switch ty {
		case "Int8":
			out[i] = float64(int8(b[0]))
		case "UInt8":
			out[i] = float64(b[0])
		case "Int16":
			out[i] = float64(int16(o.Uint16(b)))
		case "UInt16":
			out[i] = float64(o.Uint16(b))
		case "Int32":
			out[i] = float64(int32(o.Uint32(b)))
		case "UInt32":
			out[i] = float64(o.Uint32(b))
		case "Int64":
			out[i] = float64(int64(o.Uint64(b)))
		case "UInt64":
			out[i] = float64(o.Uint64(b))
		case "Float32":
			out[i] = float64(math.Float32frombits(o.Uint32(b)))
		case "Float64":
			out[i] = math.Float64frombits(o.Uint64(b))
		}
	}
	return out, nil
}
