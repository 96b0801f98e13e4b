package kinds

import (
	"context"
	"os"
	"testing"

	"gapbook/notebook"
)

// The example studies with exact solutions keep their promise: in every
// row of the exponent table and in the evolution check, the guaranteed
// bound lies above the true error (efficiency ≥ 1), and the flow-rate
// intervals of the coolant sweep are ordered as its note says.
func TestExamplesBoundTheirErrors(t *testing.T) {
	run := func(name string) *notebook.Evaluation {
		data, err := os.ReadFile("../../examples/" + name)
		if err != nil {
			t.Fatal(err)
		}
		nb, err := notebook.Load(data)
		if err != nil {
			t.Fatal(err)
		}
		ev, err := notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
		if err != nil {
			t.Fatal(err)
		}
		return ev
	}
	ev := run("exponent-comparison.gapbook")
	tb, _ := okCell(t, ev, "exponents").Table("sweep")
	maj, mu, eff := tb.Column("bounds.majorant"), tb.Column("bounds.primal_error"), tb.Column("bounds.efficiency")
	if len(eff) != 6 {
		t.Fatalf("%d rows", len(eff))
	}
	for i := range eff {
		if !(maj[i] >= mu[i]) || !(eff[i] >= 1) {
			t.Errorf("α = %g: majorant %g, μ(v) = %g", tb.Rows[i][0], maj[i], mu[i])
		}
	}
	ev = run("heat-pulse.gapbook")
	if e := scalar(t, okCell(t, ev, "kpulse"), "efficiency").Value; !(e >= 1) {
		t.Errorf("evolution efficiency %g < 1", e)
	}
	ev = run("coolant-duct.gapbook")
	tb, _ = okCell(t, ev, "index").Table("sweep")
	lo, hi := tb.Column("certify.flow_low"), tb.Column("certify.flow_high")
	for i := 1; i < len(lo); i++ {
		if !(hi[i-1] < lo[i]) {
			t.Errorf("flow intervals [%g, %g] and [%g, %g] overlap or are out of order", lo[i-1], hi[i-1], lo[i], hi[i])
		}
	}
	// The Newtonian duct: the modelling error the note speaks of is there
	// (the Newtonian field's guaranteed distance from the p = 1.7 solution
	// is far above that problem's own discretisation error bound), and its
	// interval is ordered.
	ev = run("newtonian-duct.gapbook")
	d, own := okCell(t, ev, "distance"), okCell(t, ev, "own")
	dl, dh, oh := scalar(t, d, "minorant").Value, scalar(t, d, "majorant").Value, scalar(t, own, "majorant").Value
	if !(0 < dl && dl <= dh) || !(dl > 10*oh) {
		t.Errorf("Newtonian field in the p = 1.7 problem: error in [%g, %g]; the p = 1.7 solution's own bound %g", dl, dh, oh)
	}
}
