package estimate

import (
	"flag"
	"testing"

	"gapbook/internal/golden"
)

var updateEvolution = flag.Bool("update", false, "rewrite testdata/evolution_golden.json from this platform")

// TestEvolutionGolden holds the WebAssembly build (GOOS=js GOARCH=wasm,
// node) to the native results of the evolution and its bounds: final
// values and every bound, 1e-12 relative to the largest value of each case
// (the file is written natively with go test -run EvolutionGolden -update).
func TestEvolutionGolden(t *testing.T) {
	got := map[string][]float64{}
	for _, c := range []parCase{parCases[0], parCases[3], parCases[4]} {
		r, ev, _ := parRun(t, c, EvolutionOptions{InTime: LinearInTime, Equilibrate: EquilibrateOptions{Order: 1}})
		got[c.name] = append(append([]float64(nil), ev.V...), r.A, r.P, r.RTilde, r.RQ,
			r.Split.Value, r.Modulus.Value, r.ConstantFree.Value, r.Exact.Total())
	}
	r, s, _, vT := barenblattRun(t, 1, 3, 40, 4, 1, 1.5)
	got["barenblatt/1d/p=3"] = append(append([]float64(nil), vT...), p1Mass(s, vT), r.Split.Value, r.Exact.Total())
	golden.Check(t, "testdata/evolution_golden.json", got, *updateEvolution, 1e-12)
}
