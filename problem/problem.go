package problem

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"sync"

	"gapbook/convex"
	"gapbook/expr"
)

// Problem is the nonlinear diffusion problem of docs/math.md §4 and §7,
//
//	∂_t u − div ∂G(∇u) = f in Ω × (T0, T),  u = u_D on ∂Ω,  u(T0) = U0,
//
// steady (−div ∂G(∇u) = f) when T = T0. The solver, the bounds and the
// notebook all take it. A Problem stated by New carries its domain, its
// formulas and an optional exact solution; one built in code (Steady,
// Evolution, or a literal) needs only G and the data it uses.
//
// The data functions are not safe for concurrent use when they come from
// formulas; SourceAt, DirichletAt and Initial hand out functions with
// their own scratch space.
type Problem struct {
	// G is the potential (required).
	G convex.Potential
	// F is the source f(x, y, t); nil means f = 0.
	F func(x, y, t float64) float64
	// Dirichlet is u_D(x, y, t); nil means 0. P1 sees its values at the
	// boundary nodes only (the interpolated data of docs/math.md §4.6).
	Dirichlet func(x, y, t float64) float64
	// U0 is u(x, y, T0); nil means 0.
	U0 func(x, y float64) float64
	// T0 ≤ T is the time window (both 0 for a steady problem).
	T0, T float64

	// Name names the problem in messages (the notebook sets the id of the
	// problem cell).
	Name string
	// Domain is the geometry the problem was stated on (nil for a problem
	// built in code on a mesh of the caller's).
	Domain *Domain
	// Family is the potential family the problem was stated with (one of
	// the family constants; empty for a problem built in code).
	Family string
	// Summary describes the problem in one line.
	Summary string
	// FConst is the source value when f is a stated constant, else NaN.
	FConst float64

	exact            *Manufactured // nil when no exact solution is known
	derived          bool          // f comes from the exact solution
	f, uD, u0        *expr.Formula // stated formulas in x, y, t; nil when absent
	steadyF, steadyD func(x, y float64) float64
}

// Steady returns the steady problem −div ∂G(∇u) = f, u = dirichlet on ∂Ω,
// with data in (x, y); nil functions mean zero.
func Steady(G convex.Potential, f, dirichlet func(x, y float64) float64) *Problem {
	p := &Problem{G: G, FConst: math.NaN(), steadyF: f, steadyD: dirichlet}
	if f != nil {
		p.F = func(x, y, _ float64) float64 { return f(x, y) }
	}
	if dirichlet != nil {
		p.Dirichlet = func(x, y, _ float64) float64 { return dirichlet(x, y) }
	}
	return p
}

// Evolution returns the evolution problem on (t0, t1) with the given data;
// nil functions mean zero.
func Evolution(G convex.Potential, f, dirichlet func(x, y, t float64) float64, u0 func(x, y float64) float64, t0, t1 float64) *Problem {
	return &Problem{G: G, F: f, Dirichlet: dirichlet, U0: u0, T0: t0, T: t1, FConst: math.NaN()}
}

// Exponent is the growth exponent p (α in docs/math.md) of the potential.
func (p *Problem) Exponent() float64 { return p.G.Growth() }

// Exact returns the known exact solution, or nil. Each call gives a copy
// with its own scratch space.
func (p *Problem) Exact() *Manufactured {
	if p.exact == nil {
		return nil
	}
	return p.exact.Clone()
}

// HasExact reports whether an exact solution is known.
func (p *Problem) HasExact() bool { return p.exact != nil }

// Derived reports whether f is derived from the exact solution.
func (p *Problem) Derived() bool { return p.derived }

// DirichletFromExact reports whether u_D is the exact solution (no u_D was
// stated, an exact solution was).
func (p *Problem) DirichletFromExact() bool { return p.uD == nil && p.exact != nil }

// ZeroDirichlet reports whether the boundary data vanish identically.
func (p *Problem) ZeroDirichlet() bool { return p.Dirichlet == nil }

// SourceAt returns f(·, t) (nil for f = 0).
func (p *Problem) SourceAt(t float64) func(x, y float64) float64 {
	switch {
	case p.steadyF != nil:
		return p.steadyF
	case p.derived:
		f, _, _ := p.exact.Clone().At(t)
		return f
	case p.f != nil:
		return at(p.f, t)
	case p.F != nil:
		F := p.F
		return func(x, y float64) float64 { return F(x, y, t) }
	}
	return nil
}

// DirichletAt returns u_D(·, t) (nil for zero data).
func (p *Problem) DirichletAt(t float64) func(x, y float64) float64 {
	switch {
	case p.steadyD != nil:
		return p.steadyD
	case p.uD != nil:
		return at(p.uD, t)
	case p.exact != nil:
		_, u, _ := p.exact.Clone().At(t)
		return u
	case p.Dirichlet != nil:
		D := p.Dirichlet
		return func(x, y float64) float64 { return D(x, y, t) }
	}
	return nil
}

