package kinds

import (
	"fmt"
	"math"
	"strings"
	"testing"

	"gapbook/notebook"
)

// With an exact solution: minorant ≤ μ(v) ≤ majorant (so efficiency ≥ 1),
// the dual error below its bound, the norm bound above the gradient error.
func TestBoundEnclosesExactError(t *testing.T) {
	cases := []struct {
		domain, exact string
		alpha         float64
		flux          string
		interpolated  bool
	}{
		{"rectangle", "sin(pi*x)*sin(pi*y) + x", 1.5, "equilibrated", false},
		{"rectangle", "x*(1-x)*y*(1-y)*exp(x+y) + 0.5*x", 2, "equilibrated", false},
		{"rectangle", "sin(pi*x)*sin(pi*y) + x", 3, "averaged", false},
		{"rectangle", "sin(pi*x)*sin(pi*y) + x", 3, "minimised", false},
		{"interval", "x*(1-x)*exp(x) + x", 4, "equilibrated", false},
		{"L-shape", "(1 - x^2)*(1 - y^2)*x*y + x + 2*y", 3, "equilibrated", false},
		{"L-shape", "(x^2 + y^2)*(1 + x)", 2, "equilibrated", true},
	}
	for _, tc := range cases {
		t.Run(fmt.Sprint(tc.domain, tc.alpha, tc.flux), func(t *testing.T) {
			ev := evalCells(t,
				kc("p", "problem", map[string]any{"domain": tc.domain, "p": tc.alpha, "f": "", "exact": tc.exact}),
				kc("m", "mesh", map[string]any{"problem": "p", "cells": 8}),
				kc("s", "solve", map[string]any{"mesh": "m"}),
				kc("b", "bound", map[string]any{"solution": "s", "flux": tc.flux}))
			r := okCell(t, ev, "b")
			if tc.interpolated {
				// The bounds concern I_h u_D; the exact u solves another
				// problem, so only the warning can be checked.
				if !interpolatedData(r.Tables[0].Labels) || !strings.Contains(scalar(t, r, "primal_error").Unit, "interpolated") {
					t.Errorf("interpolated boundary data not stated: %v", r.Tables[0].Labels)
				}
				return
			}
			mu := scalar(t, r, "primal_error").Value
			maj := scalar(t, r, "majorant").Value
			if !(maj >= mu) || !(scalar(t, r, "efficiency").Value >= 1) {
				t.Errorf("majorant %g < μ(v) = %g", maj, mu)
			}
			if mn := scalar(t, r, "minorant").Value; mn > mu*(1+1e-9) {
				t.Errorf("minorant %g > μ(v) = %g", mn, mu)
			}
			// The error interval restates minorant and majorant and
			// encloses the true error; the energy interval encloses
			// J(u) = J(v) − μ(v).
			iv := interval(t, r, "error")
			if iv.Ends != [2]string{"minorant", "majorant"} || iv.Upper != maj || !(iv.Lower <= mu*(1+1e-9) && mu <= iv.Upper) || iv.Label != scalar(t, r, "majorant").Label {
				t.Errorf("error interval %+v does not enclose μ(v) = %g", iv, mu)
			}
			ju := scalar(t, r, "discrete_energy").Value - mu
			if e := interval(t, r, "energy"); !(e.Lower <= ju+1e-9*math.Abs(ju) && ju-1e-9*math.Abs(ju) <= e.Upper) {
				t.Errorf("energy interval %+v does not enclose J(u) = %g", e, ju)
			}
			if d, db := scalar(t, r, "dual_error").Value, scalar(t, r, "dual_majorant").Value; d > db {
				t.Errorf("μ* = %g > its bound %g", d, db)
			}
			ge := scalar(t, okCell(t, ev, "s"), "gradient_error").Value
			if nb := scalar(t, r, "norm_bound").Value; ge > nb {
				t.Errorf("gradient error %g > norm bound %g", ge, nb)
			}
			for _, s := range r.Scalars {
				if !s.Label.Valid() || s.Unit == "" {
					t.Errorf("%s: label %q, unit %q", s.Name, s.Label, s.Unit)
				}
			}
			if len(r.Tables) == 0 || len(r.Tables[0].Labels) < 3 {
				t.Error("assumptions are not listed")
			}
		})
	}
}

