package estimate

import (
	"errors"
	"fmt"
	"math"

	"gapbook/fem"
)

// Samples are the values of a source f at the points of the quadrature rule
// of one degree on every cell of a mesh. The projection of f inside an
// equilibrated flux and the residual terms of the bounds read the same
// samples, so that f — often the costliest part of both, a user formula or
// a manufactured source — is evaluated once per point instead of twice.
//
// Give Source() to Equilibrate with EquilibrateOptions.Degree = Degree and
// the Samples to Options.Samples; a Samples is not safe for concurrent use.
type Samples struct {
	// Degree is the degree of the rule (as EvaluateTerms and Equilibrate
	// take it).
	Degree int
	s      *fem.P1
	f      func(x, y float64) float64
	lams   [][3]float64
	vals   []float64 // vals[k·nq + q]
	next   int
}

// NewSamples evaluates f at the points of the rule of the given degree
// (0: DefaultDegree; 3 and 7 are raised as in EvaluateTerms) on every
// cell of s, as the solver samples its load (fem.P1.Sample). A value that
// is not finite is an error naming the point.
func NewSamples(s *fem.P1, f func(x, y float64) float64, degree int) (*Samples, error) {
	if s == nil || f == nil {
		return nil, errors.New("source samples: need a P1 space and a source f")
	}
	degree = positiveDegree(degree)
	rule := s.Rule(degree)
	vals := make([]float64, s.Mesh.NumCells()*rule.Len())
	s.Sample(f, rule, vals)
	return SamplesOf(s, f, degree, vals)
}

// SamplesOf wraps values of f computed elsewhere — the solver's load
// samples, nonlinear.Result.Load at degree Result.LoadDegree, in the order
// of fem.P1.Sample — as Samples, so that neither the flux nor the bounds
// evaluate f again. The rule must have positive weights (not degree 3 or
// 7); values that are not finite are an error.
func SamplesOf(s *fem.P1, f func(x, y float64) float64, degree int, vals []float64) (*Samples, error) {
	if s == nil || f == nil {
		return nil, errors.New("source samples: need a P1 space and a source f")
	}
	if degree <= 0 || positiveDegree(degree) != degree {
		return nil, fmt.Errorf("source samples: the rule of degree %d has negative weights or none; the bounds need positive ones", degree)
	}
	rule := s.Rule(degree)
	nq := rule.Len()
	if len(vals) != s.Mesh.NumCells()*nq {
		return nil, fmt.Errorf("source samples: %d values for %d cells × %d points", len(vals), s.Mesh.NumCells(), nq)
	}
	sm := &Samples{Degree: degree, s: s, f: f, vals: vals}
	sm.lams, _ = refPoints(s.Mesh.Dim, rule)
	for i, v := range vals {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			k, q := i/nq, i%nq
			x, y := physical(s, k, sm.lams[q])
			return nil, fmt.Errorf("source samples: f is %g at (%g, %g) in cell %d; it must be finite", v, x, y, k)
		}
	}
	return sm, nil
}

// Source returns f as a Source for Equilibrate: at the rule's points (which
// the projection of degree Degree visits in order) the samples, anywhere
// else f itself, so that it is f whatever it is asked.
func (sm *Samples) Source() Source {
	m := sm.s.Mesh
	nq := len(sm.lams)
	return func(k int, lam [3]float64) float64 {
		if k >= 0 && k < m.NumCells() {
			if sm.next >= nq {
				sm.next = 0
			}
			if q := sm.next; lam == sm.lams[q] {
				sm.next++
				return sm.vals[k*nq+q]
			}
			for q, l := range sm.lams {
				if l == lam {
					sm.next = q + 1
					return sm.vals[k*nq+q]
				}
			}
		}
		x, y := eqPoint(m, k, lam)
		return sm.f(x, y)
	}
}

// On reports whether the samples belong to the mesh of s (false for nil).
func (sm *Samples) On(s *fem.P1) bool { return sm != nil && s != nil && sm.s.Mesh == s.Mesh }

// cell returns the samples of cell k when they belong to the mesh of s,
// else nil.
func (sm *Samples) cell(s *fem.P1, k int) []float64 {
	if !sm.On(s) {
		return nil
	}
	nq := len(sm.lams)
	return sm.vals[k*nq : (k+1)*nq]
}

// sampleCheckStride is the spacing of the cells whose first sample is
// compared with F before the samples are used: a cheap guard against
// samples of another source.
const sampleCheckStride = 997

// check confirms that the samples hold F at one point every
// sampleCheckStride cells, within rounding: the solver maps the points by
// its own arithmetic, so f may differ by its slope times a few ulp of the
// coordinates (allowed: 1e-12 of the largest checked value).
func (sm *Samples) check(F func(x, y float64) float64) error {
	nq := len(sm.lams)
	var scale float64
	type pair struct {
		k       int
		v, want float64
	}
	var got []pair
	for k := 0; k < sm.s.Mesh.NumCells(); k += sampleCheckStride {
		x, y := physical(sm.s, k, sm.lams[0])
		p := pair{k, sm.vals[k*nq], F(x, y)}
		scale = max(scale, math.Abs(p.v), math.Abs(p.want))
		got = append(got, p)
	}
	for _, p := range got {
		if !(math.Abs(p.v-p.want) <= 1e-12*scale) {
			return fmt.Errorf("estimate: the source samples do not hold f (cell %d: %g, f gives %g); build them with NewSamples or SamplesOf from the problem's f", p.k, p.v, p.want)
		}
	}
	return nil
}
