package estimate

import (
	"context"
	"errors"
	"fmt"

	"gapbook/fem"
	"gapbook/mesh"
	"gapbook/problem"
)

// EvolutionRunFunc runs the time stepper on mesh m over the time grid
// times, passing every completed step to step (nonlinear.Evolve with
// Evolution.Times = times does this).
type EvolutionRunFunc func(ctx context.Context, m *mesh.Mesh, times []float64, step func(ctx context.Context, t0, t1 float64, v0, v1 []float64) error) error

// EvolutionAdaptOptions configure AdaptEvolution.
type EvolutionAdaptOptions struct {
	Problem *problem.Problem
	Options EvolutionOptions
	// Target stops the loop once the (P-MAJ) bound is ≤ Target (0: none).
	Target float64
	// Rounds bounds the number of runs (0: 6); Share is the bulk-marking
	// share for cells and steps (0: 0.5); MaxCells stops before a larger
	// mesh (0: 1e5).
	Rounds   int
	Share    float64
	MaxCells int
}

// EvolutionRound is one run of the adaptive loop.
type EvolutionRound struct {
	Mesh   *mesh.Mesh
	Times  []float64
	Result *EvolutionResult
	// Refined says what the round refined afterwards: "space", "time" or "".
	Refined string
}

// AdaptEvolution alternates runs and refinements (docs/math.md §7): after each
// run it compares the space and time parts of the (P-MAJ) bound; when the
// time part dominates it halves the steps holding the bulk of the time
// indicators, otherwise it bisects the cells holding the bulk of the space
// indicators (Dörfler marking, newest-vertex bisection). Each round reruns
// the whole evolution on the new grids.
func AdaptEvolution(ctx context.Context, m0 *mesh.Mesh, times0 []float64, run EvolutionRunFunc, opt EvolutionAdaptOptions) ([]EvolutionRound, error) {
	if m0 == nil || run == nil || len(times0) < 2 {
		return nil, errors.New("adaptive evolution: need a mesh, a time grid of at least two times and a run function")
	}
	if opt.Rounds <= 0 {
		opt.Rounds = 6
	}
	if opt.Share == 0 {
		opt.Share = 0.5
	}
	if opt.MaxCells <= 0 {
		opt.MaxCells = 100000
	}
	var rounds []EvolutionRound
	m, times := m0, append([]float64(nil), times0...)
	for i := 0; i < opt.Rounds; i++ {
		s, err := fem.NewP1(m)
		if err != nil {
			return rounds, fmt.Errorf("adaptive evolution, round %d: %w", i, err)
		}
		o := opt.Options
		o.Friedrichs = Constant{} // the width bound of this mesh's domain
		if opt.Options.Friedrichs.Value > 0 {
			o.Friedrichs = opt.Options.Friedrichs
		}
		pb, err := NewEvolution(s, opt.Problem, o)
		if err != nil {
			return rounds, err
		}
		if err := run(ctx, m, times, pb.Step); err != nil {
			return rounds, fmt.Errorf("adaptive evolution, round %d (%d cells, %d steps): %w", i, m.NumCells(), len(times)-1, err)
		}
		r, err := pb.Bounds()
		if err != nil {
			return rounds, err
		}
		rounds = append(rounds, EvolutionRound{Mesh: m, Times: times, Result: r})
		if (opt.Target > 0 && r.Split.Value <= opt.Target) || i+1 == opt.Rounds {
			return rounds, nil
		}
		if r.Time >= r.Space {
			eta := make([]float64, len(r.Parts))
			for n, p := range r.Parts {
				eta[n] = max(p.Time, 0)
			}
			marked, err := MarkBulk(eta, opt.Share)
			if err != nil {
				return rounds, err
			}
			next := []float64{times[0]}
			for n, mk := range marked {
				if mk {
					next = append(next, (times[n]+times[n+1])/2)
				}
				next = append(next, times[n+1])
			}
			times = next
			rounds[i].Refined = "time"
			continue
		}
		marked, err := MarkBulk(r.Cells, opt.Share)
		if err != nil {
			return rounds, err
		}
		next, err := m.Bisect(marked)
		if err != nil {
			return rounds, err
		}
		if next.NumCells() > opt.MaxCells {
			return rounds, nil
		}
		m = next
		rounds[i].Refined = "space"
	}
	return rounds, nil
}
