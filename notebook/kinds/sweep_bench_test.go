package kinds

import (
	"context"
	"fmt"
	"strings"
	"testing"
	"time"

	"gapbook/notebook"
)

// BenchmarkSweepWorkers times a 32-member sweep (the exponent from 1.5 to
// 4.6 through mesh, solve and bound on the L-shape) with one and with two
// workers and reports the speed-up (target ≥ 1.8 on two cores).
func BenchmarkSweepWorkers(b *testing.B) {
	values := make([]float64, 32)
	for i := range values {
		values[i] = 1.5 + 0.1*float64(i)
	}
	doc := `{"gapbook": 2, "cells": [` + strings.Join([]string{
		kc("p", "problem", map[string]any{"domain": "L-shape", "p": 3}),
		kc("m", "mesh", map[string]any{"problem": "p", "cells": 16}),
		kc("s", "solve", map[string]any{"mesh": "m"}),
		kc("b", "bound", map[string]any{"solution": "s"}),
		kc("sw", "sweep", map[string]any{"cell": "p", "input": "p", "values": values, "through": "b"}),
	}, ",") + `]}`
	run := func(workers int) time.Duration {
		nb, err := notebook.Load([]byte(doc))
		if err != nil {
			b.Fatal(err)
		}
		e := notebook.NewEngine()
		e.Workers = workers
		start := time.Now()
		ev, err := e.Evaluate(context.Background(), nb, notebook.Options{})
		if err != nil || ev.Cell("sw").Status != notebook.StatusOK {
			b.Fatalf("sweep: %v %+v", err, ev.Cell("sw").Err)
		}
		return time.Since(start)
	}
	var one, two time.Duration
	for b.Loop() {
		one, two = run(1), run(2)
	}
	b.ReportMetric(one.Seconds(), "s-1-worker")
	b.ReportMetric(two.Seconds(), "s-2-workers")
	b.ReportMetric(one.Seconds()/two.Seconds(), "speedup")
	b.Log(fmt.Sprintf("32 members: %.2f s with one worker, %.2f s with two", one.Seconds(), two.Seconds()))
}
