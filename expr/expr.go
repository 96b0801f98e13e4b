// Package expr reads formulas typed by users (source terms, boundary and initial
// data, exact solutions, potentials g(t)), compiles them once to a flat program
// over a value stack, and evaluates them with values, gradients and Hessians by
// forward-mode automatic differentiation to second order.
//
// Grammar: numbers (1, 2.5, 1e-3, .5), the variables of the context, the
// constants pi and e, + - * / ^ (also ** for ^, "−" for minus and "·", "×" for
// times), unary signs, parentheses and the functions sqrt, exp, log, sin, cos,
// tan, atan, atan2(y, x), sinh, cosh, tanh, abs, min(a, b), max(a, b) and
// pow(a, b). ^ is right-associative and binds tighter than a leading sign:
// -x^2 = -(x^2) and 2^3^2 = 2^9.
package expr

import (
	"fmt"
	"math"
	"unicode/utf8"
)

// instr is one step of the compiled program.
type instr struct {
	op  opcode
	idx int32   // variable index for opVar, register for opStore and opLoad
	k   float64 // constant for opConst, immediate for the *K operations
}

// Formula is a compiled formula. Its methods keep scratch space inside the
// Formula, so one Formula must not be evaluated from several goroutines at
// once; give each goroutine its own Clone.
type Formula struct {
	src   string
	vars  []string
	used  []bool
	code  []instr
	depth int // largest stack height reached by code
	nreg  int // registers for repeated subexpressions

	stack []float64 // Eval: depth + nreg values
	jets  []float64 // Eval2: depth + nreg slots of 1 + n + n(n+1)/2
	sjets []float64 // Scalar: depth + nreg slots of 3
}

// Parse reads src as a formula in the variables vars, in this order; Eval and
// Eval2 take the variable values in the same order. Variables shadow the
// constants pi and e. Errors are *Error values with the column of the problem.
func Parse(src string, vars ...string) (*Formula, error) {
	if err := validVars(vars); err != nil {
		return nil, err
	}
	if len(src) > 4*MaxLen || utf8.RuneCountInString(src) > MaxLen {
		return nil, &Error{0, fmt.Sprintf("formula has %d characters; the limit is %d", utf8.RuneCountInString(src), MaxLen)}
	}
	toks, err := lex(src)
	if err != nil {
		return nil, err
	}
	p := &parser{toks: toks, vars: vars}
	root, err := p.parse()
	if err != nil {
		return nil, err
	}
	f := &Formula{src: src, vars: append([]string(nil), vars...), used: make([]bool, len(vars))}
	c := &compiler{f: f, ids: map[nodeKey]int{}, reg: map[int]int{}}
	c.intern(root)
	c.count(root)
	f.depth = c.compile(root)
	f.nreg = len(c.reg)
	f.alloc()
	return f, nil
}

// MustParse is Parse for formulas fixed in code; it panics on error.
func MustParse(src string, vars ...string) *Formula {
	f, err := Parse(src, vars...)
	if err != nil {
		panic(fmt.Sprintf("expr.MustParse(%q): %v", src, err))
	}
	return f
}

func (f *Formula) alloc() {
	n := len(f.vars)
	slots := f.depth + f.nreg
	f.stack = make([]float64, slots)
	f.jets = make([]float64, slots*(1+n+n*(n+1)/2))
	f.sjets = make([]float64, 3*slots)
}

// Clone returns a Formula sharing the compiled program but with its own
// scratch space, for use in another goroutine.
func (f *Formula) Clone() *Formula {
	g := *f
	g.alloc()
	return &g
}

// Source returns the text the formula was parsed from.
func (f *Formula) Source() string { return f.src }

// Vars returns the variables of the formula, in the order Eval expects them.
func (f *Formula) Vars() []string { return append([]string(nil), f.vars...) }

// Uses reports whether the variable name occurs in the formula.
func (f *Formula) Uses(name string) bool {
	for i, v := range f.vars {
		if v == name {
			return f.used[i]
		}
	}
	return false
}

// String returns the source.
func (f *Formula) String() string { return f.src }

// nodeKey identifies a subtree up to structure, for common-subexpression
// elimination.
type nodeKey struct {
	op   opcode
	k    uint64
	v    int
	a, b int
}

// compiler turns a folded parse tree into the flat program. Subtrees that occur
// more than once are computed once, kept in a register and loaded again: user
// formulas such as manufactured sources repeat sin(pi*x)*sin(pi*y) often.
type compiler struct {
	f    *Formula
	ids  map[nodeKey]int
	uses []int
	reg  map[int]int
}

