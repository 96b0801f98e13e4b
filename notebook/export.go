package notebook

import (
	"bufio"
	"encoding/csv"
	"fmt"
	"io"
	"strconv"
)

// WriteCSV writes a table as CSV (RFC 4180): a header row of column names
// (with "label" first when the table has row labels), then one row per
// table row, numbers in Go's shortest exact form, NaN and ±Inf as words.
func WriteCSV(w io.Writer, t Table) error {
	cw := csv.NewWriter(w)
	var head []string
	if len(t.Labels) > 0 {
		head = append(head, "label")
	}
	for _, c := range t.Columns {
		head = append(head, c.Name)
	}
	if err := cw.Write(head); err != nil {
		return err
	}
	for i, row := range t.Rows {
		var rec []string
		if len(t.Labels) > 0 {
			l := ""
			if i < len(t.Labels) {
				l = t.Labels[i]
			}
			rec = append(rec, l)
		}
		for _, v := range row {
			rec = append(rec, strconv.FormatFloat(v, 'g', -1, 64))
		}
		if err := cw.Write(rec); err != nil {
			return err
		}
	}
	cw.Flush()
	return cw.Error()
}

// WriteVTU writes a field as a VTK XML unstructured grid (.vtu, ASCII):
// points with z = 0, triangles (VTK cell type 5), and the values as point
// data (nodal) or cell data (per triangle), named after the field.
func WriteVTU(w io.Writer, f Field) error {
	if ps := (&Results{Fields: []Field{f}}).Check(); len(ps) > 0 {
		return fmt.Errorf("field %s: %s", f.Name, ps[0])
	}
	bw := bufio.NewWriter(w)
	name := xmlAttr(f.Name)
	if name == "" {
		name = "values"
	}
	fmt.Fprintf(bw, "<?xml version=\"1.0\"?>\n<VTKFile type=\"UnstructuredGrid\" version=\"1.0\" byte_order=\"LittleEndian\">\n<UnstructuredGrid>\n")
	fmt.Fprintf(bw, "<Piece NumberOfPoints=\"%d\" NumberOfCells=\"%d\">\n<Points>\n<DataArray type=\"Float64\" NumberOfComponents=\"3\" format=\"ascii\">\n", len(f.X), len(f.Tri))
	for i := range f.X {
		fmt.Fprintf(bw, "%s %s 0\n", vtkNum(f.X[i]), vtkNum(f.Y[i]))
	}
	fmt.Fprintf(bw, "</DataArray>\n</Points>\n<Cells>\n<DataArray type=\"Int32\" Name=\"connectivity\" format=\"ascii\">\n")
	for _, t := range f.Tri {
		fmt.Fprintf(bw, "%d %d %d\n", t[0], t[1], t[2])
	}
	fmt.Fprintf(bw, "</DataArray>\n<DataArray type=\"Int32\" Name=\"offsets\" format=\"ascii\">\n")
	for i := range f.Tri {
		fmt.Fprintf(bw, "%d\n", 3*(i+1))
	}
	fmt.Fprintf(bw, "</DataArray>\n<DataArray type=\"UInt8\" Name=\"types\" format=\"ascii\">\n")
	for range f.Tri {
		bw.WriteString("5\n")
	}
	fmt.Fprintf(bw, "</DataArray>\n</Cells>\n")
	tag := "PointData"
	if f.PerCell {
		tag = "CellData"
	}
	fmt.Fprintf(bw, "<%s Scalars=\"%s\">\n<DataArray type=\"Float64\" Name=\"%s\" format=\"ascii\">\n", tag, name, name)
	for _, v := range f.Values {
		bw.WriteString(vtkNum(v) + "\n")
	}
	fmt.Fprintf(bw, "</DataArray>\n</%s>\n</Piece>\n</UnstructuredGrid>\n</VTKFile>\n", tag)
	return bw.Flush()
}

// vtkNum writes v for VTK readers, which understand nan and inf.
func vtkNum(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

func xmlAttr(s string) string { return esc(s) }
