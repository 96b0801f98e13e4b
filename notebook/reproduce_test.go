package notebook

import (
	"math"
	"strings"
	"testing"
)

func reproSample() *Results {
	return &Results{
		Scalars: []Scalar{{Name: "majorant", Value: 7.37988e-3, Label: Guaranteed}, {Name: "residual_term", Value: 1.06e-15, Label: Guaranteed}},
		Tables:  []Table{{Name: "t", Columns: []Column{{Name: "h"}, {Name: "e"}}, Rows: [][]float64{{0.5, 0.25}, {0.25, 0.0625}}}},
		Fields:  []Field{{Name: "eta", X: []float64{0, 1, 0}, Y: []float64{0, 0, 1}, Tri: [][3]int32{{0, 1, 2}}, Values: []float64{3e-4}, PerCell: true}},
	}
}

// Round-off agreement: what counts as reproduced when digests differ. The
// cases below are built by hand; each can fail.
func TestRoundOff(t *testing.T) {
	cases := []struct {
		name   string
		change func(r *Results)
		ok     bool
	}{
		{"identical", func(r *Results) {}, true},
		{"last bits of a value", func(r *Results) { r.Scalars[0].Value *= 1 + 3e-13 }, true},
		{"round-off scalar next to larger ones", func(r *Results) { r.Scalars[1].Value = 1.09e-15 }, true},
		{"a real change", func(r *Results) { r.Scalars[0].Value *= 1 + 1e-6 }, false},
		{"a table entry", func(r *Results) { r.Tables[0].Rows[1][1] = 0.0626 }, false},
		{"a field value", func(r *Results) { r.Fields[0].Values[0] = 3.1e-4 }, false},
		{"a label", func(r *Results) { r.Scalars[0].Label = Estimate }, false},
		{"a name", func(r *Results) { r.Scalars[1].Name = "theta" }, false},
		{"NaN appears", func(r *Results) { r.Tables[0].Rows[0][0] = math.NaN() }, false},
		{"a row more", func(r *Results) { r.Tables[0].Rows = append(r.Tables[0].Rows, []float64{1, 2}) }, false},
	}
	for _, c := range cases {
		b := reproSample()
		c.change(b)
		ok, worst := RoundOff(reproSample(), b)
		if ok != c.ok {
			t.Errorf("%s: RoundOff = %v (worst %.3g), want %v", c.name, ok, worst, c.ok)
		}
	}
}

// A saved result set that differs from the recomputed one in round-off is
// reported as reproduced, with a note that says how closely.
func TestCompareSavedRoundOff(t *testing.T) {
	saved := reproSample()
	saved.Scalars[1].Value = 1.2e-15
	o := &Outcome{Hash: "h", Results: reproSample()}
	o.Digest = o.Results.Digest()
	if saved.Digest() == o.Digest {
		t.Fatal("test set-up: the digests should differ")
	}
	o.compareSaved(&Saved{Hash: "h", Digest: saved.Digest(), Results: saved})
	if o.Reproduced != "yes" || len(o.Differences) != 1 || !strings.Contains(o.Differences[0], "round-off") {
		t.Fatalf("Reproduced %q, Differences %q", o.Reproduced, o.Differences)
	}
	saved.Scalars[0].Value = 7.4e-3
	o2 := &Outcome{Hash: "h", Results: reproSample(), Digest: o.Digest}
	o2.compareSaved(&Saved{Hash: "h", Digest: saved.Digest(), Results: saved})
	if o2.Reproduced != "no" || len(o2.Differences) == 0 || !strings.Contains(strings.Join(o2.Differences, " "), "majorant") {
		t.Fatalf("a real change: Reproduced %q, Differences %q", o2.Reproduced, o2.Differences)
	}
}