// intern numbers the structural classes of the subtrees of n.
func (c *compiler) intern(n *node) int {
	key := nodeKey{op: n.op, k: math.Float64bits(n.k), v: n.v, a: -1, b: -1}
	if n.a != nil {
		key.a = c.intern(n.a)
	}
	if n.b != nil {
		key.b = c.intern(n.b)
	}
	id, ok := c.ids[key]
	if !ok {
		id = len(c.ids)
		c.ids[key] = id
		c.uses = append(c.uses, 0)
	}
	n.id = id
	return id
}

// count records how often each class is needed; a repeated subtree's own
// children are needed only once.
func (c *compiler) count(n *node) {
	c.uses[n.id]++
	if c.uses[n.id] == 1 {
		if n.a != nil {
			c.count(n.a)
		}
		if n.b != nil {
			c.count(n.b)
		}
	}
}

func (c *compiler) emit(op opcode, idx int, k float64) {
	c.f.code = append(c.f.code, instr{op: op, idx: int32(idx), k: k})
}

// compile appends the program for n and returns the stack height it needs. A
// constant operand of + - * / ^ becomes an immediate, so that the common 2*x,
// x^2, x-1 cost one instruction and no stack slot.
func (c *compiler) compile(n *node) int {
	if r, ok := c.reg[n.id]; ok {
		c.emit(opLoad, r, 0)
		return 1
	}
	d := c.compileNode(n)
	if c.uses[n.id] > 1 && n.op != opConst && n.op != opVar {
		r := len(c.reg)
		c.reg[n.id] = r
		c.emit(opStore, r, 0)
	}
	return d
}

func (c *compiler) compileNode(n *node) int {
	switch {
	case n.op == opConst:
		c.emit(opConst, 0, n.k)
		return 1
	case n.op == opVar:
		c.f.used[n.v] = true
		c.emit(opVar, n.v, 0)
		return 1
	case !n.op.isBinary():
		d := c.compile(n.a)
		c.emit(n.op, 0, n.k)
		return d
	}
	a, b := n.a, n.b
	if b.op == opConst {
		if op, k, ok := immediateRight(n.op, b.k); ok {
			d := c.compile(a)
			if op != opConst { // x^1 needs no instruction
				c.emit(op, 0, k)
			}
			return d
		}
	}
	if a.op == opConst {
		if op, ok := immediateLeft(n.op); ok {
			d := c.compile(b)
			c.emit(op, 0, a.k)
			return d
		}
	}
	da := c.compile(a)
	db := c.compile(b)
	c.emit(n.op, 0, 0)
	return max(da, db+1)
}

// immediateRight rewrites a op k; opConst means "no instruction". Every rewrite
// gives the same IEEE result as the binary operation (u - k = u + (-k) exactly).
func immediateRight(op opcode, k float64) (opcode, float64, bool) {
	switch op {
	case opAdd:
		return opAddK, k, true
	case opSub:
		return opAddK, -k, true
	case opMul:
		return opMulK, k, true
	case opDiv:
		return opDivK, k, true
	case opPow:
		switch k {
		case 1:
			return opConst, 0, true
		case 2:
			return opSq, 0, true
		}
		return opPowK, k, true
	}
	return 0, 0, false
}

// immediateLeft rewrites k op b.
func immediateLeft(op opcode) (opcode, bool) {
	switch op {
	case opAdd:
		return opAddK, true
	case opSub:
		return opRSubK, true
	case opMul:
		return opMulK, true
	case opDiv:
		return opRDivK, true
	case opPow:
		return opRPowK, true
	}
	return 0, false
}

// Eval returns the value of the formula at p, which holds the variables in the
// order given to Parse (len(p) must be at least len(Vars())). It does not
// allocate. Domain errors give NaN, as in IEEE arithmetic.
func (f *Formula) Eval(p []float64) float64 {
	st, reg := f.stack[:f.depth], f.stack[f.depth:]
	sp := -1
	for _, in := range f.code {
		switch in.op {
		case opStore:
			reg[in.idx] = st[sp]
		case opLoad:
			sp++
			st[sp] = reg[in.idx]
		case opConst:
			sp++
			st[sp] = in.k
		case opVar:
			sp++
			st[sp] = p[in.idx]
		case opAddK:
			st[sp] += in.k
		case opMulK:
			st[sp] *= in.k
		case opSq:
			st[sp] *= st[sp]
		case opAdd:
			sp--
			st[sp] += st[sp+1]
		case opSub:
			sp--
			st[sp] -= st[sp+1]
		case opMul:
			sp--
			st[sp] *= st[sp+1]
		case opDiv:
			sp--
			st[sp] /= st[sp+1]
		default:
			if in.op.isBinary() {
				sp--
				st[sp] = binaryValue(in.op, st[sp], st[sp+1])
			} else {
				st[sp] = unaryValue(in.op, in.k, st[sp])
			}
		}
	}
	return st[0]
}

