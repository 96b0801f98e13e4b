package expr

import (
	"math"
	"strings"
)

type opcode uint8

const (
	opConst opcode = iota
	opVar
	opStore // copy the top of the stack to register idx
	opLoad  // push register idx

	// One argument u, and an immediate k for the *K forms.
	opNeg
	opAddK  // u + k
	opMulK  // u * k
	opRSubK // k - u
	opDivK  // u / k
	opRDivK // k / u
	opPowK  // u ^ k
	opRPowK // k ^ u
	opSq    // u * u
	opSqrt
	opExp
	opLog
	opSin
	opCos
	opTan
	opAtan
	opSinh
	opCosh
	opTanh
	opAbs

	// Two arguments a, b.
	opAdd
	opSub
	opMul
	opDiv
	opPow
	opAtan2
	opMin
	opMax
)

func (o opcode) isBinary() bool { return o >= opAdd }

type function struct {
	op    opcode
	nargs int
}

var functions = map[string]function{
	"sqrt": {opSqrt, 1}, "exp": {opExp, 1}, "log": {opLog, 1},
	"sin": {opSin, 1}, "cos": {opCos, 1}, "tan": {opTan, 1}, "atan": {opAtan, 1},
	"sinh": {opSinh, 1}, "cosh": {opCosh, 1}, "tanh": {opTanh, 1}, "abs": {opAbs, 1},
	"atan2": {opAtan2, 2}, "min": {opMin, 2}, "max": {opMax, 2}, "pow": {opPow, 2},
}

var functionList = strings.Join([]string{
	"sqrt", "exp", "log", "sin", "cos", "tan", "atan", "atan2",
	"sinh", "cosh", "tanh", "abs", "min", "max", "pow",
}, ", ")

var constants = map[string]float64{"pi": math.Pi, "π": math.Pi, "e": math.E}

// node is the parse tree; constant subtrees are folded as they are built.
type node struct {
	op   opcode
	k    float64 // constant value, or the immediate of a *K operation
	v    int     // variable index
	a, b *node
	col  int
	id   int // class of structurally equal subtrees, set by the compiler
}

func constNode(v float64, col int) *node { return &node{op: opConst, k: v, col: col} }

func unaryNode(op opcode, k float64, a *node, col int) *node {
	if a.op == opConst {
		return constNode(unaryValue(op, k, a.k), col)
	}
	return &node{op: op, k: k, a: a, col: col}
}

func binaryNode(op opcode, a, b *node, col int) *node {
	if a.op == opConst && b.op == opConst {
		return constNode(binaryValue(op, a.k, b.k), col)
	}
	return &node{op: op, a: a, b: b, col: col}
}

// unaryValue evaluates a one-argument operation. It must agree bit for bit with
// the value returned by unaryJet, so that Eval and Eval2 give the same number.
func unaryValue(op opcode, k, u float64) float64 {
	switch op {
	case opNeg:
		return -u
	case opAddK:
		return u + k
	case opMulK:
		return u * k
	case opRSubK:
		return k - u
	case opDivK:
		return u / k
	case opRDivK:
		return k / u
	case opPowK:
		return math.Pow(u, k)
	case opRPowK:
		return math.Pow(k, u)
	case opSq:
		return u * u
	case opSqrt:
		return math.Sqrt(u)
	case opExp:
		return math.Exp(u)
	case opLog:
		return math.Log(u)
	case opSin:
		return math.Sin(u)
	case opCos:
		return math.Cos(u)
	case opTan:
		return math.Tan(u)
	case opAtan:
		return math.Atan(u)
	case opSinh:
		return math.Sinh(u)
	case opCosh:
		return math.Cosh(u)
	case opTanh:
		return math.Tanh(u)
	case opAbs:
		return math.Abs(u)
	}
	return math.NaN()
}

