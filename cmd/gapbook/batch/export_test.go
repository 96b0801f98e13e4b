package batch

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"gapbook/notebook"
)

// Run with Export writes one file per table, plot and field of every
// ok cell, and the CSV holds the same numbers as the results.
func TestRunExport(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "e.gapbook")
	doc := `{"gapbook":1,"title":"export","cells":[
	 {"id":"p","kind":"problem","inputs":{"domain":"rectangle","p":2}},
	 {"id":"m","kind":"mesh","inputs":{"problem":"p","cells":4}},
	 {"id":"s","kind":"solve","inputs":{"mesh":"m"}},
	 {"id":"chart","kind":"plot","inputs":{"from":"s","x":"step","y":["energy"]}},
	 {"id":"bad","kind":"problem","inputs":{"f":"sn"}}]}`
	if err := os.WriteFile(path, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	var log bytes.Buffer
	_, ok, err := Run(context.Background(), path, Options{Export: out, Stderr: &log})
	if err != nil || ok {
		t.Fatalf("ok=%v (want false: cell bad fails) err=%v", ok, err)
	}
	for _, name := range []string{"p-problem.csv", "m-mesh.vtu", "s-newton.csv", "s-v.vtu", "chart-plot.svg"} {
		b, err := os.ReadFile(filepath.Join(out, name))
		if err != nil {
			t.Errorf("%s: %v", name, err)
			continue
		}
		switch filepath.Ext(name) {
		case ".vtu":
			if !bytes.Contains(b, []byte(`<VTKFile type="UnstructuredGrid"`)) {
				t.Errorf("%s is not a VTK file", name)
			}
		case ".svg":
			if !bytes.Contains(b, []byte("<svg")) {
				t.Errorf("%s is not an SVG", name)
			}
		}
	}
	if !strings.Contains(log.String(), "files written to") {
		t.Errorf("no export line in %q", log.String())
	}
	// The energy column of the CSV against the solve cell's last step.
	f, _ := os.Open(filepath.Join(out, "s-newton.csv"))
	defer f.Close()
	recs, err := csv.NewReader(f).ReadAll()
	if err != nil || len(recs) < 2 || recs[0][4] != "energy" {
		t.Fatalf("csv %v %v", recs, err)
	}
	last, _ := strconv.ParseFloat(recs[len(recs)-1][4], 64)
	nb, err := notebook.Load([]byte(`{"gapbook":2,"cells":[
	 {"id":"p","kind":"problem","inputs":{"domain":"rectangle","p":2}},
	 {"id":"m","kind":"mesh","inputs":{"problem":"p","cells":4}},
	 {"id":"s","kind":"solve","inputs":{"mesh":"m"}}]}`))
	if err != nil {
		t.Fatal(err)
	}
	ev, err := notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	want, ok := ev.Cell("s").Results.Scalar("energy")
	if !ok || last != want.Value {
		t.Errorf("CSV energy %v, result %v", last, want.Value)
	}
}

func TestFileWord(t *testing.T) {
	for in, want := range map[string]string{"../../etc": "______etc", "a.b": "a_b", "": "result", "ok-1_x": "ok-1_x", "η_T": "__T"} {
		if got := fileWord(in); got != want {
			t.Errorf("fileWord(%q) = %q, want %q", in, got, want)
		}
	}
}

// With Fields the JSON carries every cell's tables and fields: the solution
// on the mesh nodes, and the indicators per triangle, which add up to the
// majorant (docs/math.md §4.7).
func TestRunJSONFields(t *testing.T) {
	var out bytes.Buffer
	if _, ok, err := Run(context.Background(), "../../../examples/default.gapbook", Options{JSON: true, Fields: true, Stdout: &out}); err != nil || !ok {
		t.Fatalf("ok=%v err=%v", ok, err)
	}
	var parsed struct {
		Cells []struct {
			ID     string
			Values map[string]Value
			Tables []notebook.Table
			Fields []notebook.Field
		}
	}
	if err := json.Unmarshal(out.Bytes(), &parsed); err != nil {
		t.Fatal(err)
	}
	var sum, majorant float64
	found := 0
	for _, c := range parsed.Cells {
		for _, f := range c.Fields {
			want := len(f.X)
			if f.PerCell {
				want = len(f.Tri)
			}
			if len(f.Values) != want || len(f.Y) != len(f.X) {
				t.Errorf("cell %s field %s: %d values for %d nodes, %d triangles", c.ID, f.Name, len(f.Values), len(f.X), len(f.Tri))
			}
			if f.Name == "indicators" {
				for _, v := range f.Values {
					sum += v
				}
				majorant = *c.Values["majorant"].Value
				found++
			}
		}
		if c.ID == "solve" && (len(c.Tables) == 0 || c.Tables[0].Name != "newton") {
			t.Errorf("solve cell without its Newton table in the JSON")
		}
	}
	if found != 1 || math.Abs(sum-majorant) > 1e-9*majorant {
		t.Errorf("indicators add up to %.12g, majorant %.12g", sum, majorant)
	}
}