// Source returns f(x, y, t) with its own scratch space (nil for f = 0).
func (p *Problem) Source() func(x, y, t float64) float64 {
	switch {
	case p.derived:
		return p.exact.Clone().Source
	case p.f != nil:
		return eval3(p.f)
	}
	return p.F
}

// Boundary returns u_D(x, y, t) with its own scratch space (nil for 0).
func (p *Problem) Boundary() func(x, y, t float64) float64 {
	switch {
	case p.uD != nil:
		return eval3(p.uD)
	case p.exact != nil:
		return p.exact.Clone().U
	}
	return p.Dirichlet
}

// Initial returns u(·, T0) with its own scratch space: the stated u0,
// else the exact solution at T0, else U0 (nil: zero).
func (p *Problem) Initial() func(x, y float64) float64 {
	switch {
	case p.u0 != nil:
		return at(p.u0, p.T0)
	case p.exact != nil:
		_, u, _ := p.exact.Clone().At(p.T0)
		return u
	}
	return p.U0
}

// WithDirichlet returns a copy of the steady problem at T0 whose boundary
// data are d (nil: zero).
func (p *Problem) WithDirichlet(d func(x, y float64) float64) *Problem {
	q := Steady(p.G, p.SourceAt(p.T0), d)
	q.Name, q.Domain, q.Family, q.Summary, q.FConst = p.Name, p.Domain, p.Family, p.Summary, p.FConst
	return q
}

// at returns the formula f in x, y at time t, with its own scratch space.
func at(f *expr.Formula, t float64) func(x, y float64) float64 {
	g := eval3(f)
	return func(x, y float64) float64 { return g(x, y, t) }
}

// eval3 returns the formula f in x, y, t, with its own scratch space.
func eval3(f *expr.Formula) func(x, y, t float64) float64 {
	f = f.Clone()
	var q [3]float64
	return func(x, y, t float64) float64 {
		q = [3]float64{x, y, t}
		return f.Eval(q[:])
	}
}

// Potential families.
const (
	Power    = "power"
	Quad     = "quadratic"
	RegPower = "regularised power"
	PowerSum = "power sum"
	Formula  = "formula"
)

// Families lists the potential families in the order they are offered.
var Families = []string{Power, Quad, RegPower, PowerSum, Formula}

// Spec is a problem as typed in a problem cell: the domain, the potential
// family with its parameters and the data as formula sources (empty for
// absent). T > 0 makes it an evolution problem on (0, T).
type Spec struct {
	Domain                  DomainSpec
	Family                  string
	P, Kappa, Epsilon, A, B float64
	G                       string // g(t) of the formula family
	F, UD, Exact, U0        string
	T                       float64
}

// InputError blames one input of a problem statement.
type InputError struct {
	Field, Msg string
}

func (e *InputError) Error() string { return e.Field + ": " + e.Msg }

func inputErr(field, format string, a ...any) error {
	return &InputError{Field: field, Msg: fmt.Sprintf(format, a...)}
}

// New checks a problem statement and compiles its formulas once; an error
// is an *InputError naming the input at fault.
func New(s Spec) (*Problem, error) {
	d, err := NewDomain(s.Domain)
	if err != nil {
		return nil, err
	}
	p := &Problem{Domain: d, T: s.T, FConst: math.NaN(), Family: s.Family}
	if p.G, err = potential(s); err != nil {
		return nil, err
	}
	vars := []string{"x", "y"}
	if d.Dim() == 1 {
		vars = []string{"x"}
	}
	if p.T > 0 {
		vars = append(vars, "t")
	}
	var exact *expr.Formula
	for _, fl := range []struct {
		name, src string
		dst       **expr.Formula
	}{{"exact", s.Exact, &exact}, {"f", s.F, &p.f}, {"u_D", s.UD, &p.uD}, {"u0", s.U0, &p.u0}} {
		src := strings.TrimSpace(fl.src)
		if src == "" {
			continue
		}
		if *fl.dst, err = compile(fl.name, src, vars); err != nil {
			return nil, err
		}
	}
	if exact != nil {
		if p.exact, err = Manufacture(exact.Source(), p.G); err != nil {
			return nil, inputErr("exact", "%v", err)
		}
	}
	if p.f == nil {
		if p.exact == nil {
			return nil, inputErr("f", "empty; give a source f, or an exact solution to derive it from")
		}
		p.derived = true
	} else if !p.f.Uses("x") && !p.f.Uses("y") && !p.f.Uses("t") {
		p.FConst = p.f.Eval([]float64{0, 0, 0})
		if math.IsNaN(p.FConst) || math.IsInf(p.FConst, 0) {
			return nil, inputErr("f", "the constant %s is not a finite number", p.f.Source())
		}
	}
	// The exported data are the problem's own, for callers that read the
	// fields; the methods above hand out copies with their own scratch.
	p.F, p.Dirichlet = p.Source(), p.Boundary()
	if ini := p.Initial(); ini != nil {
		p.U0 = ini
	}
	p.Summary = summary(p, d, exact)
	return p, nil
}