// unaryJet returns φ(u), φ′(u), φ″(u) for a one-argument operation φ.
func unaryJet(op opcode, k, u float64) (v, d1, d2 float64) {
	switch op {
	case opNeg:
		return -u, -1, 0
	case opAddK:
		return u + k, 1, 0
	case opMulK:
		return u * k, k, 0
	case opRSubK:
		return k - u, -1, 0
	case opDivK:
		return u / k, 1 / k, 0
	case opRDivK:
		v = k / u
		d1 = -v / u
		return v, d1, -2 * d1 / u
	case opPowK:
		// Powers with a constant exponent are differentiated as powers, so
		// that x^3 at x = -1 and x^2 at x = 0 have finite derivatives; the
		// vanishing coefficients are kept exact to avoid 0·∞.
		v = math.Pow(u, k)
		if k == 0 {
			return v, 0, 0
		}
		if v != 0 && !math.IsInf(v, 0) && !math.IsNaN(v) {
			// u ≠ 0 and u^k finite: two divisions instead of two more powers.
			d1 = k * v / u
			return v, d1, (k - 1) * d1 / u
		}
		d1 = k * math.Pow(u, k-1)
		if k != 1 {
			d2 = k * (k - 1) * math.Pow(u, k-2)
		}
		return v, d1, d2
	case opRPowK:
		v = math.Pow(k, u)
		l := math.Log(k)
		return v, v * l, v * l * l
	case opSq:
		return u * u, 2 * u, 2
	case opSqrt:
		v = math.Sqrt(u)
		d1 = 0.5 / v
		return v, d1, -0.5 * d1 / u
	case opExp:
		v = math.Exp(u)
		return v, v, v
	case opLog:
		return math.Log(u), 1 / u, -1 / (u * u)
	case opSin:
		s, c := math.Sincos(u)
		return math.Sin(u), c, -s
	case opCos:
		s, c := math.Sincos(u)
		return math.Cos(u), -s, -c
	case opTan:
		v = math.Tan(u)
		d1 = 1 + v*v
		return v, d1, 2 * v * d1
	case opAtan:
		q := 1 / (1 + u*u)
		return math.Atan(u), q, -2 * u * q * q
	case opSinh:
		return math.Sinh(u), math.Cosh(u), math.Sinh(u)
	case opCosh:
		return math.Cosh(u), math.Sinh(u), math.Cosh(u)
	case opTanh:
		v = math.Tanh(u)
		d1 = 1 - v*v
		return v, d1, -2 * v * d1
	case opAbs:
		// The subgradient 0 at u = 0.
		switch {
		case u > 0:
			d1 = 1
		case u < 0:
			d1 = -1
		}
		return math.Abs(u), d1, 0
	}
	nan := math.NaN()
	return nan, nan, nan
}

// binaryValue evaluates a two-argument operation; see unaryValue.
func binaryValue(op opcode, a, b float64) float64 {
	switch op {
	case opAdd:
		return a + b
	case opSub:
		return a - b
	case opMul:
		return a * b
	case opDiv:
		return a / b
	case opPow:
		return math.Pow(a, b)
	case opAtan2:
		return math.Atan2(a, b)
	case opMin:
		return math.Min(a, b)
	case opMax:
		return math.Max(a, b)
	}
	return math.NaN()
}

// binaryJet returns f(a, b) and its partial derivatives of first and second
// order for the operations that are not handled by a branch choice (min, max)
// or linearly (add, sub).
func binaryJet(op opcode, a, b float64) (v, fa, fb, faa, fab, fbb float64) {
	switch op {
	case opMul:
		return a * b, b, a, 0, 1, 0
	case opDiv:
		r := 1 / b
		v = a / b
		return v, r, -v * r, 0, -r * r, 2 * v * r * r
	case opPow:
		// a^b = exp(b log a) for a variable exponent.
		v = math.Pow(a, b)
		l := math.Log(a)
		w := math.Pow(a, b-1)
		return v, b * w, v * l, b * (b - 1) * math.Pow(a, b-2), w * (1 + b*l), v * l * l
	case opAtan2:
		// atan2(y, x): ∂y = x/r², ∂x = −y/r².
		r2 := a*a + b*b
		q := 1 / (r2 * r2)
		return math.Atan2(a, b), b / r2, -a / r2, -2 * a * b * q, (a*a - b*b) * q, 2 * a * b * q
	}
	nan := math.NaN()
	return nan, nan, nan, nan, nan, nan
}
