package texmath

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// FuzzMathML checks that any source gives well-formed, inert markup
// without panicking. The seed corpus is testdata/seeds.txt, one source a
// line; `go test -fuzz FuzzMathML` explores further.
func FuzzMathML(f *testing.F) {
	data, err := os.ReadFile(filepath.Join("testdata", "seeds.txt"))
	if err != nil {
		f.Fatal(err)
	}
	for _, line := range strings.Split(string(data), "\n") {
		if line != "" {
			f.Add(line, false)
			f.Add(line, true)
		}
	}
	f.Fuzz(func(t *testing.T, src string, display bool) {
		got := MathML(src, display)
		if err := wellFormed(got); err != nil {
			t.Fatalf("MathML(%q): %v\n%s", src, err, got)
		}
	})
}
