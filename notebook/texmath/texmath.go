// Package texmath turns the TeX-like mathematics written in notebook text
// into MathML Core markup, which browsers render natively. It is a small
// parser of its own that works offline, never executes anything and
// escapes everything it copies from the source, so its output is safe to
// insert into a page as it is.
package texmath

import (
	"fmt"
	"strings"
	"unicode"
	"unicode/utf8"
)

// Limits on the source, so that hostile or runaway input costs little.
const (
	// MaxLen is the longest source accepted, in bytes.
	MaxLen = 2000
	// MaxDepth is the deepest nesting of groups, fractions, roots,
	// scripts and fences accepted.
	MaxDepth = 50
)

// ErrorClass is the class attribute of the mtext elements that show
// source the parser could not understand.
const ErrorClass = "math-error"

// errorStyle keeps errors visible on pages without a stylesheet.
const errorStyle = "color:#b00020;background:#fde8ec"

// MathML returns the MathML rendering of the TeX-like source src as a
// <math> element, with display="block" when display is set. Parts of the
// source that cannot be understood (unknown commands, unbalanced braces,
// input over MaxLen or nested deeper than MaxDepth) are shown in place as
// an mtext of class ErrorClass; they are never dropped silently.
func MathML(src string, display bool) string {
	var b strings.Builder
	b.WriteString(`<math xmlns="http://www.w3.org/1998/Math/MathML"`)
	if display {
		b.WriteString(` display="block"`)
	}
	b.WriteString(">")
	if len(src) > MaxLen {
		b.WriteString(errorText(fmt.Sprintf("formula too long: %d characters, limit %d", len(src), MaxLen)))
	} else {
		p := &parser{src: decode(src), display: display}
		b.WriteString(p.top())
	}
	b.WriteString("</math>")
	return b.String()
}

// decode turns src into runes, replacing invalid UTF-8 and characters XML
// forbids, so that the output always parses.
func decode(src string) []rune {
	rs := make([]rune, 0, len(src))
	for i := 0; i < len(src); {
		r, n := utf8.DecodeRuneInString(src[i:])
		i += n
		if !xmlChar(r) {
			r = '\uFFFD'
		}
		rs = append(rs, r)
	}
	return rs
}

// xmlChar reports whether r is allowed in XML 1.0 text.
func xmlChar(r rune) bool {
	switch {
	case r == '\t' || r == '\n' || r == '\r':
		return true
	case r < 0x20:
		return false
	case r >= 0xD800 && r <= 0xDFFF, r == 0xFFFE, r == 0xFFFF, r > 0x10FFFF:
		return false
	}
	return true
}

// esc escapes text for XML content and attribute values.
func esc(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch r {
		case '&':
			b.WriteString("&amp;")
		case '<':
			b.WriteString("&lt;")
		case '>':
			b.WriteString("&gt;")
		case '"':
			b.WriteString("&quot;")
		case '\'':
			b.WriteString("&#39;")
		default:
			if xmlChar(r) {
				b.WriteRune(r)
			} else {
				b.WriteRune('\uFFFD')
			}
		}
	}
	return b.String()
}

func errorText(msg string) string {
	return `<mtext class="` + ErrorClass + `" style="` + errorStyle + `">` + esc(msg) + `</mtext>`
}

// kind classifies a parsed atom for spacing and script placement.
type kind int

const (
	kOrd    kind = iota // letters, numbers, groups
	kOp                 // operators and relations
	kOpen               // opening delimiters
	kFunc               // named functions (sin, log): take an apply-function mark
	kLimits             // sums, lim: scripts under and over in display style
	kSpace              // spacing and empty atoms
)

// atom is one rendered element with what the parser needs to know about it.
type atom struct {
	ml   string
	kind kind
	// noLimits is set by \nolimits; limits by \limits.
	forceLimits, noLimits bool
}

// variant is the font selected by \mathbf and friends.
type variant int

