//go:build !js

// Package layers holds the test that the packages keep the data flow of
// docs/architecture.md: the numerical packages import no notebook, page or
// command code and no syscall/js, and each imports only packages before
// it in the flow.
package layers

import (
	"os/exec"
	"strings"
	"testing"
)

// flow is the order of docs/architecture.md; a package may import only
// packages earlier in the list (and the standard library, gonum).
var flow = []string{"expr", "convex", "mesh", "problem", "fem", "nonlinear", "estimate"}

func TestNumericalPackagesKeepTheFlow(t *testing.T) {
	pos := map[string]int{}
	for i, p := range flow {
		pos["gapbook/"+p] = i
	}
	for i, p := range flow {
		out, err := exec.Command("go", "list", "-deps", "gapbook/"+p).Output()
		if err != nil {
			t.Fatalf("go list %s: %v", p, err)
		}
		for _, d := range strings.Fields(string(out)) {
			switch {
			case d == "syscall/js" || strings.HasPrefix(d, "gapbook/notebook") || strings.HasPrefix(d, "gapbook/web") || strings.HasPrefix(d, "gapbook/wasm") || strings.HasPrefix(d, "gapbook/cmd"):
				t.Errorf("%s imports %s: numerical packages must not depend on the notebook, the page or the command", p, d)
			case strings.HasPrefix(d, "gapbook/") && d != "gapbook/"+p:
				if j, ok := pos[d]; ok && j > i {
					t.Errorf("%s imports %s, which comes after it in the flow %v", p, d, flow)
				}
			}
		}
	}
}