// The minimised flux starts from the averaged one and never raises its
// majorant (estimate.Minimise's contract).
func TestBoundMinimisedBelowAveraged(t *testing.T) {
	cells := []string{
		kc("p", "problem", map[string]any{"domain": "L-shape", "p": 1.5}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 4}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
		kc("a", "bound", map[string]any{"solution": "s", "flux": "averaged", "minorant": false}),
		kc("b", "bound", map[string]any{"solution": "s", "flux": "minimised", "minorant": false}),
	}
	ev := evalCells(t, cells...)
	a, b := scalar(t, okCell(t, ev, "a"), "majorant").Value, scalar(t, okCell(t, ev, "b"), "majorant").Value
	if !(b <= a) {
		t.Errorf("minimised majorant %g above the averaged one %g", b, a)
	}
}

// The flow-rate and energy intervals hold the exact values of the 1-D
// problem f = 1 on (0, 1): ∫u = (1/2)^{α'}/(α' + 1), J(u) = −∫u/α'
// (docs/checks.md item 9). For α = 3 the integrand G*(y*) = (2/3)|y*|^{3/2} is
// not a polynomial where y* is small; the bounds integrate such cells by
// adaptive subdivision and add the estimated remaining error, so the
// intervals must hold with no allowance.
func TestBoundFlowRateInterval(t *testing.T) {
	for _, alpha := range []float64{1.5, 3} {
		ev := evalCells(t,
			kc("p", "problem", map[string]any{"domain": "interval", "p": alpha}),
			kc("m", "mesh", map[string]any{"problem": "p", "cells": 32}),
			kc("s", "solve", map[string]any{"mesh": "m"}),
			kc("b", "bound", map[string]any{"solution": "s"}))
		r := okCell(t, ev, "b")
		ac := alpha / (alpha - 1)
		q := math.Pow(0.5, ac) / (ac + 1)
		lo, hi := scalar(t, r, "flow_low").Value, scalar(t, r, "flow_high").Value
		const slack = 0
		if !(lo-slack <= q && q <= hi+slack) || hi-lo > 0.05*q {
			t.Errorf("α = %g: Q = %.10g not in [%.10g, %.10g] or the interval is wide", alpha, q, lo, hi)
		}
		ju := -q / ac
		if el, eh := scalar(t, r, "energy_low").Value, scalar(t, r, "energy_high").Value; !(el-slack <= ju && ju <= eh+slack) {
			t.Errorf("α = %g: J(u) = %.10g not in [%.10g, %.10g]", alpha, ju, el, eh)
		}
	}
}

// A formula potential has no proven modulus: the bound cell refuses and
// says why, naming its input.
func TestBoundRefusesWithoutModulus(t *testing.T) {
	ev := evalCells(t,
		kc("p", "problem", map[string]any{"domain": "rectangle", "potential": "formula", "g": "t^2/2 + t^4/4", "p": 4}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 4}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
		kc("b", "bound", map[string]any{"solution": "s"}))
	okCell(t, ev, "s")
	o := ev.Cell("b")
	if o.Status != notebook.StatusError || o.Err.Field != "solution" {
		t.Fatalf("bound without modulus: %v %v", o.Status, o.Err)
	}
}

