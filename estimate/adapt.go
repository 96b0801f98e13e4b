package estimate

import (
	"context"
	"errors"
	"fmt"

	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// SolveFunc computes the discrete solution v (nodal values, with the
// Dirichlet data at the boundary nodes) on the P1 space s.
type SolveFunc func(ctx context.Context, s *fem.P1) ([]float64, error)

// FluxFunc builds a flux from the discrete solution v on s.
type FluxFunc func(ctx context.Context, s *fem.P1, v []float64) (Flux, error)

// AdaptOptions configure Adapt.
type AdaptOptions struct {
	// Options are passed to Estimate on every mesh. A zero Friedrichs
	// constant means WidthConstant of the initial mesh (the domain does not
	// change under refinement).
	Options
	// Target stops the loop once the majorant μ̄ ≤ Target (0: no target).
	Target float64
	// MaxCells stops the loop before a mesh with more cells would be
	// solved (0: 1e5).
	MaxCells int
	// MaxSteps bounds the number of meshes (0: 40).
	MaxSteps int
	// Share is the bulk-marking share (0: 0.5).
	Share float64
	// Progress, if set, is called after each mesh with its step.
	Progress func(AdaptStep)
	// Samples, if set, gives the samples of f on each mesh (typically the
	// solver's, kept by SolveFunc) for the bounds; nil, or samples of
	// another mesh, means the bounds evaluate f themselves.
	Samples func(s *fem.P1) *Samples
}

// AdaptStep is one mesh of the adaptive loop with its solution and bounds.
type AdaptStep struct {
	Step     int
	Mesh     *mesh.Mesh
	Unknowns int
	V        []float64
	Result   *Result
}

// AdaptRun is the outcome of Adapt: every step and why the loop stopped.
type AdaptRun struct {
	Steps  []AdaptStep
	Reason string
}

// Adapt runs the loop solve → flux → bounds → bulk marking → newest-vertex
// bisection (docs/math.md §4, local indicators) from m0 until the majorant meets
// the target, the next mesh would exceed the size limit, the step limit is
// reached or ctx is cancelled (then the steps so far are returned with the
// context's error).
func Adapt(ctx context.Context, m0 *mesh.Mesh, p *problem.Problem, solve SolveFunc, flux FluxFunc, opt AdaptOptions) (*AdaptRun, error) {
	if m0 == nil || solve == nil || flux == nil {
		return nil, errors.New("adaptive loop: need a mesh, a solver and a flux builder")
	}
	if opt.MaxCells <= 0 {
		opt.MaxCells = 100000
	}
	if opt.MaxSteps <= 0 {
		opt.MaxSteps = 40
	}
	if opt.Share == 0 {
		opt.Share = 0.5
	}
	if opt.Friedrichs.Value == 0 {
		c, err := WidthConstant(m0, p.G.Growth())
		if err != nil {
			return nil, fmt.Errorf("adaptive loop: %w", err)
		}
		opt.Friedrichs = c
	}
	run := &AdaptRun{}
	m := m0
	for step := 0; ; step++ {
		if err := ctx.Err(); err != nil {
			run.Reason = "cancelled"
			return run, err
		}
		s, err := fem.NewP1(m)
		if err != nil {
			return run, fmt.Errorf("adaptive loop, step %d: %w", step, err)
		}
		v, err := solve(ctx, s)
		if err != nil {
			return run, fmt.Errorf("adaptive loop, step %d (%d cells): solve: %w", step, m.NumCells(), err)
		}
		y, err := flux(ctx, s, v)
		if err != nil {
			return run, fmt.Errorf("adaptive loop, step %d (%d cells): flux: %w", step, m.NumCells(), err)
		}
		eo := opt.Options
		if opt.Samples != nil {
			if sm := opt.Samples(s); sm.On(s) {
				eo.Samples = sm
			}
		}
		r, err := Estimate(s, p, v, y, eo)
		if err != nil {
			return run, fmt.Errorf("adaptive loop, step %d (%d cells): %w", step, m.NumCells(), err)
		}
		st := AdaptStep{Step: step, Mesh: m, Unknowns: s.NumFree(), V: v, Result: r}
		run.Steps = append(run.Steps, st)
		if opt.Progress != nil {
			opt.Progress(st)
		}
		switch {
		case opt.Target > 0 && r.Majorant.Value <= opt.Target:
			run.Reason = "target reached"
			return run, nil
		case step+1 >= opt.MaxSteps:
			run.Reason = "step limit"
			return run, nil
		}
		marked, err := MarkBulk(r.Indicators, opt.Share)
		if err != nil {
			return run, fmt.Errorf("adaptive loop, step %d: %w", step, err)
		}
		next, err := m.Bisect(marked)
		if err != nil {
			return run, fmt.Errorf("adaptive loop, step %d: %w", step, err)
		}
		if next.NumCells() > opt.MaxCells {
			run.Reason = "size limit"
			return run, nil
		}
		m = next
	}
}
