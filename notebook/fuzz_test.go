package notebook

import (
	"os"
	"path/filepath"
	"testing"
)

// FuzzLoad: the loader never panics, and whatever it accepts saves and
// loads back to the same bytes. The seed corpus is in
// testdata/fuzz/FuzzLoad plus the examples; `make fuzz`-style long runs
// belong outside the test suite.
func FuzzLoad(f *testing.F) {
	files, _ := filepath.Glob("../examples/*.gapbook")
	for _, p := range files {
		if b, err := os.ReadFile(p); err == nil {
			f.Add(b)
		}
	}
	f.Add([]byte(`{"gapbook":1,"cells":[{"id":"a","kind":"scale","inputs":{"a":2}},{"id":"b","kind":"plot","inputs":{"from":"a"}}]}`))
	f.Fuzz(func(t *testing.T, data []byte) {
		nb, _ := Load(data)
		if nb == nil {
			return
		}
		first, err := Save(nb)
		if err != nil {
			t.Fatalf("loaded but cannot save: %v", err)
		}
		nb2, _ := Load(first)
		if nb2 == nil {
			t.Fatalf("saved file does not load:\n%s", first)
		}
		second, _ := Save(nb2)
		if string(first) != string(second) {
			t.Fatalf("not stable:\n%s\n---\n%s", first, second)
		}
		_ = Report(nb, nil)
	})
}
