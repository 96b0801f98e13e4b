package notebook

import (
	"math"
	"strings"
	"testing"
)

func TestDigestTwelveDigits(t *testing.T) {
	base := &Results{Scalars: []Scalar{{Name: "J", Value: 1.0 / 3, Label: Guaranteed}}}
	d := base.Digest()
	tests := []struct {
		name string
		v    float64
		same bool
	}{
		{"last bits", 1.0/3 + 1e-16, true},
		{"13th digit", 0.33333333333334, true},
		{"12th digit", 0.333333333334, false},
	}
	for _, tt := range tests {
		r := &Results{Scalars: []Scalar{{Name: "J", Value: tt.v, Label: Guaranteed}}}
		if (r.Digest() == d) != tt.same {
			t.Errorf("%s: same digest = %v, want %v", tt.name, r.Digest() == d, tt.same)
		}
	}
	// Names, labels and shapes count; units and titles do not.
	variants := []*Results{
		{Scalars: []Scalar{{Name: "K", Value: 1.0 / 3, Label: Guaranteed}}},
		{Scalars: []Scalar{{Name: "J", Value: 1.0 / 3, Label: Estimate}}},
	}
	for i, v := range variants {
		if v.Digest() == d {
			t.Errorf("variant %d has the same digest", i)
		}
	}
	unit := &Results{Scalars: []Scalar{{Name: "J", Value: 1.0 / 3, Label: Guaranteed, Unit: "W"}}}
	if unit.Digest() != d {
		t.Error("a unit must not change the digest")
	}
	// The digest is SHA-256 of a fixed encoding: pin it (value computed by
	// this code once; it guards against accidental changes of the format).
	const pinned = "gapbook-results-1\nscalar\n\"J\"\n\"guaranteed\"\n3.33333333333e-01\n"
	if string(base.canonical()) != pinned {
		t.Errorf("canonical form %q", base.canonical())
	}
	if (&Results{Scalars: []Scalar{{Name: "z", Value: math.Copysign(0, -1), Label: Estimate}}}).Digest() != (&Results{Scalars: []Scalar{{Name: "z", Value: 0, Label: Estimate}}}).Digest() {
		t.Error("-0 and 0 must digest alike")
	}
}

func TestCompareNamesDifferences(t *testing.T) {
	a := &Results{Scalars: []Scalar{{Name: "J", Value: 1, Label: Guaranteed}, {Name: "K", Value: 2, Label: Estimate}},
		Tables: []Table{{Name: "conv", Columns: []Column{{Name: "h"}}, Rows: [][]float64{{1}, {0.5}}}}}
	b := &Results{Scalars: []Scalar{{Name: "J", Value: 1.1, Label: Guaranteed}, {Name: "L", Value: 2, Label: Estimate}},
		Tables: []Table{{Name: "conv", Columns: []Column{{Name: "h"}}, Rows: [][]float64{{1}, {0.25}}}}}
	got := strings.Join(Compare(a, b, 0), "|")
	want := "scalar J: saved guaranteed 1.00000000000e+00, now guaranteed 1.10000000000e+00|scalar K: missing now|scalar L: new, not in the saved results|table conv: 1 value differs"
	if got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
	if d := Compare(a, a, 0); len(d) != 0 {
		t.Errorf("equal results differ: %v", d)
	}
}
