package kinds

import (
	"context"
	"strings"
	"testing"

	"gapbook/notebook"
)

// A plot cell draws columns of an earlier cell's table, escapes its title
// and names the columns or tables that exist when asked for one that does
// not.
func TestPlotKind(t *testing.T) {
	nb, _ := notebook.Load([]byte(`{"gapbook":2,"cells":[` + strings.Join([]string{
		kc("p", "problem", map[string]any{"domain": "interval", "p": 3}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 8}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
		kc("c", "plot", map[string]any{"from": "s", "table": "newton", "x": "step", "y": []string{"energy"}, "logy": false, "title": "<b>energy</b>"}),
		kc("q", "plot", map[string]any{"from": "s", "table": "newton", "y": []string{"nope"}}),
		kc("r", "plot", map[string]any{"from": "s", "table": "other"})}, ",") + `]}`))
	ev, err := notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	c := okCell(t, ev, "c")
	pl := c.Plots[0]
	steps := okCell(t, ev, "s").Tables[0]
	if pl.XLabel != "step" || len(pl.Series) != 1 || pl.Series[0].Name != "energy" || len(pl.Series[0].Y) != len(steps.Rows) ||
		pl.Series[0].Y[len(steps.Rows)-1] != steps.Rows[len(steps.Rows)-1][steps.ColumnIndex("energy")] {
		t.Errorf("plot %+v", pl)
	}
	if q := ev.Cell("q"); q.Err == nil || q.Err.Field != "y" || !strings.Contains(q.Err.Msg, `no column "nope"; columns: "step"`) {
		t.Errorf("q: %v", q.Err)
	}
	if r := ev.Cell("r"); r.Err == nil || r.Err.Field != "table" || !strings.Contains(r.Err.Msg, "tables: newton") {
		t.Errorf("r: %v", r.Err)
	}
	cellC, _ := nb.Cell("c")
	html := notebook.RenderCell(cellC, ev.Cell("c"))
	if strings.Contains(html, "<b>") || !strings.Contains(html, "&lt;b&gt;energy") || !strings.Contains(html, "<svg") {
		t.Errorf("plot cell html not escaped or no svg: %.300s", html)
	}
}