// Eval2 returns the value of the formula at p and stores its gradient in grad
// (len n) and its Hessian in hess (n×n, row-major, symmetric), where n is the
// number of variables; p, grad and hess must be at least that long. The derivatives are computed by forward-mode automatic
// differentiation with second-order jets (value, gradient, packed upper Hessian
// per stack slot), propagated by the chain rules
//
//	φ(u):    ∇ = φ' ∇u,  H = φ' Hu + φ'' ∇u ∇uᵀ
//	f(a, b): ∇ = fa ∇a + fb ∇b,
//	         H = fa Ha + fb Hb + faa ∇a∇aᵀ + fab (∇a∇bᵀ + ∇b∇aᵀ) + fbb ∇b∇bᵀ
//
// (Griewank & Walther, Evaluating Derivatives, 2nd ed., SIAM 2008, ch. 13).
// Conventions: a zero derivative component multiplies as an exact zero (so
// ∂/∂t of sqrt(x) + t at x = 0 is 1, not NaN); |u|' = 0 at u = 0; min and max take the derivatives of the
// active argument (the first on ties); a^k with constant k is differentiated as
// a power, valid for negative a; a^b with variable b as exp(b log a). Eval2
// does not allocate.
func (f *Formula) Eval2(p, grad, hess []float64) float64 {
	return f.eval2(p, grad, hess, len(f.vars))
}

// Eval2First is Eval2 with the Hessian only in the first k variables: it
// stores the whole gradient in grad (len n) and the k×k Hessian block of
// the first k variables in hess (row-major), with the same values as the
// corresponding entries of Eval2, bit for bit. Carrying k(k+1)/2 instead
// of n(n+1)/2 second derivatives makes it cheaper (for a source term
// ∂_t u − D²G(∇u):∇²u, the spatial Hessian of u(x, y, t): 3 of 6). k is
// clamped to [0, n].
func (f *Formula) Eval2First(p, grad, hess []float64, k int) float64 {
	return f.eval2(p, grad, hess, min(max(k, 0), len(f.vars)))
}

// eval2 is Eval2 with second derivatives in the first hk variables.
func (f *Formula) eval2(p, grad, hess []float64, hk int) float64 {
	n := len(f.vars)
	m := hk * (hk + 1) / 2
	w := 1 + n + m
	J, R := f.jets[:f.depth*w], f.jets[f.depth*w:]
	top := -w // offset of the top slot
	for _, in := range f.code {
		switch in.op {
		case opStore:
			r := int(in.idx) * w
			copy(R[r:r+w], J[top:top+w])
		case opLoad:
			top += w
			r := int(in.idx) * w
			copy(J[top:top+w], R[r:r+w])
		case opConst, opVar:
			top += w
			s := J[top : top+w]
			clear(s)
			if in.op == opConst {
				s[0] = in.k
			} else {
				s[0] = p[in.idx]
				s[1+in.idx] = 1
			}
		case opAddK:
			J[top] += in.k
		case opNeg, opMulK:
			c := -1.0
			if in.op == opMulK {
				c = in.k
			}
			s := J[top : top+w]
			s[0] *= c
			for i := 1; i < w; i++ {
				s[i] = mz(c, s[i])
			}
		case opAdd, opSub:
			a := J[top-w : top]
			b := J[top : top+w]
			if in.op == opAdd {
				for i := range a {
					a[i] += b[i]
				}
			} else {
				for i := range a {
					a[i] -= b[i]
				}
			}
			top -= w
		case opMul:
			// The product rule: the general binary update with fa = b, fb = a,
			// fab = 1 and faa = fbb = 0, without the vanishing terms.
			a := J[top-w : top]
			b := J[top : top+w]
			av, bv := a[0], b[0]
			ga, gb := a[1:1+n], b[1:1+n]
			ha, hb := a[1+n:], b[1+n:]
			k := 0
			for i := 0; i < hk; i++ {
				for j := i; j < hk; j++ {
					ha[k] = mz(bv, ha[k]) + mz(av, hb[k]) + mz2(1, ga[i], gb[j]) + mz2(1, gb[i], ga[j])
					k++
				}
			}
			for i := range ga {
				ga[i] = mz(bv, ga[i]) + mz(av, gb[i])
			}
			a[0] = av * bv
			top -= w
		case opMin, opMax:
			a := J[top-w : top]
			b := J[top : top+w]
			v := binaryValue(in.op, a[0], b[0])
			if (in.op == opMin && b[0] < a[0]) || (in.op == opMax && b[0] > a[0]) {
				copy(a, b)
			}
			a[0] = v
			top -= w
		default:
			if in.op.isBinary() {
				a := J[top-w : top]
				b := J[top : top+w]
				v, fa, fb, faa, fab, fbb := binaryJet(in.op, a[0], b[0])
				ga, gb := a[1:1+n], b[1:1+n]
				ha, hb := a[1+n:], b[1+n:]
				k := 0
				for i := 0; i < hk; i++ {
					for j := i; j < hk; j++ {
						ha[k] = mz(fa, ha[k]) + mz(fb, hb[k]) + mz2(faa, ga[i], ga[j]) +
							mz2(fab, ga[i], gb[j]) + mz2(fab, gb[i], ga[j]) + mz2(fbb, gb[i], gb[j])
						k++
					}
				}
				for i := range ga {
					ga[i] = mz(fa, ga[i]) + mz(fb, gb[i])
				}
				a[0] = v
				top -= w
			} else {
				s := J[top : top+w]
				v, d1, d2 := unaryJet(in.op, in.k, s[0])
				g, h := s[1:1+n], s[1+n:]
				k := 0
				for i := 0; i < hk; i++ {
					for j := i; j < hk; j++ {
						h[k] = mz(d1, h[k]) + mz2(d2, g[i], g[j])
						k++
					}
				}
				for i := range g {
					g[i] = mz(d1, g[i])
				}
				s[0] = v
			}
		}
	}
	s := J[:w]
	copy(grad[:n], s[1:1+n])
	h := s[1+n:]
	k := 0
	for i := 0; i < hk; i++ {
		for j := i; j < hk; j++ {
			hess[i*hk+j] = h[k]
			hess[j*hk+i] = h[k]
			k++
		}
	}
	return s[0]
}