const (
	vNone variant = iota
	vUpright
	vItalic
	vBold
	vBoldItalic
	vScript
	vDouble
	vSans
	vMono
	vFraktur
)

type parser struct {
	src     []rune
	pos     int
	depth   int
	display bool
	variant variant
}

// stop reasons for expression parsing.
const (
	stopEOF     = "eof"
	stopBrace   = "}"
	stopBracket = "]"
	stopRight   = `\right`
	stopMiddle  = `\middle`
	stopAmp     = "&"
	stopRow     = `\\`
	stopEnd     = `\end`
)

func (p *parser) eof() bool { return p.pos >= len(p.src) }

func (p *parser) peek() rune {
	if p.eof() {
		return 0
	}
	return p.src[p.pos]
}

func (p *parser) skipSpace() {
	for !p.eof() && unicode.IsSpace(p.src[p.pos]) {
		p.pos++
	}
}

// peekCommand returns the command at the current position ("" if none)
// and the position after it, without consuming it.
func (p *parser) peekCommand() (string, int) {
	if p.peek() != '\\' {
		return "", p.pos
	}
	i := p.pos + 1
	if i >= len(p.src) {
		return `\`, i
	}
	if !isASCIILetter(p.src[i]) {
		return `\` + string(p.src[i]), i + 1
	}
	j := i
	for j < len(p.src) && isASCIILetter(p.src[j]) {
		j++
	}
	// \operatorname* and \align* style starred names.
	if j < len(p.src) && p.src[j] == '*' && string(p.src[i:j]) == "operatorname" {
		j++
	}
	return `\` + string(p.src[i:j]), j
}

func isASCIILetter(r rune) bool { return r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' }

// top parses the whole source. Rows separated by \\ outside any
// environment are stacked and centred, as in a display.
func (p *parser) top() string {
	var rows []string
	cur := ""
	for {
		atoms, stop := p.expr(stopRow)
		cur += join(atoms)
		if stop == stopBrace {
			// A closing brace with nothing to close: show it and go on.
			cur += errorText("unmatched }")
			continue
		}
		rows = append(rows, cur)
		cur = ""
		if stop == stopEOF {
			break
		}
	}
	if len(rows) == 1 {
		return rows[0]
	}
	var b strings.Builder
	b.WriteString(`<mtable displaystyle="true">`)
	for _, r := range rows {
		b.WriteString("<mtr><mtd>" + r + "</mtd></mtr>")
	}
	b.WriteString("</mtable>")
	return b.String()
}

// join concatenates atoms, adding the apply-function mark after named
// functions and a thin space when a letter or group follows.
func join(atoms []atom) string {
	var b strings.Builder
	for i, a := range atoms {
		if a.kind == kOp && (i == 0 || atoms[i-1].kind == kOp || atoms[i-1].kind == kOpen) {
			switch a.ml {
			case "<mo>\u2212</mo>", "<mo>+</mo>", "<mo>±</mo>", "<mo>∓</mo>":
				// A sign after a relation or an opening is unary, as in TeX.
				a.ml = `<mo form="prefix">` + a.ml[4:]
			}
		}
		b.WriteString(a.ml)
		if a.kind == kFunc || (a.kind == kLimits && strings.HasPrefix(a.ml, "<mi")) {
			b.WriteString("<mo>\u2061</mo>")
			if i+1 < len(atoms) && (atoms[i+1].kind == kOrd || atoms[i+1].kind == kFunc || atoms[i+1].kind == kLimits) {
				b.WriteString(`<mspace width="0.1667em"/>`)
			}
		}
	}
	return b.String()
}

// row renders atoms as a single MathML element, wrapping in an mrow when
// there is more (or less) than one.
func row(atoms []atom) string {
	if len(atoms) == 1 && atoms[0].kind != kFunc {
		return atoms[0].ml
	}
	return "<mrow>" + join(atoms) + "</mrow>"
}

// expr parses atoms until one of the stops allowed by the caller (or the
// end, or a closing brace, which always stop) and returns which one.
// A stop that is not allowed here is reported as an error in place.
func (p *parser) expr(allowed ...string) ([]atom, string) {
	var atoms []atom
	allow := func(s string) bool {
		for _, a := range allowed {
			if a == s {
				return true
			}
		}
		return false
	}
	for {
		p.skipSpace()
		if p.eof() {
			return atoms, stopEOF
		}
		r := p.peek()
		switch {
		case r == '}':
			p.pos++
			return atoms, stopBrace
		case r == ']' && allow(stopBracket):
			p.pos++
			return atoms, stopBracket
		case r == '&':
			p.pos++
			if allow(stopAmp) {
				return atoms, stopAmp
			}
			atoms = append(atoms, atom{ml: errorText("& outside a table"), kind: kOrd})
			continue
		case r == '\\':
			cmd, next := p.peekCommand()
			switch cmd {
			case stopRow, stopRight, stopMiddle, stopEnd:
				if allow(cmd) {
					p.pos = next
					return atoms, cmd
				}
				if cmd == stopRow && !allow(stopAmp) {
					// A stray line break inside a group: ignore it as TeX would.
					p.pos = next
					continue
				}
				p.pos = next
				atoms = append(atoms, atom{ml: errorText(cmd + " without its opening"), kind: kOrd})
				continue
			case `\displaystyle`, `\textstyle`:
				p.pos = next
				rest, stop := p.expr(allowed...)
				ds := "true"
				if cmd == `\textstyle` {
					ds = "false"
				}
				atoms = append(atoms, atom{ml: `<mstyle displaystyle="` + ds + `">` + join(rest) + "</mstyle>", kind: kOrd})
				return atoms, stop
			}
		}
		a, ok := p.scripted()
		if ok {
			atoms = append(atoms, a)
		}
	}
}

// enter and leave track nesting; enter reports false (and the caller
// shows an error) past MaxDepth.
func (p *parser) enter() bool {
	p.depth++
	return p.depth <= MaxDepth
}

func (p *parser) leave() { p.depth-- }

// tooDeep skips the rest of the source: deeper nesting is refused as a whole.
func (p *parser) tooDeep() atom {
	p.pos = len(p.src)
	return atom{ml: errorText(fmt.Sprintf("formula nested deeper than %d levels", MaxDepth)), kind: kOrd}
}

// scripted parses one atom with its sub- and superscripts and primes.
func (p *parser) scripted() (atom, bool) {
	if !p.enter() {
		p.leave()
		return p.tooDeep(), true
	}
	defer p.leave()
	p.skipSpace()
	if p.eof() {
		return atom{}, false
	}
	var base atom
	r := p.peek()
	if r == '^' || r == '_' || r == '\'' {
		base = atom{ml: "<mrow></mrow>", kind: kOrd}
	} else {
		var ok bool
		base, ok = p.primary()
		if !ok {
			return atom{}, false
		}
	}
	var sub, sup string
	var primes, errs string // errs follows the atom, flat, however many
	for {
		p.skipSpace()
		cmd, next := p.peekCommand()
		if cmd == `\limits` || cmd == `\nolimits` {
			p.pos = next
			base.forceLimits = cmd == `\limits`
			base.noLimits = cmd == `\nolimits`
			continue
		}
		r := p.peek()
		switch r {
		case '\'':
			p.pos++
			primes += "′"
			continue
		case '^', '_':
			p.pos++
			arg := p.argument()
			if r == '^' {
				if sup != "" {
					errs += errorText("double superscript")
					continue
				}
				sup = arg
			} else {
				if sub != "" {
					errs += errorText("double subscript")
					continue
				}
				sub = arg
			}
			continue
		}
		break
	}
	if primes != "" {
		if sup != "" {
			sup = "<mrow><mo>" + primes + "</mo>" + sup + "</mrow>"
		} else {
			sup = "<mo>" + primes + "</mo>"
		}
	}
	if sub == "" && sup == "" {
		if errs != "" {
			base.ml = "<mrow>" + base.ml + errs + "</mrow>"
		}
		return base, true
	}
	under := base.kind == kLimits && p.display && !base.noLimits || base.forceLimits
	tags := [3]string{"msub", "msup", "msubsup"}
	if under {
		tags = [3]string{"munder", "mover", "munderover"}
	}
	k := base.kind
	if k == kOp || k == kOpen {
		k = kOrd // a scripted symbol is an operand, as ‖u‖² or )²
	}
	if k == kLimits || k == kFunc {
		k = kFunc
		if base.kind == kLimits && !strings.HasPrefix(base.ml, "<mi") {
			k = kOp // sums and integrals need no apply-function mark
		}
	}
	var ml string
	switch {
	case sup == "":
		ml = "<" + tags[0] + ">" + base.ml + sub + "</" + tags[0] + ">"
	case sub == "":
		ml = "<" + tags[1] + ">" + base.ml + sup + "</" + tags[1] + ">"
	default:
		ml = "<" + tags[2] + ">" + base.ml + sub + sup + "</" + tags[2] + ">"
	}
	if errs != "" {
		ml = "<mrow>" + ml + errs + "</mrow>"
	}
	return atom{ml: ml, kind: k}, true
}

// argument parses the argument of a command or script: a braced group or
// a single character or command.
func (p *parser) argument() string {
	p.skipSpace()
	if p.eof() {
		return errorText("missing argument at the end")
	}
	switch p.peek() {
	case '{':
		p.pos++
		if !p.enter() {
			p.leave()
			return p.tooDeep().ml
		}
		defer p.leave()
		atoms, stop := p.expr()
		if stop != stopBrace {
			return "<mrow>" + join(atoms) + errorText("missing }") + "</mrow>"
		}
		return row(atoms)
	case '}', '&', '^', '_':
		return errorText("missing argument before " + string(p.peek()))
	}
	if cmd, _ := p.peekCommand(); cmd == stopRow || cmd == stopRight || cmd == stopEnd || cmd == stopMiddle {
		return errorText("missing argument before " + cmd)
	}
	if r := p.peek(); r >= '0' && r <= '9' {
		// One digit only, as TeX reads \frac12.
		p.pos++
		return "<mn>" + mapVariant(string(r), p.variant) + "</mn>"
	}
	a, ok := p.primary()
	if !ok {
		return "<mrow></mrow>"
	}
	if a.kind == kFunc {
		return row([]atom{a})
	}
	return a.ml
}

// textArgument reads a braced group as plain text for \text and
// \operatorname, honouring only escaped braces and backslashes.
func (p *parser) textArgument() (string, bool) {
	p.skipSpace()
	if p.peek() != '{' {
		if p.eof() {
			return "", false
		}
		r := p.src[p.pos]
		p.pos++
		return string(r), true
	}
	p.pos++
	var b strings.Builder
	level := 0
	for !p.eof() {
		r := p.src[p.pos]
		p.pos++
		switch r {
		case '\\':
			if !p.eof() {
				n := p.src[p.pos]
				if n == '{' || n == '}' || n == '\\' || n == '$' || n == '%' || n == '&' || n == '#' || n == '_' {
					b.WriteRune(n)
					p.pos++
					continue
				}
			}
			b.WriteRune(r)
		case '{':
			level++
		case '}':
			if level == 0 {
				return b.String(), true
			}
			level--
		default:
			b.WriteRune(r)
		}
	}
	return b.String(), false
}

// number renders a number starting with first, taking the digits and a
// decimal point that follow.
func (p *parser) number(first string) string {
	s := first
	for !p.eof() {
		r := p.src[p.pos]
		if r >= '0' && r <= '9' {
			s += string(r)
			p.pos++
			continue
		}
		if r == '.' && p.pos+1 < len(p.src) && p.src[p.pos+1] >= '0' && p.src[p.pos+1] <= '9' {
			s += "."
			p.pos++
			continue
		}
		break
	}
	if p.variant != vNone && p.variant != vUpright && p.variant != vItalic {
		return "<mn>" + esc(mapVariant(s, p.variant)) + "</mn>"
	}
	return "<mn>" + esc(s) + "</mn>"
}

// primary parses one element without scripts. It reports false when
// nothing was produced (a lone \limits, for instance).
func (p *parser) primary() (atom, bool) {
	r := p.peek()
	switch {
	case r == '{':
		p.pos++
		atoms, stop := p.expr()
		s := row(atoms)
		if stop != stopBrace {
			s = "<mrow>" + s + errorText("missing }") + "</mrow>"
		}
		return atom{ml: s, kind: kOrd}, true
	case r == '\\':
		return p.command()
	case r >= '0' && r <= '9':
		p.pos++
		return atom{ml: p.number(string(r)), kind: kOrd}, true
	case r == '.' && p.pos+1 < len(p.src) && p.src[p.pos+1] >= '0' && p.src[p.pos+1] <= '9':
		p.pos++
		return atom{ml: p.number("."), kind: kOrd}, true
	case r == '~':
		p.pos++
		return atom{ml: `<mspace width="0.25em"/>`, kind: kSpace}, true
	}
	p.pos++
	if unicode.IsLetter(r) {
		if p.variant == vUpright {
			// A run of upright letters is one word: \mathrm{div}, \mathrm{d}.
			word := string(r)
			for !p.eof() && unicode.IsLetter(p.src[p.pos]) {
				word += string(p.src[p.pos])
				p.pos++
			}
			if utf8.RuneCountInString(word) == 1 {
				return atom{ml: `<mi mathvariant="normal">` + esc(word) + "</mi>", kind: kOrd}, true
			}
			return atom{ml: "<mi>" + esc(word) + "</mi>", kind: kOrd}, true
		}
		return atom{ml: "<mi>" + esc(mapVariant(string(r), p.variant)) + "</mi>", kind: kOrd}, true
	}
	if unicode.IsDigit(r) {
		return atom{ml: "<mn>" + esc(string(r)) + "</mn>", kind: kOrd}, true
	}
	switch r {
	case '-':
		return atom{ml: "<mo>\u2212</mo>", kind: kOp}, true
	case '*':
		return atom{ml: "<mo>\u2217</mo>", kind: kOp}, true
	case '(', '[':
		return atom{ml: `<mo stretchy="false">` + string(r) + "</mo>", kind: kOpen}, true
	case ')', ']':
		// Closings end an operand: a sign after them is binary.
		return atom{ml: `<mo stretchy="false">` + string(r) + "</mo>", kind: kOrd}, true
	case '/':
		return atom{ml: `<mo lspace="0" rspace="0">/</mo>`, kind: kOp}, true
	case '|':
		// As in TeX, a bar is an ordinary symbol: no operator spacing.
		return atom{ml: `<mo stretchy="false" lspace="0" rspace="0">|</mo>`, kind: kOrd}, true
	case '\uFFFD':
		return atom{ml: errorText("invalid character"), kind: kOrd}, true
	}
	return atom{ml: "<mo>" + esc(string(r)) + "</mo>", kind: kOp}, true
}

// command parses a command starting at the backslash.
func (p *parser) command() (atom, bool) {
	cmd, next := p.peekCommand()
	p.pos = next
	name := cmd[1:]
	if s, ok := greek[name]; ok {
		if name[0] >= 'A' && name[0] <= 'Z' && p.variant != vItalic && p.variant != vBoldItalic {
			return atom{ml: `<mi mathvariant="normal">` + mapVariant(s, p.variant) + "</mi>", kind: kOrd}, true
		}
		v := p.variant
		if v == vUpright {
			return atom{ml: `<mi mathvariant="normal">` + s + "</mi>", kind: kOrd}, true
		}
		return atom{ml: "<mi>" + mapVariant(s, v) + "</mi>", kind: kOrd}, true
	}
	if s, ok := ordinary[name]; ok {
		return atom{ml: `<mi mathvariant="normal">` + esc(s) + "</mi>", kind: kOrd}, true
	}
	if s, ok := operators[name]; ok {
		k := kOp
		switch s {
		case "{", "⟨", "⌊", "⌈":
			k = kOpen
		}
		if s == "‖" || s == "|" {
			return atom{ml: `<mo stretchy="false" lspace="0" rspace="0">` + s + "</mo>", kind: kOrd}, true
		}
		if k == kOpen {
			return atom{ml: `<mo stretchy="false">` + esc(s) + "</mo>", kind: k}, true
		}
		if s == "}" || s == "⟩" || s == "⌋" || s == "⌉" {
			return atom{ml: `<mo stretchy="false">` + esc(s) + "</mo>", kind: kOrd}, true
		}
		return atom{ml: "<mo>" + esc(s) + "</mo>", kind: k}, true
	}
	if op, ok := largeOps[name]; ok {
		k := kOp
		if op.limits {
			k = kLimits
		}
		return atom{ml: "<mo>" + op.char + "</mo>", kind: k}, true
	}
	if lim, ok := functions[name]; ok {
		text := name
		if t, ok := functionText[name]; ok {
			text = t
		}
		k := kFunc
		if lim {
			k = kLimits
		}
		return atom{ml: "<mi>" + text + "</mi>", kind: k}, true
	}
	if w, ok := spaces[name]; ok {
		return atom{ml: `<mspace width="` + w + `"/>`, kind: kSpace}, true
	}
	if v, ok := fonts[name]; ok {
		saved := p.variant
		p.variant = v
		s := p.argument()
		p.variant = saved
		return atom{ml: s, kind: kOrd}, true
	}
	if a, ok := accents[name]; ok {
		base := p.argument()
		stretch := "false"
		if a.stretch {
			stretch = "true"
		}
		mark := `<mo stretchy="` + stretch + `">` + esc(a.mark) + "</mo>"
		if a.under {
			return atom{ml: `<munder accentunder="true">` + base + mark + "</munder>", kind: kOrd}, true
		}
		return atom{ml: `<mover accent="true">` + base + mark + "</mover>", kind: kOrd}, true
	}
	if size, ok := bigSizes[strings.TrimRight(name, "lrm")]; ok {
		d, ok := p.delimiter()
		if !ok {
			return atom{ml: errorText(cmd + " needs a delimiter such as ( or \\|"), kind: kOrd}, true
		}
		k := kOp
		if strings.HasSuffix(name, "l") {
			k = kOpen
		}
		// The mrow makes the size hold also as the base of a script,
		// where Chromium does not stretch an operator.
		return atom{ml: `<mrow><mo stretchy="true" symmetric="true" minsize="` + size + `" maxsize="` + size + `">` + esc(d) + "</mo></mrow>", kind: k}, true
	}
	switch name {
	case "frac", "dfrac", "tfrac", "cfrac":
		num := p.argument()
		den := p.argument()
		ml := "<mfrac>" + num + den + "</mfrac>"
		switch name {
		case "dfrac", "cfrac":
			ml = `<mstyle displaystyle="true">` + ml + "</mstyle>"
		case "tfrac":
			ml = `<mstyle displaystyle="false">` + ml + "</mstyle>"
		}
		return atom{ml: ml, kind: kOrd}, true
	case "binom":
		top := p.argument()
		bot := p.argument()
		return atom{ml: `<mrow><mo>(</mo><mfrac linethickness="0">` + top + bot + `</mfrac><mo>)</mo></mrow>`, kind: kOrd}, true
	case "sqrt":
		p.skipSpace()
		if p.peek() == '[' {
			p.pos++
			if !p.enter() {
				p.leave()
				return p.tooDeep(), true
			}
			idx, stop := p.expr(stopBracket)
			p.leave()
			index := row(idx)
			if stop != stopBracket {
				index = "<mrow>" + join(idx) + errorText("missing ]") + "</mrow>"
			}
			return atom{ml: "<mroot>" + p.argument() + index + "</mroot>", kind: kOrd}, true
		}
		arg := p.argument()
		return atom{ml: "<msqrt>" + arg + "</msqrt>", kind: kOrd}, true
	case "text", "textrm", "textnormal", "mbox", "textup", "textit", "textbf":
		t, ok := p.textArgument()
		// Spaces at the ends of text would collapse; keep them as no-break spaces.
		if trimmed := strings.TrimLeft(t, " "); len(trimmed) < len(t) {
			t = strings.Repeat("\u00a0", len(t)-len(trimmed)) + trimmed
		}
		if trimmed := strings.TrimRight(t, " "); len(trimmed) < len(t) {
			t = trimmed + strings.Repeat("\u00a0", len(t)-len(trimmed))
		}
		ml := "<mtext>" + esc(t) + "</mtext>"
		switch name {
		case "textit":
			ml = `<mtext style="font-style:italic">` + esc(t) + "</mtext>"
		case "textbf":
			ml = `<mtext style="font-weight:bold">` + esc(t) + "</mtext>"
		}
		if !ok {
			ml += errorText("missing } after \\" + name)
		}
		return atom{ml: ml, kind: kOrd}, true
	case "operatorname", "operatorname*":
		t, ok := p.textArgument()
		t = strings.TrimSpace(t)
		if !ok || t == "" {
			return atom{ml: errorText(`\operatorname needs a name in braces`), kind: kOrd}, true
		}
		k := kFunc
		if name == "operatorname*" {
			k = kLimits
		}
		return atom{ml: "<mi>" + esc(t) + "</mi>", kind: k}, true
	case "left":
		return p.fenced()
	case "begin":
		return p.environment()
	case "not":
		a, ok := p.scripted()
		if !ok {
			return atom{ml: errorText(`\not needs a symbol`), kind: kOrd}, true
		}
		return atom{ml: "<mrow>" + a.ml + "<mo>\u0338</mo></mrow>", kind: kOp}, true
	case "!":
		return atom{ml: `<mspace width="0"/>`, kind: kSpace}, true
	case "limits", "nolimits":
		return atom{}, false
	}
	return atom{ml: errorText("unknown command " + cmd), kind: kOrd}, true
}

// delimiter reads a delimiter after \left, \right, \middle or \big.
func (p *parser) delimiter() (string, bool) {
	p.skipSpace()
	if p.eof() {
		return "", false
	}
	if p.peek() == '\\' {
		cmd, next := p.peekCommand()
		if d, ok := delimiters[cmd]; ok {
			p.pos = next
			return d, true
		}
		return "", false
	}
	if d, ok := delimiters[string(p.peek())]; ok {
		p.pos++
		return d, true
	}
	return "", false
}

// fenced parses \left d ... \middle d ... \right d.
func (p *parser) fenced() (atom, bool) {
	if !p.enter() {
		p.leave()
		return p.tooDeep(), true
	}
	defer p.leave()
	fence := func(d string) string {
		if d == "" {
			return ""
		}
		return `<mo fence="true" stretchy="true" symmetric="true">` + esc(d) + "</mo>"
	}
	open, ok := p.delimiter()
	if !ok {
		return atom{ml: errorText(`\left needs a delimiter such as ( [ | \| \langle or .`), kind: kOrd}, true
	}
	var b strings.Builder
	b.WriteString("<mrow>" + fence(open))
	for {
		atoms, stop := p.expr(stopRight, stopMiddle)
		b.WriteString(join(atoms))
		switch stop {
		case stopMiddle:
			d, ok := p.delimiter()
			if !ok {
				b.WriteString(errorText(`\middle needs a delimiter`))
				continue
			}
			b.WriteString(`<mo stretchy="true" symmetric="true">` + esc(d) + "</mo>")
			continue
		case stopRight:
			d, ok := p.delimiter()
			if !ok {
				b.WriteString(errorText(`\right needs a delimiter such as ) ] | \| \rangle or .`))
			}
			b.WriteString(fence(d) + "</mrow>")
			return atom{ml: b.String(), kind: kOrd}, true
		default:
			if stop == stopBrace {
				p.pos-- // leave the brace to the enclosing group
			}
			b.WriteString(errorText(`\left without \right`) + "</mrow>")
			return atom{ml: b.String(), kind: kOrd}, true
		}
	}
}

// environment parses \begin{name} ... \end{name} into a table.
func (p *parser) environment() (atom, bool) {
	name, ok := p.textArgument()
	env, known := environments[name]
	if !ok || !known {
		return atom{ml: errorText(`unknown environment \begin{` + name + "}; allowed: aligned, cases, matrix, pmatrix, bmatrix, vmatrix"), kind: kOrd}, true
	}
	if !p.enter() {
		p.leave()
		return p.tooDeep(), true
	}
	defer p.leave()
	if name == "array" {
		p.textArgument() // column specification, not used
	}
	var rows [][]string
	cells := []string{}
	var b strings.Builder
	closed := false
	for !closed {
		atoms, stop := p.expr(stopAmp, stopRow, stopEnd)
		cell := join(atoms)
		if env.align == "rl" && len(cells)%2 == 1 && strings.HasPrefix(cell, "<mo") {
			// As TeX's {}=: the relation is infix, with its spacing.
			cell = "<mrow></mrow>" + cell
		}
		cells = append(cells, cell)
		switch stop {
		case stopAmp:
			continue
		case stopRow:
			rows = append(rows, cells)
			cells = []string{}
			continue
		case stopEnd:
			end, _ := p.textArgument()
			if end != name {
				cells[len(cells)-1] += errorText(`\begin{` + name + `} ended by \end{` + end + "}")
			}
		default:
			if stop == stopBrace {
				p.pos--
			}
			cells[len(cells)-1] += errorText(`\begin{` + name + `} without \end{` + name + "}")
		}
		closed = true
	}
	if len(cells) > 1 || cells[0] != "" {
		rows = append(rows, cells)
	}
	ds := "false"
	if env.display {
		ds = "true"
	}
	b.WriteString("<mrow>")
	if env.open != "" {
		b.WriteString(`<mo fence="true" stretchy="true" symmetric="true">` + esc(env.open) + "</mo>")
	}
	b.WriteString(`<mtable displaystyle="` + ds + `">`)
	for _, r := range rows {
		b.WriteString("<mtr>")
		for j, c := range r {
			align := "center"
			switch env.align {
			case "rl":
				align = "right"
				if j%2 == 1 {
					align = "left"
				}
			case "l":
				align = "left"
			}
			pad := ""
			if env.align == "rl" {
				// Aligned columns meet at the relation: no gap inside a pair.
				if j%2 == 0 {
					pad = ";padding-right:0"
				} else {
					pad = ";padding-left:0"
				}
			}
			b.WriteString(`<mtd columnalign="` + align + `" style="text-align:` + align + pad + `">` + c + "</mtd>")
		}
		b.WriteString("</mtr>")
	}
	b.WriteString("</mtable>")
	if env.close != "" {
		b.WriteString(`<mo fence="true" stretchy="true" symmetric="true">` + esc(env.close) + "</mo>")
	}
	b.WriteString("</mrow>")
	return atom{ml: b.String(), kind: kOrd}, true
}