// Constants against published values: the sharp 1-D Friedrichs constant
// (docs/checks.md item 1), and eigenvalue brackets around 2π² on the unit square
// (item 2) and 9.6397238440219 on the L-shape (item 3, Betcke & Trefethen
// 2005).
func TestConstantKind(t *testing.T) {
	ev := evalCells(t,
		kc("i", "problem", map[string]any{"domain": "interval", "p": 3}),
		kc("mi", "mesh", map[string]any{"problem": "i", "cells": 64}),
		kc("ci", "constant", map[string]any{"mesh": "mi"}),
		kc("sq", "problem", map[string]any{"domain": "rectangle", "p": 2}),
		kc("ms", "mesh", map[string]any{"problem": "sq", "cells": 8}),
		kc("cs", "constant", map[string]any{"mesh": "ms", "eigenvalue": false}),
		kc("l", "problem", map[string]any{"domain": "L-shape", "p": 2}),
		kc("ml", "mesh", map[string]any{"problem": "l", "cells": 8}),
		kc("cl", "constant", map[string]any{"mesh": "ml", "eigenvalue": false}),
	)
	ri := okCell(t, ev, "ci")
	if c := scalar(t, ri, "width_bound"); math.Abs(c.Value-0.3281925257) > 1e-9 || c.Label != notebook.Guaranteed {
		t.Errorf("width bound %v, want 0.3281925257 (guaranteed)", c)
	}
	// The P1 eigenvalue lies above λ_3 = 28.2887619760 (docs/checks.md item 1),
	// close to it on 64 cells.
	if l := scalar(t, ri, "p_eigenvalue"); l.Value < 28.2887619760 || l.Value > 28.2887619760*1.01 || l.Label != notebook.Estimate {
		t.Errorf("α-eigenvalue %v, want just above 28.2887619760 (estimate)", l)
	}
	for _, tc := range []struct {
		id     string
		lambda float64
	}{{"cs", 2 * math.Pi * math.Pi}, {"cl", 9.6397238440219}} {
		r := okCell(t, ev, tc.id)
		lo, hi := scalar(t, r, "eigenvalue_low").Value, scalar(t, r, "eigenvalue_high").Value
		if !(lo <= tc.lambda && tc.lambda <= hi) {
			t.Errorf("%s: λ₁ = %.10g not in [%.10g, %.10g]", tc.id, tc.lambda, lo, hi)
		}
		if f := scalar(t, r, "friedrichs").Value; f < 1/math.Sqrt(tc.lambda) {
			t.Errorf("%s: Friedrichs bound %g below the exact λ₁^{-1/2} = %g", tc.id, f, 1/math.Sqrt(tc.lambda))
		}
	}
	// Payne–Weinberger d/π on the convex unit square (docs/checks.md item 5).
	if p := scalar(t, okCell(t, ev, "cs"), "poincare_bound").Value; math.Abs(p-math.Sqrt2/math.Pi) > 1e-12 {
		t.Errorf("Poincaré bound %g, want √2/π", p)
	}
	if _, ok := okCell(t, ev, "cl").Scalar("poincare_bound"); ok {
		t.Error("a Poincaré bound for the non-convex L-shape")
	}
}

func interval(t *testing.T, r *notebook.Results, name string) notebook.Interval {
	t.Helper()
	for _, iv := range r.Intervals {
		if iv.Name == name {
			return iv
		}
	}
	t.Fatalf("no interval %s in %+v", name, r.Intervals)
	return notebook.Interval{}
}

// Check refuses intervals that do not restate their scalars.
func TestIntervalsRestateScalars(t *testing.T) {
	r := &notebook.Results{Scalars: []notebook.Scalar{{Name: "lo", Value: 1, Label: notebook.Guaranteed, Unit: "x"}, {Name: "hi", Value: 2, Label: notebook.Estimate, Unit: "x"}}}
	r.AddIntervals([]notebook.IntervalDef{{Name: "x", Lower: "lo", Upper: "hi"}, {Name: "absent", Lower: "lo", Upper: "nope"}})
	if len(r.Intervals) != 1 || r.Intervals[0].Label != notebook.Estimate || r.Intervals[0].Lower != 1 || r.Intervals[0].Upper != 2 {
		t.Fatalf("intervals %+v; want one, labelled estimate (the weaker end)", r.Intervals)
	}
	if ps := r.Check(); len(ps) != 0 {
		t.Fatalf("consistent intervals refused: %v", ps)
	}
	for _, bad := range []func(*notebook.Interval){
		func(iv *notebook.Interval) { iv.Upper = 3 },
		func(iv *notebook.Interval) { iv.Label = notebook.Guaranteed },
		func(iv *notebook.Interval) { iv.Ends[1] = "nope" },
	} {
		c := *r
		c.Intervals = []notebook.Interval{r.Intervals[0]}
		bad(&c.Intervals[0])
		if ps := c.Check(); len(ps) == 0 {
			t.Errorf("inconsistent interval %+v accepted", c.Intervals[0])
		}
	}
}
