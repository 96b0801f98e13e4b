// Package golden holds test results to values written natively, so that
// the WebAssembly build (GOOS=js GOARCH=wasm under node) is checked against
// the native one. It is used by tests only.
package golden

import (
	"encoding/json"
	"math"
	"os"
	"testing"
)

// Check compares got with the cases in file, each value to rel times the
// largest magnitude of its case. With update it first rewrites file from
// got (run natively: go test -run <Test> -update).
func Check(t testing.TB, file string, got map[string][]float64, update bool, rel float64) {
	t.Helper()
	if update {
		b, err := json.MarshalIndent(got, "", " ")
		if err == nil {
			err = os.WriteFile(file, b, 0o644)
		}
		if err != nil {
			t.Fatal(err)
		}
	}
	b, err := os.ReadFile(file)
	if err != nil {
		t.Fatal(err)
	}
	var want map[string][]float64
	if err := json.Unmarshal(b, &want); err != nil {
		t.Fatalf("%s: %v", file, err)
	}
	for k, w := range want {
		g, ok := got[k]
		if !ok {
			t.Errorf("%s: case %s is not computed any more", file, k)
			continue
		}
		if len(g) != len(w) {
			t.Errorf("%s: %d values, golden has %d", k, len(g), len(w))
			continue
		}
		scale := 0.0
		for _, v := range w {
			scale = math.Max(scale, math.Abs(v))
		}
		for i := range w {
			if math.Abs(g[i]-w[i]) > rel*scale {
				t.Errorf("%s[%d] = %.17g, golden %.17g", k, i, g[i], w[i])
			}
		}
	}
	if len(want) != len(got) {
		t.Errorf("golden file has %d cases, test %d", len(want), len(got))
	}
}
