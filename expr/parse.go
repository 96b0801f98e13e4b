package expr

import (
	"fmt"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Limits that keep hostile sources from exhausting memory or the stack.
const (
	// MaxLen is the largest accepted source, in characters (runes).
	MaxLen = 10000
	// MaxDepth is the deepest accepted nesting of parentheses, calls, signs
	// and exponents.
	MaxDepth = 200
)

// Error reports a problem in a formula source at a 1-based column counted in
// characters (runes). Col is 0 when the problem is not tied to one place.
type Error struct {
	Col int
	Msg string
}

// Error formats the problem as "column N: message".
func (e *Error) Error() string {
	if e.Col <= 0 {
		return e.Msg
	}
	return fmt.Sprintf("column %d: %s", e.Col, e.Msg)
}

type tokKind uint8

const (
	tEnd tokKind = iota
	tNum
	tName
	tOp // one of + - * / ^ ( ) ,
)

type token struct {
	kind tokKind
	op   rune
	text string
	num  float64
	col  int
}

func (t token) describe() string {
	switch t.kind {
	case tEnd:
		return "end of formula"
	case tNum, tName:
		return fmt.Sprintf("%q", t.text)
	}
	return fmt.Sprintf("%q", string(t.op))
}

func isIdentStart(r rune) bool { return r == '_' || unicode.IsLetter(r) }
func isIdentPart(r rune) bool  { return r == '_' || unicode.IsLetter(r) || unicode.IsDigit(r) }
func isDigit(r rune) bool      { return '0' <= r && r <= '9' }

// lex splits src into tokens. Pasted typography is normalised here: the Unicode
// minus sign, middle dot, dot operator and multiplication sign, and ** for ^.
func lex(src string) ([]token, error) {
	rs := []rune(src)
	var toks []token
	for i := 0; i < len(rs); {
		r := rs[i]
		col := i + 1
		switch {
		case unicode.IsSpace(r):
			i++
		case isDigit(r) || (r == '.' && i+1 < len(rs) && isDigit(rs[i+1])):
			j := i
			for j < len(rs) && isDigit(rs[j]) {
				j++
			}
			if j < len(rs) && rs[j] == '.' {
				j++
				for j < len(rs) && isDigit(rs[j]) {
					j++
				}
			}
			// An exponent only when digits follow, so that "2e" reads as
			// 2 followed by the name e and gets a clear message.
			if j < len(rs) && (rs[j] == 'e' || rs[j] == 'E') {
				k := j + 1
				if k < len(rs) && (rs[k] == '+' || rs[k] == '-' || rs[k] == '−') {
					k++
				}
				if k < len(rs) && isDigit(rs[k]) {
					for k < len(rs) && isDigit(rs[k]) {
						k++
					}
					j = k
				}
			}
			text := string(rs[i:j])
			if j < len(rs) && rs[j] == '.' {
				for j < len(rs) && (rs[j] == '.' || isDigit(rs[j])) {
					j++
				}
				return nil, &Error{col, fmt.Sprintf("malformed number %q", string(rs[i:j]))}
			}
			v, err := strconv.ParseFloat(strings.ReplaceAll(text, "−", "-"), 64)
			if err != nil {
				// Only overflow reaches here; the scanner admits valid syntax only.
				return nil, &Error{col, fmt.Sprintf("number %s is out of range", text)}
			}
			toks = append(toks, token{kind: tNum, text: text, num: v, col: col})
			i = j
		case isIdentStart(r):
			j := i + 1
			for j < len(rs) && isIdentPart(rs[j]) {
				j++
			}
			toks = append(toks, token{kind: tName, text: string(rs[i:j]), col: col})
			i = j
		default:
			op := r
			switch r {
			case '−', '–':
				op = '-'
			case '·', '×', '⋅':
				op = '*'
			case '*':
				if i+1 < len(rs) && rs[i+1] == '*' {
					op = '^'
					i++
				}
			case '+', '-', '/', '^', '(', ')', ',':
			default:
				return nil, &Error{col, fmt.Sprintf("unexpected character %q", string(r))}
			}
			toks = append(toks, token{kind: tOp, op: op, col: col})
			i++
		}
	}
	toks = append(toks, token{kind: tEnd, col: len(rs) + 1})
	return toks, nil
}

type parser struct {
	toks  []token
	pos   int
	vars  []string
	depth int
}

func (p *parser) peek() token { return p.toks[p.pos] }
func (p *parser) next() token { t := p.toks[p.pos]; p.pos++; return t }

func (p *parser) isOp(r rune) bool {
	t := p.toks[p.pos]
	return t.kind == tOp && t.op == r
}

func (p *parser) allowedVars() string {
	if len(p.vars) == 0 {
		return "this formula takes no variables"
	}
	return "allowed variables: " + strings.Join(p.vars, ", ")
}

// parse reads the whole token list as one expression.
func (p *parser) parse() (*node, error) {
	if p.peek().kind == tEnd {
		return nil, &Error{1, "empty formula"}
	}
	n, err := p.sum()
	if err != nil {
		return nil, err
	}
	if t := p.peek(); t.kind != tEnd {
		return nil, p.unexpected(t)
	}
	return n, nil
}

// unexpected explains a token that cannot continue a complete expression.
func (p *parser) unexpected(t token) error {
	switch {
	case t.kind == tNum || t.kind == tName || (t.kind == tOp && t.op == '('):
		return &Error{t.col, fmt.Sprintf("missing operator before %s; write * for multiplication", t.describe())}
	case t.kind == tOp && t.op == ')':
		return &Error{t.col, `unmatched ")"`}
	case t.kind == tOp && t.op == ',':
		return &Error{t.col, `"," outside the arguments of a function`}
	}
	return &Error{t.col, "unexpected " + t.describe()}
}

// sum := term (("+" | "-") term)*
func (p *parser) sum() (*node, error) {
	a, err := p.term()
	if err != nil {
		return nil, err
	}
	for p.isOp('+') || p.isOp('-') {
		t := p.next()
		b, err := p.term()
		if err != nil {
			return nil, err
		}
		op := opAdd
		if t.op == '-' {
			op = opSub
		}
		a = binaryNode(op, a, b, t.col)
	}
	return a, nil
}

// term := unary (("*" | "/") unary)*
func (p *parser) term() (*node, error) {
	a, err := p.unary()
	if err != nil {
		return nil, err
	}
	for p.isOp('*') || p.isOp('/') {
		t := p.next()
		b, err := p.unary()
		if err != nil {
			return nil, err
		}
		op := opMul
		if t.op == '/' {
			op = opDiv
		}
		a = binaryNode(op, a, b, t.col)
	}
	return a, nil
}

// unary := ("+" | "-") unary | primary ("^" unary)?
// The exponent is a unary so that 2^-x parses; ^ binds tighter than a leading
// sign, so -x^2 = -(x^2), and x^y^z = x^(y^z).
func (p *parser) unary() (*node, error) {
	p.depth++
	defer func() { p.depth-- }()
	if p.depth > MaxDepth {
		return nil, &Error{p.peek().col, fmt.Sprintf("formula nested deeper than %d levels", MaxDepth)}
	}
	if p.isOp('-') || p.isOp('+') {
		t := p.next()
		a, err := p.unary()
		if err != nil {
			return nil, err
		}
		if t.op == '+' {
			return a, nil
		}
		return unaryNode(opNeg, 0, a, t.col), nil
	}
	a, err := p.primary()
	if err != nil {
		return nil, err
	}
	if p.isOp('^') {
		t := p.next()
		b, err := p.unary()
		if err != nil {
			return nil, err
		}
		a = binaryNode(opPow, a, b, t.col)
	}
	return a, nil
}

// primary := number | name | name "(" args ")" | "(" sum ")"
func (p *parser) primary() (*node, error) {
	t := p.next()
	switch t.kind {
	case tNum:
		return constNode(t.num, t.col), nil
	case tName:
		if p.isOp('(') {
			return p.call(t)
		}
		for i, v := range p.vars {
			if v == t.text {
				return &node{op: opVar, v: i, col: t.col}, nil
			}
		}
		if c, ok := constants[t.text]; ok {
			return constNode(c, t.col), nil
		}
		if _, ok := functions[t.text]; ok {
			return nil, &Error{t.col, fmt.Sprintf("function %s needs its arguments in parentheses, e.g. %s(x)", t.text, t.text)}
		}
		return nil, &Error{t.col, fmt.Sprintf("unknown name %q; %s", t.text, p.allowedVars())}
	case tOp:
		if t.op == '(' {
			a, err := p.sum()
			if err != nil {
				return nil, err
			}
			if !p.isOp(')') {
				return nil, p.closeErr(t)
			}
			p.next()
			return a, nil
		}
	case tEnd:
		return nil, &Error{t.col, "formula ends where a number, variable, function or \"(\" is expected"}
	}
	return nil, &Error{t.col, fmt.Sprintf("expected a number, variable, function or \"(\" but found %s", t.describe())}
}

func (p *parser) closeErr(open token) error {
	t := p.peek()
	if t.kind == tNum || t.kind == tName || (t.kind == tOp && t.op == '(') {
		return &Error{t.col, fmt.Sprintf("expected \")\" to close \"(\" at column %d, or an operator before %s", open.col, t.describe())}
	}
	return &Error{t.col, fmt.Sprintf("expected \")\" to close \"(\" at column %d", open.col)}
}

// call parses name(args) after the name; the next token is "(".
func (p *parser) call(name token) (*node, error) {
	fn, ok := functions[name.text]
	if !ok {
		for _, v := range p.vars {
			if v == name.text {
				return nil, p.unexpected(p.peek())
			}
		}
		return nil, &Error{name.col, fmt.Sprintf("unknown function %q; functions: %s", name.text, functionList)}
	}
	open := p.next()
	var args []*node
	if !p.isOp(')') {
		for {
			a, err := p.sum()
			if err != nil {
				return nil, err
			}
			args = append(args, a)
			if p.isOp(',') {
				p.next()
				continue
			}
			if !p.isOp(')') {
				return nil, p.closeErr(open)
			}
			break
		}
	}
	p.next()
	if len(args) != fn.nargs {
		plural := "s"
		if fn.nargs == 1 {
			plural = ""
		}
		return nil, &Error{name.col, fmt.Sprintf("%s takes %d argument%s, got %d", name.text, fn.nargs, plural, len(args))}
	}
	if fn.nargs == 1 {
		return unaryNode(fn.op, 0, args[0], name.col), nil
	}
	return binaryNode(fn.op, args[0], args[1], name.col), nil
}

// validVars checks the variable names a context offers.
func validVars(vars []string) error {
	for i, v := range vars {
		r, size := utf8.DecodeRuneInString(v)
		ok := v != "" && isIdentStart(r)
		for _, r := range v[size:] {
			ok = ok && isIdentPart(r)
		}
		if !ok {
			return &Error{0, fmt.Sprintf("invalid variable name %q", v)}
		}
		if _, isFn := functions[v]; isFn {
			return &Error{0, fmt.Sprintf("variable name %q is a function name", v)}
		}
		for _, w := range vars[:i] {
			if w == v {
				return &Error{0, fmt.Sprintf("variable %q listed twice", v)}
			}
		}
	}
	return nil
}
