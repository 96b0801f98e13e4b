//go:build !js

package web_test

import (
	"bytes"
	"compress/gzip"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
)

// engineBudget is the most the page's engine may weigh gzipped, in bytes.
// compress/gzip at its best compression gives about 1% more than gzip -9,
// so the check errs on the safe side. It was 2.4 MB until the engine read
// mesh files (zlib and gzip, the XML of .vtu files, the readers: about
// 165 KB gzipped, measured with gzip -9).
const engineBudget = 2_600_000

// heavyImports cost the engine much for little (measured in gzipped bytes
// when this budget was set): named in the failure to help find what grew.
var heavyImports = map[string]string{
	"regexp":                      "regular expressions and all Unicode tables, ~150 KB",
	"gonum.org/v1/gonum/mat":      "dense matrices with LAPACK and BLAS, ~85 KB",
	"gonum.org/v1/gonum/optimize": "optimisation methods, ~42 KB",
	"text/template":               "templates, reflection-heavy",
	"net/http":                    "an HTTP stack",
}

// The production engine, built exactly as `make wasm` builds it, stays
// within the budget.
func TestEngineSizeBudget(t *testing.T) {
	if testing.Short() {
		t.Skip("builds the engine")
	}
	wasm := filepath.Join(t.TempDir(), "gapbook.wasm")
	cmd := exec.Command("go", "build", "-trimpath", "-ldflags=-s -w", "-o", wasm, "gapbook/wasm")
	cmd.Env = append(os.Environ(), "GOOS=js", "GOARCH=wasm")
	if out, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("building the engine: %v\n%s", err, out)
	}
	raw, err := os.ReadFile(wasm)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.HasPrefix(raw, []byte("\x00asm")) {
		t.Fatalf("%s is not a WebAssembly module", wasm)
	}
	var z bytes.Buffer
	w, _ := gzip.NewWriterLevel(&z, gzip.BestCompression)
	w.Write(raw)
	w.Close()
	t.Logf("engine: %d bytes, %d gzipped (budget %d)", len(raw), z.Len(), engineBudget)
	if z.Len() <= engineBudget {
		return
	}
	var heavy []string
	list := exec.Command("go", "list", "-deps", "gapbook/wasm")
	list.Env = cmd.Env
	if out, err := list.Output(); err == nil {
		for _, p := range strings.Fields(string(out)) {
			if why, ok := heavyImports[p]; ok {
				heavy = append(heavy, p+" ("+why+")")
			}
		}
	}
	t.Errorf("the engine is %d bytes gzipped, over the budget of %d by %d; heavy imports now linked: %v. "+
		"Find what grew with `GOOS=js GOARCH=wasm go build -ldflags=-dumpdep ./wasm` and `go list -deps`",
		z.Len(), engineBudget, z.Len()-engineBudget, heavy)
}
