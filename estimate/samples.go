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
// the Samples to Problem.Samples; a Samples is not safe for concurrent use.
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
// cell of s. A value that is not finite is an error naming the point.
func NewSamples(s *fem.P1, f func(x, y float64) float64, degree int) (*Samples, error) {
	if s == nil || f == nil {
		return nil, errors.New("source samples: need a P1 space and a source f")
	}
	degree = positiveDegree(degree)
	rule := s.Rule(degree)
	nq := rule.Len()
	sm := &Samples{Degree: degree, s: s, f: f, lams: make([][3]float64, nq), vals: make([]float64, s.Mesh.NumCells()*nq)}
	for q, pt := range rule.Points {
		sm.lams[q], _ = cellPoint(s.Mesh.Dim, pt)
	}
	for k := range s.Mesh.Cells {
		for q, lam := range sm.lams {
			x, y := physical(s, k, lam)
			v := f(x, y)
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, fmt.Errorf("source samples: f is %g at (%g, %g) in cell %d; it must be finite", v, x, y, k)
			}
			sm.vals[k*nq+q] = v
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

// cell returns the samples of cell k when they belong to space s and a rule
// of the given degree with nq points, else nil.
func (sm *Samples) cell(s *fem.P1, degree, nq, k int) []float64 {
	if sm == nil || sm.s.Mesh != s.Mesh || sm.Degree != degree || len(sm.lams) != nq {
		return nil
	}
	return sm.vals[k*nq : (k+1)*nq]
}

// sampleCheckStride is the spacing of the cells whose first sample is
// compared with F before the samples are used: a cheap guard against
// samples of another source.
const sampleCheckStride = 997

// check confirms that the samples hold F (within rounding of the point's
// coordinates) at one point every sampleCheckStride cells.
func (sm *Samples) check(F func(x, y float64) float64) error {
	nq := len(sm.lams)
	for k := 0; k < sm.s.Mesh.NumCells(); k += sampleCheckStride {
		x, y := physical(sm.s, k, sm.lams[0])
		if v, want := sm.vals[k*nq], F(x, y); v != want && !(math.Abs(v-want) <= 1e-13*math.Abs(want)) {
			return fmt.Errorf("estimate: the source samples do not hold f (cell %d: %g, f gives %g); build them with NewSamples from the problem's f", k, v, want)
		}
	}
	return nil
}
