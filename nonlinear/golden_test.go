package nonlinear

import (
	"context"
	"encoding/json"
	"flag"
	"fmt"
	"math"
	"os"
	"testing"

	"gapbook/mesh"
)

var update = flag.Bool("update", false, "rewrite testdata/golden.json from this platform")

// TestGolden compares solutions with values written natively (go test
// -run Golden -update), so that the WebAssembly build (GOOS=js GOARCH=wasm,
// node) is held to the native results: 1e-12 relative to the largest value.
func TestGolden(t *testing.T) {
	got := map[string][]float64{}
	for _, a := range []float64{1.5, 3} {
		man, err := Manufacture("sin(x + 2*y) + x", power(t, a))
		if err != nil {
			t.Fatal(err)
		}
		f, u, _ := man.Steady(0)
		m, err := mesh.LShape(2)
		m = refined(t, m, err, 1)
		r, err := Solve(context.Background(), m, Problem{G: man.G, F: f, Dirichlet: u}, Options{ResTol: 1e-13, Tol: 1e-14})
		if err != nil {
			t.Fatal(err)
		}
		got[fmt.Sprint("lshape/p=", a)] = append(r.U, r.Energy)
	}
	const file = "testdata/golden.json"
	if *update {
		b, _ := json.MarshalIndent(got, "", " ")
		if err := os.WriteFile(file, b, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	b, err := os.ReadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	var want map[string][]float64
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatal(err)
	}
	for k, w := range want {
		g := got[k]
		if len(g) != len(w) {
			t.Fatalf("%s: %d values, golden has %d", k, len(g), len(w))
		}
		scale := 0.0
		for _, v := range w {
			scale = math.Max(scale, math.Abs(v))
		}
		for i := range w {
			if math.Abs(g[i]-w[i]) > 1e-12*scale {
				t.Errorf("%s[%d] = %.17g, golden %.17g", k, i, g[i], w[i])
			}
		}
	}
	if len(want) != len(got) {
		t.Errorf("golden file has %d cases, test %d", len(want), len(got))
	}
}
