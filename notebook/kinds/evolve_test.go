package kinds

import (
	"fmt"
	"strings"
	"testing"

	"gapbook/notebook"
)

// The space-time bound of an evolve cell lies above the true error measure
// sup_t S(t) computed from the exact solution, and so does the max-in-time
// L² bound above ‖e(T)‖ (docs/math.md §7, (P-MAJ)).
func TestEvolveBoundsExactError(t *testing.T) {
	cases := []struct {
		domain, exact string
		alpha         float64
		cells, steps  int
		flux, inTime  string
	}{
		{"interval", "exp(-t)*sin(pi*x)", 2, 16, 8, "equilibrated", "linear in time"},
		{"interval", "exp(-t)*sin(pi*x) + x*t", 3, 16, 8, "equilibrated", "constant in time"},
		{"interval", "exp(-t)*sin(pi*x)", 1.5, 16, 8, "averaged", "linear in time"},
		{"rectangle", "exp(-t)*sin(pi*x)*sin(pi*y)", 3, 4, 4, "equilibrated", "linear in time"},
	}
	for _, tc := range cases {
		t.Run(fmt.Sprint(tc.domain, tc.alpha, tc.flux), func(t *testing.T) {
			ev := evalCells(t,
				kc("p", "problem", map[string]any{"domain": tc.domain, "p": tc.alpha, "f": "", "exact": tc.exact, "T": 0.25}),
				kc("m", "mesh", map[string]any{"problem": "p", "cells": tc.cells}),
				kc("e", "evolve", map[string]any{"mesh": "m", "steps": tc.steps, "flux": tc.flux, "in_time": tc.inTime}))
			r := okCell(t, ev, "e")
			b, ex := scalar(t, r, "bound"), scalar(t, r, "exact_error").Value
			if b.Label != notebook.Guaranteed || !(b.Value >= ex) || !(scalar(t, r, "efficiency").Value >= 1) {
				t.Errorf("bound %v below the exact error %g", b, ex)
			}
			if fe, mb := scalar(t, r, "final_error").Value, scalar(t, r, "max_error_bound").Value; fe > mb {
				t.Errorf("‖e(T)‖ = %g above its bound %g", fe, mb)
			}
		})
	}
}

func TestEvolveNeedsHorizon(t *testing.T) {
	ev := evalCells(t,
		kc("p", "problem", map[string]any{"domain": "interval"}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 4}),
		kc("e", "evolve", map[string]any{"mesh": "m"}))
	if o := ev.Cell("e"); o.Status != notebook.StatusError || !strings.Contains(o.Err.Error(), "input mesh: problem p has no time horizon; set its input T > 0") {
		t.Errorf("evolve without T: %v", o.Err)
	}
}