// mz returns c·x with 0·c = 0 for every c, including ±Inf and NaN: a zero
// derivative component is treated as exact, so that a singular factor (such as
// sqrt at 0) does not spoil derivatives in variables it does not depend on.
func mz(c, x float64) float64 {
	if x == 0 {
		return 0
	}
	return c * x
}

// mz2 returns c·x·y with the convention of mz; a zero coefficient is exact
// too, since the chain rules use it for terms that vanish identically (the
// second derivatives of a product in one factor).
func mz2(c, x, y float64) float64 {
	if c == 0 || x == 0 || y == 0 {
		return 0
	}
	return c * x * y
}

// Scalar returns g(t), g′(t) and g″(t) for a formula in one variable, by the
// same second-order forward mode as Eval2 with scalar jets. For a formula with
// another number of variables it returns NaNs.
func (f *Formula) Scalar(t float64) (v, d1, d2 float64) {
	if len(f.vars) != 1 {
		nan := math.NaN()
		return nan, nan, nan
	}
	J, R := f.sjets[:3*f.depth], f.sjets[3*f.depth:]
	top := -3
	for _, in := range f.code {
		switch in.op {
		case opStore:
			r := 3 * int(in.idx)
			R[r], R[r+1], R[r+2] = J[top], J[top+1], J[top+2]
		case opLoad:
			top += 3
			r := 3 * int(in.idx)
			J[top], J[top+1], J[top+2] = R[r], R[r+1], R[r+2]
		case opConst:
			top += 3
			J[top], J[top+1], J[top+2] = in.k, 0, 0
		case opVar:
			top += 3
			J[top], J[top+1], J[top+2] = t, 1, 0
		case opAddK:
			J[top] += in.k
		case opAdd:
			top -= 3
			J[top] += J[top+3]
			J[top+1] += J[top+4]
			J[top+2] += J[top+5]
		case opSub:
			top -= 3
			J[top] -= J[top+3]
			J[top+1] -= J[top+4]
			J[top+2] -= J[top+5]
		case opMin, opMax:
			top -= 3
			a, b := J[top], J[top+3]
			if (in.op == opMin && b < a) || (in.op == opMax && b > a) {
				J[top+1], J[top+2] = J[top+4], J[top+5]
			}
			J[top] = binaryValue(in.op, a, b)
		default:
			if in.op.isBinary() {
				top -= 3
				a, ga, ha := J[top], J[top+1], J[top+2]
				b, gb, hb := J[top+3], J[top+4], J[top+5]
				v, fa, fb, faa, fab, fbb := binaryJet(in.op, a, b)
				J[top] = v
				J[top+1] = mz(fa, ga) + mz(fb, gb)
				J[top+2] = mz(fa, ha) + mz(fb, hb) + mz2(faa, ga, ga) +
					mz2(fab, ga, gb) + mz2(fab, gb, ga) + mz2(fbb, gb, gb)
			} else {
				g := J[top+1]
				v, e1, e2 := unaryJet(in.op, in.k, J[top])
				J[top] = v
				J[top+1] = mz(e1, g)
				J[top+2] = mz(e1, J[top+2]) + mz2(e2, g, g)
			}
		}
	}
	return J[0], J[1], J[2]
}
