package nonlinear

import (
	"context"
	"flag"
	"fmt"
	"testing"

	"gapbook/internal/golden"
	"gapbook/mesh"
	"gapbook/problem"
)

var update = flag.Bool("update", false, "rewrite testdata/golden.json from this platform")

// TestGolden compares solutions with values written natively (go test
// -run Golden -update), so that the WebAssembly build (GOOS=js GOARCH=wasm,
// node) is held to the native results: 1e-12 relative to the largest value.
func TestGolden(t *testing.T) {
	got := map[string][]float64{}
	for _, a := range []float64{1.5, 3} {
		man, err := problem.Manufacture("sin(x + 2*y) + x", power(t, a))
		if err != nil {
			t.Fatal(err)
		}
		f, u, _ := man.At(0)
		m, err := mesh.LShape(2)
		m = refined(t, m, err, 1)
		r, err := Solve(context.Background(), m, problem.Steady(man.G, f, u), Options{ResTol: 1e-13, Tol: 1e-14})
		if err != nil {
			t.Fatal(err)
		}
		got[fmt.Sprint("lshape/p=", a)] = append(r.U, r.Energy)
	}
	golden.Check(t, "testdata/golden.json", got, *update, 1e-12)
}
