package notebook

import (
	"context"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"
	"sync"
)

// Kind is one sort of cell: its inputs (with defaults and validation) and
// its evaluation. A new kind is one file that calls Register in init.
// A kind may also implement Renderer to show itself in its own way.
type Kind interface {
	// Name is the plain English name used in files ("note", "mesh").
	Name() string
	// Doc is one sentence for people choosing a kind.
	Doc() string
	// Inputs lists the inputs the kind reads, in display order.
	Inputs() []Input
	// Evaluate computes the results from validated inputs. It reads the
	// results of cells named in Ref inputs through c, checks c.Err in long
	// loops, and returns a *FieldError to blame one input.
	Evaluate(c *Context, in Values) (*Results, error)
}

// Enclosing is implemented by kinds whose results include intervals: pairs
// of their scalars that enclose one quantity. The engine adds them to the
// results after Evaluate (Results.AddIntervals), and loading a version-1
// file adds them to saved results.
type Enclosing interface {
	Intervals() []IntervalDef
}

// Renderer is implemented by kinds that render their cell body themselves
// (a note renders its text). The returned HTML must be safe: every string
// from the file escaped.
type Renderer interface {
	RenderHTML(in Values, r *Results) string
}

var (
	kindsMu sync.RWMutex
	kinds   = map[string]Kind{}
)

// Register makes a kind available under k.Name(). It panics when the name is
// taken or not a plain lower-case word, since that is a programming error
// found at start-up.
func Register(k Kind) {
	kindsMu.Lock()
	defer kindsMu.Unlock()
	n := k.Name()
	if n == "" || strings.Trim(n, "abcdefghijklmnopqrstuvwxyz") != "" {
		panic(fmt.Sprintf("notebook: kind name %q must be a lower-case word", n))
	}
	if _, dup := kinds[n]; dup {
		panic(fmt.Sprintf("notebook: kind %q registered twice", n))
	}
	kinds[n] = k
}

// Lookup returns the kind called name.
func Lookup(name string) (Kind, bool) {
	kindsMu.RLock()
	defer kindsMu.RUnlock()
	k, ok := kinds[name]
	return k, ok
}

// Kinds returns the names of all registered kinds, sorted.
func Kinds() []string {
	kindsMu.RLock()
	defer kindsMu.RUnlock()
	out := make([]string, 0, len(kinds))
	for n := range kinds {
		out = append(out, n)
	}
	slices.Sort(out)
	return out
}

// Type is the type of an input.
type Type int

// Input types. Numbers travel as JSON numbers, texts as strings, lists as
// arrays.
const (
	Number  Type = iota // a finite float64
	Integer             // a whole number
	Text                // a string
	Bool                // true or false
	Choice              // one of Input.Choices
	Ref                 // the id of an earlier cell: a dependency
	Numbers             // a list of finite numbers
	Texts               // a list of strings
)

var typeWords = [...]string{"a number", "a whole number", "a text", "true or false", "one of", "the id of an earlier cell", "a list of numbers", "a list of texts"}

// Bound is one end of the range of a numeric input.
type Bound struct {
	Set    bool
	Value  float64
	Strict bool
}

// Above is the bound "> v"; AtLeast is ">= v"; Below is "< v"; AtMost is "<= v".
func Above(v float64) Bound { return Bound{true, v, true} }

// AtLeast is the bound ">= v".
func AtLeast(v float64) Bound { return Bound{true, v, false} }

// Below is the bound "< v".
func Below(v float64) Bound { return Bound{true, v, true} }

// AtMost is the bound "<= v".
func AtMost(v float64) Bound { return Bound{true, v, false} }

// Input describes one input of a kind.
type Input struct {
	Name string
	Doc  string
	Type Type
	// Default is used when the input is absent: float64 for Number, int for
	// Integer, string for Text, Choice and Ref, bool, []float64 or []string.
	// A nil Default makes the input required, unless Optional is set.
	Default  any
	Optional bool
	// Low and High bound numbers, and each element of Numbers.
	Low, High Bound
	Choices   []string
	// RefKinds, when set, limits a Ref to cells of these kinds.
	RefKinds []string
	// MaxLen limits the length of a Text in bytes (0: MaxStringBytes).
	MaxLen int
	// File marks a Text that holds a file, gzip-compressed and base64-
	// encoded; the page offers to open or drop one, and sets the input
	// named "file" to its name.
	File bool
	// Check, when set, is a further rule; its error message should read
	// "want ..., got ...".
	Check func(v any) error
}

