package meshfile

import (
	"strings"
)

// readVTK reads a legacy ASCII .vtk unstructured grid (versions 2 to 5.1).
func readVTK(data []byte) (*File, error) {
	t := newTokens(data)
	t.skipSpace()
	head := t.restOfLine() // # vtk DataFile Version x.y
	v5 := strings.HasSuffix(strings.TrimSpace(head), "5.1")
	t.pos++
	t.line++
	t.restOfLine() // the title
	switch enc := t.word(); enc {
	case "ASCII":
	case "BINARY":
		return nil, t.errorf("binary legacy .vtk files are not read; save as ASCII or as .vtu")
	default:
		return nil, t.errorf("expected ASCII, found %q", clip(enc))
	}
	if err := t.expect("DATASET"); err != nil {
		return nil, err
	}
	if ds := t.word(); ds != "UNSTRUCTURED_GRID" {
		return nil, t.errorf("dataset %q; want UNSTRUCTURED_GRID", clip(ds))
	}
	f := &File{Format: "vtk", Data: map[string][]float64{}}
	var conn, offs, types []float64
	// values reads n numbers.
	values := func(n int, what string) ([]float64, error) {
		// Grown as read: a forged count cannot make us allocate.
		out := make([]float64, 0, min(n, (len(t.b)-t.pos)/2+1))
		for range n {
			v, err := t.float(what)
			if err != nil {
				return nil, err
			}
			out = append(out, v)
		}
		return out, nil
	}
	section := "" // POINT_DATA or CELL_DATA
	count := 0
	for {
		w := t.word()
		if w == "" {
			break
		}
		switch w {
		case "POINTS":
			n, err := t.count("number of points", 6)
			if err != nil {
				return nil, err
			}
			t.word() // the data type
			xyz, err := values(3*n, "a coordinate")
			if err != nil {
				return nil, err
			}
			f.Points = make([][3]float64, n)
			for i := range f.Points {
				copy(f.Points[i][:], xyz[3*i:])
			}
		case "CELLS":
			a, err := t.count("number of cells", 2)
			if err != nil {
				return nil, err
			}
			b, err := t.count("size of the cell list", 2)
			if err != nil {
				return nil, err
			}
			if v5 {
				// OFFSETS type a numbers, CONNECTIVITY type b numbers.
				if err := t.expect("OFFSETS"); err != nil {
					return nil, err
				}
				t.word()
				o, err := values(a, "an offset")
				if err != nil {
					return nil, err
				}
				if err := t.expect("CONNECTIVITY"); err != nil {
					return nil, err
				}
				t.word()
				if conn, err = values(b, "a node index"); err != nil {
					return nil, err
				}
				if len(o) > 0 {
					offs = o[1:]
				}
			} else {
				list, err := values(b, "the cell list")
				if err != nil {
					return nil, err
				}
				pos := 0
				for range a {
					if pos >= len(list) {
						return nil, t.errorf("the cell list is shorter than its %d cells", a)
					}
					k := int(list[pos])
					if k < 0 || pos+1+k > len(list) {
						return nil, t.errorf("a cell of %d nodes runs past the end of the cell list", k)
					}
					conn = append(conn, list[pos+1:pos+1+k]...)
					offs = append(offs, float64(len(conn)))
					pos += 1 + k
				}
			}
		case "CELL_TYPES":
			n, err := t.count("number of cell types", 2)
			if err != nil {
				return nil, err
			}
			if types, err = values(n, "a cell type"); err != nil {
				return nil, err
			}
		case "POINT_DATA", "CELL_DATA":
			n, err := t.count("number of values", 2)
			if err != nil {
				return nil, err
			}
			section, count = w, n
		case "SCALARS":
			name := t.word()
			t.word() // data type
			t.skipSpace()
			comps := 1
			if rest := t.restOfLine(); rest != "" {
				if c, err := newTokens([]byte(rest)).int("number of components", 1, 16); err == nil {
					comps = c
				}
			}
			if err := t.expect("LOOKUP_TABLE"); err != nil {
				return nil, err
			}
			t.word()
			vals, err := values(comps*count, "a value of "+name)
			if err != nil {
				return nil, err
			}
			if section == "POINT_DATA" && comps == 1 {
				f.Data[name] = vals
			}
		case "VECTORS", "NORMALS":
			t.word()
			t.word()
			if _, err := values(3*count, "a vector component"); err != nil {
				return nil, err
			}
		case "FIELD":
			t.word()
			k, err := t.count("number of arrays", 8)
			if err != nil {
				return nil, err
			}
			for range k {
				name := t.word()
				comps, err := t.int("number of components", 1, 64)
				if err != nil {
					return nil, err
				}
				tuples, err := t.count("number of tuples", 2)
				if err != nil {
					return nil, err
				}
				t.word()
				vals, err := values(comps*tuples, "a value of "+name)
				if err != nil {
					return nil, err
				}
				if section == "POINT_DATA" && comps == 1 {
					f.Data[name] = vals
				}
			}
		case "METADATA":
			// Skip to the blank line that ends it.
			for t.pos < len(t.b) {
				t.restOfLine()
				t.pos++
				t.line++
				if t.pos < len(t.b) && (t.b[t.pos] == '\n' || t.b[t.pos] == '\r') {
					break
				}
			}
		default:
			return nil, t.errorf("unexpected %q", clip(w))
		}
	}
	if types == nil || (conn == nil && len(types) > 0) {
		return nil, t.errorf("the file has no CELLS and CELL_TYPES")
	}
	if len(types) != len(offs) {
		return nil, t.errorf("%d cells but %d cell types", len(offs), len(types))
	}
	if err := addCells(f, conn, offs, types); err != nil {
		return nil, err
	}
	return f, nil
}
