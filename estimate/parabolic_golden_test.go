package estimate

import (
	"encoding/json"
	"flag"
	"math"
	"os"
	"testing"
)

var updateParabolic = flag.Bool("update", false, "rewrite testdata/parabolic_golden.json from this platform")

// TestParabolicGolden holds the WebAssembly build (GOOS=js GOARCH=wasm,
// node) to the native results of the evolution and its bounds: final
// values and every bound, 1e-12 relative to the largest value of each case
// (the file is written natively with go test -run ParabolicGolden -update).
func TestParabolicGolden(t *testing.T) {
	got := map[string][]float64{}
	for _, c := range []parCase{parCases[0], parCases[3], parCases[4]} {
		r, ev, _ := parRun(t, c, ParabolicOptions{InTime: LinearInTime, Equilibrate: EquilibrateOptions{Order: 1}})
		got[c.name] = append(append([]float64(nil), ev.V...), r.A, r.P, r.RTilde, r.RQ,
			r.Split.Value, r.Modulus.Value, r.ConstantFree.Value, r.Exact.Total())
	}
	r, s, _, vT := barenblattRun(t, 1, 3, 40, 4, 1, 1.5)
	got["barenblatt/1d/p=3"] = append(append([]float64(nil), vT...), p1Mass(s, vT), r.Split.Value, r.Exact.Total())
	const file = "testdata/parabolic_golden.json"
	if *updateParabolic {
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
