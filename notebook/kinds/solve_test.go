package kinds

import (
	"errors"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"gapbook/nonlinear"
	"gapbook/notebook"
	"gapbook/problem"
)

// Every way a solve can fail names the input to change, says what failed
// with the last residual, and gives a remedy; the tolerance remedy is
// applied and must work.
func TestSolveFailureMessages(t *testing.T) {
	ev := evalCells(t,
		kc("p", "problem", map[string]any{"domain": "rectangle", "p": 3}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 8}),
		kc("steps", "solve", map[string]any{"mesh": "m", "max_newton": 1}),
		kc("tight", "solve", map[string]any{"mesh": "m", "tolerance": 1e-300}),
		kc("q", "problem", map[string]any{"domain": "rectangle", "p": 3, "u_D": "exp(1000*x)"}),
		kc("mq", "mesh", map[string]any{"problem": "q", "cells": 4}),
		kc("sq", "solve", map[string]any{"mesh": "mq"}),
		kc("e", "problem", map[string]any{"domain": "rectangle", "p": 3, "f": "", "exact": "0/0"}),
		kc("me", "mesh", map[string]any{"problem": "e", "cells": 4}),
		kc("se", "solve", map[string]any{"mesh": "me"}),
		kc("g", "problem", map[string]any{"domain": "rectangle", "p": 3, "f": "log(x - 0.5)"}),
		kc("mg", "mesh", map[string]any{"problem": "g", "cells": 4}),
		kc("sg", "solve", map[string]any{"mesh": "mg"}),
		kc("big", "problem", map[string]any{"domain": "rectangle", "p": 100, "f": "0", "u_D": "1e4*x"}),
		kc("mb", "mesh", map[string]any{"problem": "big", "cells": 4}),
		kc("sb", "solve", map[string]any{"mesh": "mb"}))
	cases := []struct{ cell, field, msg string }{
		{"steps", "max_newton", "no convergence in 1 Newton steps"},
		{"steps", "max_newton", "allow more Newton steps (max_newton)"},
		{"steps", "max_newton", "relative residual"},
		{"tight", "tolerance", "stagnates"},
		{"tight", "tolerance", "set tolerance to"},
		{"sq", "u_D", "u_D is +Inf at the boundary node (1, "},
		{"se", "exact", "the exact solution, which gives u_D here, is NaN at the boundary node"},
		{"sg", "f", "f is NaN at the quadrature point"},
		{"sb", "p", "the gradient reaches |∇w| = 1e+04, where G(∇w) = +Inf"},
		{"sb", "p", "rescale the problem"},
	}
	for _, c := range cases {
		o := ev.Cell(c.cell)
		if o.Err == nil || o.Err.Field != c.field || !strings.Contains(o.Err.Msg, c.msg) {
			t.Errorf("cell %s: %+v; want input %s and a message with %q", c.cell, o.Err, c.field, c.msg)
		}
	}
	// The suggested tolerance works.
	m := regexp.MustCompile(`set tolerance to (\S+) or more`).FindStringSubmatch(ev.Cell("tight").Err.Msg)
	if m == nil {
		t.Fatalf("no tolerance suggested: %s", ev.Cell("tight").Err.Msg)
	}
	tol, err := strconv.ParseFloat(m[1], 64)
	if err != nil {
		t.Fatal(err)
	}
	ev = evalCells(t,
		kc("p", "problem", map[string]any{"domain": "rectangle", "p": 3}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 8}),
		kc("tight", "solve", map[string]any{"mesh": "m", "tolerance": tol}))
	okCell(t, ev, "tight")
}

// The causes the solver reports and the page cannot easily provoke get the
// same treatment: a line search that fails at rounding level, one that fails
// far from the solution, no descent direction.
func TestSolveFailureCauses(t *testing.T) {
	p := must(problem.New(problem.Spec{Domain: problem.DomainSpec{Shape: problem.Rectangle, X1: 1, Y1: 1}, Family: problem.Power, P: 3, F: "1"}))
	step := func(d float64) []nonlinear.Step { return []nonlinear.Step{{Decrement: d, Residual: 1e-9}} }
	cases := []struct {
		err        error
		field, msg string
	}{
		{&nonlinear.NotConvergedError{Reason: "line search failed", Cause: nonlinear.LineSearchFailed, History: step(1e-20)}, "tolerance", "set tolerance to 1e-19 or more"},
		{&nonlinear.NotConvergedError{Reason: "line search failed", Cause: nonlinear.LineSearchFailed, History: step(3)}, "tolerance", "badly scaled"},
		{&nonlinear.NotConvergedError{Reason: "no descent", Cause: nonlinear.NoDescent, History: step(1)}, "potential", "not positive definite"},
		{errors.New("plain"), "", "plain"},
	}
	for _, c := range cases {
		err := solveFailure(p, c.err, 1e-30)
		var fe interface{ Error() string } = err
		if c.field == "" {
			if err != c.err {
				t.Errorf("%v passed on as %v", c.err, err)
			}
			continue
		}
		if got := fieldOf(err); got != c.field || !strings.Contains(fe.Error(), c.msg) {
			t.Errorf("%v → input %q, %q; want %s and %q", c.err, got, fe.Error(), c.field, c.msg)
		}
	}
}

func must[T any](v T, err error) T {
	if err != nil {
		panic(err)
	}
	return v
}

func fieldOf(err error) string {
	var fe *notebook.FieldError
	if errors.As(err, &fe) {
		return fe.Field
	}
	return ""
}

// The primal-dual solver (p < 2) reports its causes too: one Newton step
// allowed is named as such, with the input to change.
func TestSolveFailurePrimalDual(t *testing.T) {
	ev := evalCells(t,
		kc("p", "problem", map[string]any{"domain": "L-shape", "p": 1.1, "f": "0", "u_D": "x*x - y*y + x*y"}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 16}),
		kc("s", "solve", map[string]any{"mesh": "m", "max_newton": 1}))
	o := ev.Cell("s")
	if o.Err == nil || o.Err.Field != "max_newton" || !strings.Contains(o.Err.Msg, "allow more Newton steps") {
		t.Errorf("primal-dual out of steps: %+v", o.Err)
	}
}
