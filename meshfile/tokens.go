package meshfile

import (
	"fmt"
	"math"
	"strconv"
)

// tokens reads whitespace-separated words of an ASCII file and knows the
// line each is on, for messages.
type tokens struct {
	b    []byte
	pos  int
	line int
}

func newTokens(b []byte) *tokens { return &tokens{b: b, line: 1} }

func (t *tokens) skipSpace() {
	for t.pos < len(t.b) {
		switch t.b[t.pos] {
		case '\n':
			t.line++
		case ' ', '\t', '\r', '\f', '\v':
		default:
			return
		}
		t.pos++
	}
}

// word returns the next word, or "" at the end.
func (t *tokens) word() string {
	t.skipSpace()
	start := t.pos
	for t.pos < len(t.b) {
		c := t.b[t.pos]
		if c == ' ' || c == '\t' || c == '\r' || c == '\n' || c == '\f' || c == '\v' {
			break
		}
		t.pos++
	}
	return string(t.b[start:t.pos])
}

// restOfLine returns what is left of the current line, trimmed.
func (t *tokens) restOfLine() string {
	for t.pos < len(t.b) && (t.b[t.pos] == ' ' || t.b[t.pos] == '\t') {
		t.pos++
	}
	start := t.pos
	for t.pos < len(t.b) && t.b[t.pos] != '\n' {
		t.pos++
	}
	s := string(t.b[start:t.pos])
	for len(s) > 0 && (s[len(s)-1] == '\r' || s[len(s)-1] == ' ') {
		s = s[:len(s)-1]
	}
	return s
}

func (t *tokens) errorf(format string, a ...any) error {
	return fmt.Errorf("line %d: %s", t.line, fmt.Sprintf(format, a...))
}

// expect reads a word that must be want.
func (t *tokens) expect(want string) error {
	if w := t.word(); w != want {
		if w == "" {
			return t.errorf("the file ends where %s was expected", want)
		}
		return t.errorf("expected %s, found %q", want, clip(w))
	}
	return nil
}

// int reads an integer in [lo, hi]; what names it in messages.
func (t *tokens) int(what string, lo, hi int) (int, error) {
	w := t.word()
	if w == "" {
		return 0, t.errorf("the file ends where %s was expected", what)
	}
	v, err := strconv.Atoi(w)
	if err != nil {
		return 0, t.errorf("%s: %q is not an integer", what, clip(w))
	}
	if v < lo || v > hi {
		return 0, t.errorf("%s is %d; want %d to %d", what, v, lo, hi)
	}
	return v, nil
}

// float reads a finite number.
func (t *tokens) float(what string) (float64, error) {
	w := t.word()
	if w == "" {
		return 0, t.errorf("the file ends where %s was expected", what)
	}
	v, err := strconv.ParseFloat(w, 64)
	if err != nil {
		return 0, t.errorf("%s: %q is not a number", what, clip(w))
	}
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return 0, t.errorf("%s is %s; want a finite number", what, w)
	}
	return v, nil
}

// count reads a count that the rest of the file must be able to hold: at
// least per bytes each, so that a forged count cannot make us allocate.
func (t *tokens) count(what string, per int) (int, error) {
	return t.int(what, 0, (len(t.b)-t.pos)/max(per, 1)+1)
}

func clip(s string) string {
	if len(s) > 40 {
		return s[:40] + "…"
	}
	return s
}
