package batch

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"gapbook/convex"
	"gapbook/estimate"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/nonlinear"
	"gapbook/notebook"
	"gapbook/problem"
)

// The numbers printed by `gapbook run --json` for a bound cell are the
// numbers the packages compute when called directly for the same problem.
func TestBoundMatchesDirectCalls(t *testing.T) {
	doc := `{"gapbook":1,"title":"direct","cells":[
	 {"id":"p","kind":"problem","inputs":{"domain":"L-shape","p":3,"f":"1"}},
	 {"id":"m","kind":"mesh","inputs":{"problem":"p","cells":4}},
	 {"id":"s","kind":"solve","inputs":{"mesh":"m"}},
	 {"id":"b","kind":"bound","inputs":{"solution":"s","order":1,"newton":2}}]}`
	path := filepath.Join(t.TempDir(), "d.gapbook")
	if err := os.WriteFile(path, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	var out bytes.Buffer
	if _, ok, err := Run(context.Background(), path, Options{JSON: true, Stdout: &out}); err != nil || !ok {
		t.Fatalf("ok=%v err=%v", ok, err)
	}
	var parsed Output
	if err := json.Unmarshal(out.Bytes(), &parsed); err != nil {
		t.Fatal(err)
	}
	got := parsed.Cells[3].Values

	// The same computation, by hand.
	m, err := mesh.LShape(4)
	if err != nil {
		t.Fatal(err)
	}
	G, _ := convex.Power(3)
	one := func(x, y float64) float64 { return 1 }
	sol, err := nonlinear.Solve(context.Background(), m, problem.Steady(G, one, nil), nonlinear.Options{Tol: 1e-10, MaxIter: 60})
	if err != nil {
		t.Fatal(err)
	}
	s, _ := fem.NewP1(m)
	// The bound cell reads f from the solver's load samples.
	sm, err := estimate.SamplesOf(s, one, sol.LoadDegree, sol.Load)
	if err != nil {
		t.Fatal(err)
	}
	y, err := estimate.Equilibrate(context.Background(), s, G, sol.U, sm.Source(), estimate.EquilibrateOptions{Order: 1, Newton: 2, Degree: sm.Degree})
	if err != nil {
		t.Fatal(err)
	}
	cf, err := estimate.FriedrichsConstant(context.Background(), m, 3)
	if err != nil {
		t.Fatal(err)
	}
	r, err := estimate.Estimate(s, problem.Steady(G, one, nil), sol.U, y, estimate.Options{Degree: 8, Friedrichs: cf, Samples: sm})
	if err != nil {
		t.Fatal(err)
	}
	fine, _ := m.Refine()
	w, err := nonlinear.Solve(context.Background(), fine, problem.Steady(G, one, nil), nonlinear.Options{Tol: 1e-10, MaxIter: 60})
	if err != nil {
		t.Fatal(err)
	}
	sf, _ := fem.NewP1(fine)
	jw, rw := estimate.EnergyRounded(sf, G, one, w.U, 8)
	mu := estimate.Minorant(r.Energy, r.EnergyRound, jw, rw)
	e := estimate.EnergyInterval(r, mu)
	q, err := estimate.FlowRate(e, 3, 1)
	if err != nil {
		t.Fatal(err)
	}
	want := map[string]float64{
		"majorant": r.Majorant.Value, "dual_majorant": r.Dual.Value, "norm_bound": r.Norm.Value,
		"energy_low": e.Lo, "energy_high": e.Hi, "minorant": mu, "flow_low": q.Lo, "flow_high": q.Hi, "theta": r.Theta,
	}
	for name, v := range want {
		g, ok := got[name]
		if !ok || g.Value == nil {
			t.Errorf("%s missing from the JSON", name)
			continue
		}
		if math.Abs(*g.Value-v) > 1e-12*math.Abs(v) {
			t.Errorf("%s: JSON %.17g, direct %.17g", name, *g.Value, v)
		}
		if want := map[bool]notebook.Label{true: notebook.Estimate, false: notebook.Guaranteed}[name == "theta"]; g.Label != want {
			t.Errorf("%s: label %s, want %s", name, g.Label, want)
		}
	}
}