// potential builds the potential of a statement, blaming the input at
// fault.
func potential(s Spec) (convex.Potential, error) {
	var G convex.Potential
	var err error
	alpha := s.P
	field := "p"
	switch s.Family {
	case Power:
		G, err = convex.Power(alpha)
	case Quad:
		field = "kappa"
		G, err = convex.Quadratic(s.Kappa)
	case RegPower:
		G, err = convex.RegPower(alpha, s.Epsilon)
	case PowerSum:
		if alpha <= 2 {
			return nil, inputErr("p", "want p > 2 for the power sum (a t²/2 is its quadratic part), got %g", alpha)
		}
		G, err = convex.PowerSum(s.A, s.B, alpha)
	case Formula:
		field = "g"
		if strings.TrimSpace(s.G) == "" {
			return nil, inputErr("g", "empty; the formula potential needs g(t), for example t^3/3")
		}
		gf, perr := expr.Parse(s.G, "t")
		if perr != nil {
			return nil, inputErr("g", "%s", FormulaMessage(perr))
		}
		// The formula keeps scratch space: members of a sweep may evaluate
		// the potential at once, each with a copy of its own.
		copies := sync.Pool{New: func() any { return gf.Clone() }}
		G, err = convex.Custom("g(t) = "+s.G, func(t float64) (float64, float64, float64) {
			f := copies.Get().(*expr.Formula)
			g, g1, g2 := f.Scalar(t)
			copies.Put(f)
			return g, g1, g2
		}, alpha)
	default:
		return nil, inputErr("potential", "unknown family %q; known: %s", s.Family, strings.Join(Families, ", "))
	}
	if err != nil {
		return nil, inputErr(field, "%v", err)
	}
	return G, nil
}

func summary(p *Problem, d *Domain, exact *expr.Formula) string {
	fdesc := "f derived from the exact solution"
	if !p.derived {
		fdesc = "f = " + p.f.Source()
	}
	bdesc := "u_D = 0"
	switch {
	case p.uD != nil:
		bdesc = "u_D = " + p.uD.Source()
	case p.exact != nil:
		bdesc = "u_D = exact solution"
	}
	s := fmt.Sprintf("%s potential on %s; %s; %s", p.G, d, fdesc, bdesc)
	if exact != nil {
		s += "; exact u = " + exact.Source()
	}
	if p.T > 0 {
		s += fmt.Sprintf("; time horizon T = %g", p.T)
	}
	return s
}

// compile parses the formula of input name in vars, blaming the input on
// failure, and returns it compiled in x, y, t.
func compile(name, src string, vars []string) (*expr.Formula, error) {
	if _, err := expr.Parse(src, vars...); err != nil {
		return nil, inputErr(name, "%s", FormulaMessage(err))
	}
	return expr.Parse(src, "x", "y", "t")
}

// CheckFormula parses a formula in the widest set of variables (x, y, t),
// so that syntax errors show before anything runs; New checks the exact
// variables again.
func CheckFormula(src string) error {
	if strings.TrimSpace(src) == "" {
		return nil
	}
	if _, err := expr.Parse(src, "x", "y", "t"); err != nil {
		return errors.New(FormulaMessage(err))
	}
	return nil
}

// FormulaMessage rewrites an expr error as "unknown name "sn" at column 5;
// allowed variables: x, y".
func FormulaMessage(err error) string {
	var e *expr.Error
	if !errors.As(err, &e) {
		return err.Error()
	}
	if e.Col <= 0 {
		return e.Msg
	}
	head, tail, found := strings.Cut(e.Msg, "; ")
	var s string
	switch i := strings.Index(head, " to close "); {
	case i >= 0:
		// `expected ")" to close "(" at column 3`: one column per place.
		s = fmt.Sprintf("%s at column %d%s", head[:i], e.Col, head[i:])
	case strings.Contains(head, " at column "):
		s = fmt.Sprintf("%s (found at column %d)", head, e.Col)
	default:
		s = fmt.Sprintf("%s at column %d", head, e.Col)
	}
	if found {
		s += "; " + tail
	}
	return s
}
