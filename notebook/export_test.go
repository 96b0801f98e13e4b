package notebook

import (
	"bytes"
	"encoding/csv"
	"encoding/xml"
	"io"
	"math"
	"strconv"
	"strings"
	"testing"
)

func TestCSVParsesBack(t *testing.T) {
	tab := Table{Name: "t", Columns: []Column{{Name: "h"}, {Name: `err, "L2"`}}, Labels: []string{"p = 1.5", "line\nbreak"},
		Rows: [][]float64{{0.125, 1.0 / 3}, {math.NaN(), math.Inf(-1)}}}
	var b bytes.Buffer
	if err := WriteCSV(&b, tab); err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(&b).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if len(recs) != 3 || recs[0][2] != `err, "L2"` || recs[2][0] != "line\nbreak" {
		t.Fatalf("records %q", recs)
	}
	for i, row := range tab.Rows {
		for j, v := range row {
			got, err := strconv.ParseFloat(recs[i+1][j+1], 64)
			if err != nil || !(got == v || math.IsNaN(got) && math.IsNaN(v)) {
				t.Errorf("cell %d,%d: %q, want %v", i, j, recs[i+1][j+1], v)
			}
		}
	}
}

func TestVTUWellFormed(t *testing.T) {
	// Two triangles on the unit square.
	f := Field{Name: `u<&">`, X: []float64{0, 1, 1, 0}, Y: []float64{0, 0, 1, 1}, Tri: [][3]int32{{0, 1, 2}, {0, 2, 3}}, Values: []float64{0, 1, 2, 1}}
	for _, perCell := range []bool{false, true} {
		g := f
		g.PerCell = perCell
		if perCell {
			g.Values = []float64{0.5, 1.5}
		}
		var b bytes.Buffer
		if err := WriteVTU(&b, g); err != nil {
			t.Fatal(err)
		}
		counts := map[string]int{}
		var nPoints, nCells string
		d := xml.NewDecoder(&b)
		var stack []string
		for {
			tok, err := d.Token()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("not well-formed XML: %v", err)
			}
			switch x := tok.(type) {
			case xml.StartElement:
				name := x.Name.Local
				for _, a := range x.Attr {
					if a.Name.Local == "Name" {
						name = a.Value
					}
					if a.Name.Local == "NumberOfPoints" {
						nPoints = a.Value
					}
					if a.Name.Local == "NumberOfCells" {
						nCells = a.Value
					}
				}
				if x.Name.Local == "DataArray" && len(stack) > 0 && (stack[len(stack)-1] == "Points" || stack[len(stack)-1] == "PointData" || stack[len(stack)-1] == "CellData") {
					name = stack[len(stack)-1] + "/" + name
				}
				stack = append(stack, name)
			case xml.EndElement:
				stack = stack[:len(stack)-1]
			case xml.CharData:
				if len(stack) > 0 {
					counts[stack[len(stack)-1]] += len(strings.Fields(string(x)))
				}
			}
		}
		want := map[string]int{"Points/DataArray": 12, "connectivity": 6, "offsets": 2, "types": 2}
		if perCell {
			want[`CellData/u<&">`] = 2
		} else {
			want[`PointData/u<&">`] = 4
		}
		for k, n := range want {
			if counts[k] != n {
				t.Errorf("percell=%v: %s has %d numbers, want %d (%v)", perCell, k, counts[k], n, counts)
			}
		}
		if nPoints != "4" || nCells != "2" {
			t.Errorf("NumberOfPoints=%s NumberOfCells=%s", nPoints, nCells)
		}
	}
	bad := f
	bad.Tri = [][3]int32{{0, 1, 9}}
	if err := WriteVTU(io.Discard, bad); err == nil || !strings.Contains(err.Error(), "node 9 is out of range 0..3") {
		t.Errorf("bad triangle: %v", err)
	}
}

func TestSVGsAreXML(t *testing.T) {
	p := Plot{Name: "p", Title: "<t>", Series: []Series{{Name: "a&b", X: []float64{1, 2, 3}, Y: []float64{1, math.NaN(), 4}}}, LogY: true}
	f := Field{Name: "u", Title: "<u>", X: []float64{0, 1, 0}, Y: []float64{0, 0, 1}, Tri: [][3]int32{{0, 1, 2}}, Values: []float64{0, 1, 2}}
	for _, s := range []string{PlotSVG(p), FieldSVG(f), PlotSVG(Plot{})} {
		d := xml.NewDecoder(strings.NewReader(s))
		for {
			_, err := d.Token()
			if err == io.EOF {
				break
			}
			if err != nil {
				t.Fatalf("%v in %s", err, s)
			}
		}
	}
}
