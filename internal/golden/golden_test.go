package golden

import (
	"path/filepath"
	"testing"
)

// recorder counts failures instead of failing the test.
type recorder struct {
	testing.TB
	errors int
}

func (r *recorder) Errorf(string, ...any) { r.errors++ }
func (r *recorder) Helper()               {}

// A value moved by more than the tolerance is caught; one within it is not.
func TestCheck(t *testing.T) {
	file := filepath.Join(t.TempDir(), "g.json")
	Check(t, file, map[string][]float64{"a": {1, -2, 3e-9}}, true, 1e-12)
	for _, c := range []struct {
		got  []float64
		fail bool
	}{
		{[]float64{1, -2, 3e-9}, false},
		{[]float64{1 + 1e-13, -2, 3e-9}, false},
		{[]float64{1, -2 - 1e-11, 3e-9}, true},
		{[]float64{1, -2}, true},
	} {
		r := &recorder{TB: t}
		Check(r, file, map[string][]float64{"a": c.got}, false, 1e-12)
		if (r.errors > 0) != c.fail {
			t.Errorf("%v: %d errors, want failure %v", c.got, r.errors, c.fail)
		}
	}
}
