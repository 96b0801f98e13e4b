package estimate

import (
	"testing"

	"gapbook/convex"
	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// The Dunavant rules of degrees 3 and 7 have a negative weight (Dunavant
// 1985, tables for 4 and 13 points), which the residual bounds cannot use:
// the bounds move them to the next positive rule and say so in Degree.
func TestNegativeWeightRulesAvoided(t *testing.T) {
	for _, d := range []int{3, 7} {
		r, err := fem.Dunavant(d)
		if err != nil {
			t.Fatal(err)
		}
		neg := false
		for _, w := range r.Weights {
			neg = neg || w < 0
		}
		if !neg {
			t.Fatalf("Dunavant degree %d has no negative weight; the mapping is no longer needed", d)
		}
	}
	m, err := mesh.Rectangle(0, 1, 0, 1, 2, 2)
	if err != nil {
		t.Fatal(err)
	}
	s, err := fem.NewP1(m)
	if err != nil {
		t.Fatal(err)
	}
	G, _ := convex.Power(3)
	v := make([]float64, s.NumNodes())
	y, err := NewAveraged(s, G, v)
	if err != nil {
		t.Fatal(err)
	}
	p := problem.Steady(G, func(x, y float64) float64 { return 1 }, nil)
	for ask, want := range map[int]int{0: DefaultDegree, 3: 4, 5: 5, 7: 8} {
		tm, err := EvaluateTerms(s, p, v, y, ask, nil)
		if err != nil {
			t.Fatal(err)
		}
		if tm.Degree != want {
			t.Errorf("degree %d asked: used %d, want %d", ask, tm.Degree, want)
		}
	}
	if _, ok := convex.IsPower(G); !ok {
		t.Error("convex.IsPower does not recognise Power(3)")
	}
	if q, _ := convex.Quadratic(1); func() bool { _, ok := convex.IsPower(q); return ok }() {
		t.Error("convex.IsPower claims a quadratic potential")
	}
}