// Want says in words what the input accepts.
func (in Input) Want() string {
	w := typeWords[in.Type]
	if in.Type == Choice {
		return w + " " + strings.Join(in.Choices, ", ")
	}
	if in.Type == Number || in.Type == Integer || in.Type == Numbers {
		var parts []string
		if in.Low.Set {
			parts = append(parts, map[bool]string{true: "> ", false: "≥ "}[in.Low.Strict]+fmtNum(in.Low.Value))
		}
		if in.High.Set {
			parts = append(parts, map[bool]string{true: "< ", false: "≤ "}[in.High.Strict]+fmtNum(in.High.Value))
		}
		if len(parts) > 0 {
			if in.Type == Numbers {
				w += ", each"
			}
			w += " " + strings.Join(parts, " and ")
		}
	}
	return w
}

func fmtNum(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// FieldError blames one input of a cell.
type FieldError struct {
	Field string
	Msg   string
}

func (e *FieldError) Error() string { return e.Field + ": " + e.Msg }

// FieldErr returns a *FieldError; kinds use it to blame an input.
func FieldErr(field, format string, a ...any) error {
	return &FieldError{field, fmt.Sprintf(format, a...)}
}

// Values are the validated inputs of a cell, defaults filled in. The
// getters return the zero value for a name of another type.
type Values map[string]any

// Number returns a Number input.
func (v Values) Number(name string) float64 { f, _ := v[name].(float64); return f }

// Int returns an Integer input.
func (v Values) Int(name string) int { i, _ := v[name].(int); return i }

// Text returns a Text, Choice or Ref input.
func (v Values) Text(name string) string { s, _ := v[name].(string); return s }

// Bool returns a Bool input.
func (v Values) Bool(name string) bool { b, _ := v[name].(bool); return b }

// Numbers returns a Numbers input.
func (v Values) Numbers(name string) []float64 { f, _ := v[name].([]float64); return f }

// Texts returns a Texts input.
func (v Values) Texts(name string) []string { s, _ := v[name].([]string); return s }

// ParseInputs validates raw inputs against the kind's input list, fills in
// defaults and returns every problem, each naming its input. Inputs the
// kind does not know are ignored here (and kept in the file).
func ParseInputs(k Kind, raw map[string]json.RawMessage) (Values, []*FieldError) {
	vals := Values{}
	var errs []*FieldError
	for _, in := range k.Inputs() {
		r, ok := raw[in.Name]
		if !ok || string(r) == "null" {
			switch {
			case in.Default != nil:
				vals[in.Name] = in.Default
			case in.Optional:
			default:
				errs = append(errs, &FieldError{in.Name, "missing; want " + in.Want()})
			}
			continue
		}
		v, err := parseValue(in, r)
		if err != nil {
			errs = append(errs, &FieldError{in.Name, err.Error()})
			continue
		}
		vals[in.Name] = v
	}
	return vals, errs
}

func parseValue(in Input, r json.RawMessage) (any, error) {
	bad := func() error { return fmt.Errorf("want %s, got %s", in.Want(), Clip(string(r), 40)) }
	var v any
	switch in.Type {
	case Number, Integer:
		f, err := parseNumber(r)
		if err != nil || !in.InRange(f) {
			return nil, bad()
		}
		if in.Type == Integer {
			if f != math.Trunc(f) || math.Abs(f) > 1<<53 {
				return nil, bad()
			}
			v = int(f)
		} else {
			v = f
		}
	case Text, Choice, Ref:
		var s string
		if json.Unmarshal(r, &s) != nil {
			return nil, bad()
		}
		max := in.MaxLen
		if max <= 0 {
			max = MaxStringBytes
		}
		switch {
		case len(s) > max:
			return nil, fmt.Errorf("is %d bytes long; at most %d allowed", len(s), max)
		case in.Type == Choice && !slices.Contains(in.Choices, s):
			return nil, bad()
		case in.Type == Ref && s != "" && !ValidID(s):
			return nil, fmt.Errorf("want the id of an earlier cell, got %s; ids use letters, digits, - and _", Clip(string(r), 40))
		}
		v = s
	case Bool:
		var b bool
		if json.Unmarshal(r, &b) != nil {
			return nil, bad()
		}
		v = b
	case Numbers:
		var raws []json.RawMessage
		if json.Unmarshal(r, &raws) != nil {
			return nil, bad()
		}
		fs := make([]float64, len(raws))
		for i, e := range raws {
			f, err := parseNumber(e)
			if err != nil || !in.InRange(f) {
				return nil, fmt.Errorf("element %d: want %s, got %s", i, in.Want(), Clip(string(e), 40))
			}
			fs[i] = f
		}
		v = fs
	case Texts:
		var ss []string
		if json.Unmarshal(r, &ss) != nil {
			return nil, bad()
		}
		v = ss
	default:
		return nil, fmt.Errorf("input type %d is not known", in.Type)
	}
	if in.Check != nil {
		if err := in.Check(v); err != nil {
			return nil, err
		}
	}
	return v, nil
}

func parseNumber(r json.RawMessage) (float64, error) {
	s := string(r)
	if s == "" || s[0] == '"' || s == "true" || s == "false" || s[0] == '[' || s[0] == '{' {
		return 0, fmt.Errorf("not a number")
	}
	f, err := strconv.ParseFloat(s, 64)
	if err != nil || math.IsInf(f, 0) || math.IsNaN(f) {
		return 0, fmt.Errorf("not a finite number")
	}
	return f, nil
}

// InRange reports whether f lies within the input's limits.
func (in Input) InRange(f float64) bool {
	if in.Low.Set && (f < in.Low.Value || in.Low.Strict && f == in.Low.Value) {
		return false
	}
	if in.High.Set && (f > in.High.Value || in.High.Strict && f == in.High.Value) {
		return false
	}
	return true
}

// refs returns the ids named by the Ref inputs of vals, in input order.
func refs(k Kind, vals Values) []refUse {
	var out []refUse
	for _, in := range k.Inputs() {
		if in.Type == Ref && vals.Text(in.Name) != "" {
			out = append(out, refUse{in.Name, vals.Text(in.Name), in.RefKinds})
		}
	}
	return out
}

type refUse struct {
	field, id string
	kinds     []string
}

// Multi is a kind whose cells compute several independent members (the
// rows of a sweep), which a MemberStore can spread over engines. Members
// says how many a cell with these inputs has.
type Multi interface {
	Members(Values) int
}

// Context is what a kind sees while it evaluates: cancellation, progress,
// and the results of the cells it depends on.
type Context struct {
	ctx      context.Context
	cell     string
	deps     map[string]*Outcome
	progress func(fraction float64, message string)
	engine   *Engine
	nb       *Notebook
	index    int
	hash     string
	// members is the evaluation's MemberStore; partial is set when a
	// multi-member cell left members to another share.
	members MemberStore
	partial bool
}

// Context returns the context.Context of the evaluation.
func (c *Context) Context() context.Context { return c.ctx }

// Err is non-nil once the evaluation is cancelled; long loops check it and
// return it.
func (c *Context) Err() error { return c.ctx.Err() }

// Notebook returns the notebook being evaluated (a sweep reads the chain
// of cells it reruns).
func (c *Context) Notebook() *Notebook { return c.nb }

// Cell returns the id of the cell being evaluated.
func (c *Context) Cell() string { return c.cell }

// Progress reports how far the cell has got, fraction in [0, 1].
func (c *Context) Progress(fraction float64, message string) {
	if c.progress != nil {
		c.progress(min(max(fraction, 0), 1), message)
	}
}

// Results returns the results of cell id, which must be named in one of
// this cell's Ref inputs; otherwise nil, so a kind cannot read a cell its
// hash does not depend on.
func (c *Context) Results(id string) *Results {
	if o := c.deps[id]; o != nil {
		return o.Results
	}
	return nil
}

// Object returns the in-memory object name handed on by dependency id.
func (c *Context) Object(id, name string) any {
	if r := c.Results(id); r != nil {
		return r.Objects[name]
	}
	return nil
}

// Sweep evaluates a chain of cells over a list of values of one input,
// without touching the document; the sweep kind calls it. Only cells before
// the calling cell take part.
func (c *Context) Sweep(s Sweep) (*SweepResult, error) {
	s.owner = &memberOwner{cell: c.cell, hash: c.hash, index: c.index}
	r, err := c.engine.sweep(c.ctx, c.nb, s, nil, c.index, c.members)
	if r != nil && r.Missing > 0 {
		c.partial = true
	}
	return r, err
}
