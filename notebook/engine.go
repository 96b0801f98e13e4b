package notebook

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"maps"
	"math"
	"runtime"
	"runtime/debug"
	"slices"
	"strconv"
	"strings"
	"sync"
)

// Status is the state of a cell after an evaluation.
type Status string

// Cell states.
const (
	StatusOK    Status = "ok"    // results are current
	StatusError Status = "error" // the cell or a cell it needs failed
	StatusStale Status = "stale" // inputs changed since the results, or not evaluated
)

// CellError is the error of one cell: which cell, which input (if one is
// to blame), and what is wrong.
type CellError struct {
	Cell  string
	Field string
	Msg   string
	// Needs is the id of the failed dependency when that is the cause.
	Needs string
}

func (e *CellError) Error() string {
	s := "cell " + e.Cell + ": "
	if e.Field != "" {
		s += "input " + e.Field + ": "
	}
	return s + e.Msg
}

// Outcome is what an evaluation gave for one cell.
type Outcome struct {
	ID      string
	Kind    string
	Status  Status
	Err     *CellError
	Results *Results
	// Hash identifies the inputs of the cell and of all it depends on.
	Hash string
	// Digest is Results.Digest() for an ok cell.
	Digest string
	// Cached is true when the results came from the engine's cache.
	Cached bool
	// Reproduced is set when the file had results for the same Hash:
	// "yes" when the digests agree or every number agrees to
	// ReproduceTolerance (Differences then says how closely), "no" when not
	// (Differences lists what differs).
	Reproduced  string
	Differences []string
	// Partial is true when the cell left members to another share of the
	// study (their rows are NaN): such results are neither cached nor saved.
	Partial bool
}

// Evaluation is the outcome of evaluating a notebook.
type Evaluation struct {
	Cells    []*Outcome
	Canceled bool
	Override *Override
}

// Cell returns the outcome of cell id, or nil.
func (ev *Evaluation) Cell(id string) *Outcome {
	for _, o := range ev.Cells {
		if o.ID == id {
			return o
		}
	}
	return nil
}

// Failed reports whether any cell ended in error.
func (ev *Evaluation) Failed() bool {
	for _, o := range ev.Cells {
		if o.Status == StatusError {
			return true
		}
	}
	return false
}

// Override replaces one input of one cell for one evaluation, leaving the
// document as it is. Sweeps are built on it.
type Override struct {
	Cell  string          `json:"cell"`
	Input string          `json:"input"`
	Value json.RawMessage `json:"value"`
}

// Progress reports the state of an evaluation: Fraction of the current
// cell, and Done once the cell has finished (then Outcome is set).
type Progress struct {
	Index, Count int
	ID, Kind     string
	Fraction     float64
	Message      string
	Done         bool
	Outcome      *Outcome
}

// Options steer one evaluation.
type Options struct {
	// Progress, when set, is called from the evaluating goroutine.
	Progress func(Progress)
	// Override, when set, replaces one input for this evaluation only.
	Override *Override
	// Only, when set, evaluates these cells and the cells they need; the
	// others are reported stale.
	Only []string
	// Members, when set, decides which members of multi-member cells this
	// evaluation computes and supplies the others (a share of a study split
	// over machines or workers, or the merge of the shares); see
	// MemberStore. A cell that left members out is not cached.
	Members MemberStore
	// before, when > 0, limits the evaluation to cells before this index
	// (a sweep run from inside a cell must not re-enter that cell).
	before int
}

// Engine evaluates notebooks and caches results by input hash, so an
// unchanged cell is not computed twice. It is safe for concurrent use.
type Engine struct {
	mu    sync.Mutex
	cache map[string]*Outcome
	order []string
	// Limit is the number of cached cell results kept (default 256).
	Limit int
	// Workers is how many members of a multi-member cell (the rows of a
	// sweep) are computed at once; 0 means one per core. The results do
	// not depend on it: each member is computed alone from the same inputs
	// and the results are put together in member order.
	Workers int
}

// MemberKey names one member: row Row of the sweep in cell Cell, whose
// inputs (and those of all it depends on) have hash Hash; Index is the
// cell's position in the notebook.
type MemberKey struct {
	Cell  string `json:"cell"`
	Hash  string `json:"hash"`
	Row   int    `json:"row"`
	Index int    `json:"-"`
}

// ID is the key as one string, for maps of members.
func (k MemberKey) ID() string { return fmt.Sprintf("%s %s %d", k.Cell, k.Hash, k.Row) }

// Member is what a sweep keeps of one member: the swept value, the scalars
// of its chain of cells in order ("cell.scalar"), and the first error.
type Member struct {
	MemberKey
	Value   float64        `json:"value"`
	Scalars []MemberScalar `json:"scalars"`
	Error   string         `json:"error,omitempty"`
}

// MemberScalar is one scalar of a member's chain.
type MemberScalar struct {
	Name  string  `json:"name"`
	Unit  string  `json:"unit,omitempty"`
	Value float64 `json:"value"`
}

// MarshalJSON writes a non-finite value as "NaN", "Inf" or "-Inf".
func (m MemberScalar) MarshalJSON() ([]byte, error) {
	type plain MemberScalar
	return json.Marshal(struct {
		plain
		Value num `json:"value"`
	}{plain(m), num(m.Value)})
}

// UnmarshalJSON reads what MarshalJSON writes.
func (m *MemberScalar) UnmarshalJSON(b []byte) error {
	type plain MemberScalar
	var w struct {
		plain
		Value num `json:"value"`
	}
	if err := json.Unmarshal(b, &w); err != nil {
		return err
	}
	*m = MemberScalar(w.plain)
	m.Value = float64(w.Value)
	return nil
}

// MemberStore splits the members of a study between engines (docs/
// architecture.md, "Studies split over machines"). For every member a
// sweep asks Lookup first (a member computed elsewhere), then Mine (this
// engine's share) and hands what it computes to Done; a member neither
// supplied nor its own is left out of the table (a NaN row whose error
// says so).
type MemberStore interface {
	Lookup(k MemberKey) (*Member, bool)
	Mine(k MemberKey) bool
	Done(m *Member)
}

// ShareOf is the share (1-based) of n that computes member k: the members
// of each multi-member cell are dealt out in turn, starting one share later
// for each cell, so that every share gets its part of every cell.
func ShareOf(k MemberKey, n int) int { return (k.Row+k.Index)%n + 1 }

func (e *Engine) workers() int {
	if e.Workers > 0 {
		return e.Workers
	}
	return runtime.NumCPU()
}

// NewEngine returns an engine with an empty cache.
func NewEngine() *Engine { return &Engine{cache: map[string]*Outcome{}} }

func (e *Engine) cached(h string) *Outcome {
	e.mu.Lock()
	defer e.mu.Unlock()
	return e.cache[h]
}

func (e *Engine) store(o *Outcome) {
	e.mu.Lock()
	defer e.mu.Unlock()
	if _, ok := e.cache[o.Hash]; ok {
		return
	}
	limit := e.Limit
	if limit <= 0 {
		limit = 256
	}
	for len(e.order) >= limit {
		delete(e.cache, e.order[0])
		e.order = e.order[1:]
	}
	e.cache[o.Hash] = o
	e.order = append(e.order, o.Hash)
}

// Evaluate evaluates the cells of nb in order. A failing cell gets its own
// error and its dependents report that they need it; the other cells go on.
// When ctx is cancelled, the cell running and those after it are stale and
// Canceled is set. The document is never modified. The error is non-nil
// only for bad options (an override of a cell or input that does not
// exist).
func (e *Engine) Evaluate(ctx context.Context, nb *Notebook, o Options) (*Evaluation, error) {
	if ov := o.Override; ov != nil {
		if err := nb.checkOverride(ov); err != nil {
			return nil, err
		}
	}
	var need map[string]bool
	if len(o.Only) > 0 {
		need = nb.Closure(o.Only)
	}
	ev := &Evaluation{Override: o.Override}
	done := map[string]*Outcome{}
	n := len(nb.Cells)
	if o.before > 0 {
		n = min(n, o.before)
	}
	for i, c := range nb.Cells[:n] {
		out := &Outcome{ID: c.ID, Kind: c.Kind, Status: StatusStale}
		ev.Cells = append(ev.Cells, out)
		done[c.ID] = out
		if need != nil && !need[c.ID] || ctx.Err() != nil {
			if ctx.Err() != nil {
				ev.Canceled = true
			}
			continue
		}
		report := func(f float64, msg string) {
			if o.Progress != nil {
				o.Progress(Progress{Index: i, Count: n, ID: c.ID, Kind: c.Kind, Fraction: f, Message: msg})
			}
		}
		report(0, "")
		e.evalCell(ctx, nb, i, o, done, out, report)
		if out.Status == StatusStale {
			ev.Canceled = true
		}
		if o.Progress != nil {
			o.Progress(Progress{Index: i, Count: n, ID: c.ID, Kind: c.Kind, Fraction: 1, Done: true, Outcome: out})
		}
	}
	return ev, nil
}

func (e *Engine) evalCell(ctx context.Context, nb *Notebook, i int, o Options, done map[string]*Outcome, out *Outcome, report func(float64, string)) {
	c := nb.Cells[i]
	fail := func(field, msg string) {
		out.Status, out.Err = StatusError, &CellError{Cell: c.ID, Field: field, Msg: msg}
	}
	k, ok := Lookup(c.Kind)
	if !ok {
		fail("", fmt.Sprintf("unknown kind %q; known kinds: %s", Clip(c.Kind, 40), strings.Join(Kinds(), ", ")))
		return
	}
	raw := c.Inputs
	if ov := o.Override; ov != nil && ov.Cell == c.ID {
		raw = maps.Clone(raw)
		if raw == nil {
			raw = map[string]json.RawMessage{}
		}
		raw[ov.Input] = ov.Value
	}
	vals, errs := ParseInputs(k, raw)
	if len(errs) > 0 {
		msgs := make([]string, len(errs))
		for j, fe := range errs {
			msgs[j] = fe.Error()
		}
		out.Status = StatusError
		out.Err = &CellError{Cell: c.ID, Field: errs[0].Field, Msg: errs[0].Msg}
		if len(errs) > 1 {
			out.Err.Msg += "; also " + strings.Join(msgs[1:], "; ")
		}
		return
	}
	pos := map[string]int{}
	for j, cc := range nb.Cells {
		pos[cc.ID] = j
	}
	deps := map[string]*Outcome{}
	var depHashes []depHash
	for _, r := range refs(k, vals) {
		if msg := nb.refProblem(i, r, pos); msg != "" {
			fail(r.field, msg)
			return
		}
		d := done[r.id]
		switch d.Status {
		case StatusError:
			out.Status = StatusError
			out.Err = &CellError{Cell: c.ID, Field: r.field, Msg: fmt.Sprintf("needs cell %s, which failed", r.id), Needs: r.id}
			return
		case StatusStale:
			// A dependency left out or cancelled: this cell cannot be current.
			return
		}
		deps[r.id] = d
		depHashes = append(depHashes, depHash{r.id, d.Hash})
	}
	out.Hash = cellHash(c.Kind, vals, depHashes)
	if hit := e.cached(out.Hash); hit != nil {
		out.Status, out.Results, out.Digest, out.Cached = StatusOK, hit.Results, hit.Digest, true
		out.compareSaved(c.Saved)
		return
	}
	cx := &Context{ctx: ctx, cell: c.ID, deps: deps, progress: report, engine: e, nb: nb, index: i, hash: out.Hash, members: o.Members}
	res, err := safeEvaluate(k, cx, vals)
	switch {
	case ctx.Err() != nil:
		out.Status = StatusStale
		return
	case err != nil:
		if fe, ok := err.(*FieldError); ok {
			fail(fe.Field, fe.Msg)
		} else {
			fail("", err.Error())
		}
		return
	}
	if res == nil {
		res = &Results{}
	}
	if ek, ok := k.(Enclosing); ok && len(res.Intervals) == 0 {
		res.AddIntervals(ek.Intervals())
	}
	if ps := res.Check(); len(ps) > 0 {
		fail("", "the "+c.Kind+" kind produced inconsistent results: "+ps[0].String())
		return
	}
	out.Status, out.Results, out.Digest, out.Partial = StatusOK, res, res.Digest(), cx.partial
	out.compareSaved(c.Saved)
	if !out.Partial {
		e.store(out)
	}
}

func (o *Outcome) compareSaved(s *Saved) {
	if s == nil || s.Hash != o.Hash || s.Results == nil {
		return
	}
	if s.Digest == o.Digest || s.Results.Digest() == o.Digest {
		o.Reproduced = "yes"
		return
	}
	if ok, worst := RoundOff(s.Results, o.Results); ok {
		o.Reproduced = "yes"
		o.Differences = []string{roundOffNote(worst)}
		return
	}
	o.Reproduced = "no"
	o.Differences = Compare(s.Results, o.Results, 10)
}

// safeEvaluate turns a panic in a kind into that cell's error, so one
// broken kind never takes the other cells down.
func safeEvaluate(k Kind, c *Context, v Values) (r *Results, err error) {
	defer func() {
		if p := recover(); p != nil {
			stack := string(debug.Stack())
			if len(stack) > 2000 {
				stack = stack[:2000]
			}
			err = fmt.Errorf("internal error in the %s kind (please report it): %v\n%s", k.Name(), p, stack)
		}
	}()
	return k.Evaluate(c, v)
}

type depHash struct{ id, hash string }

// cellHash is the one hash of a cell's inputs (docs/format.md, "Hashes and digests"):
// SHA-256 of the kind, the validated inputs in canonical form and the
// hashes of the cells it refers to, in the order of its inputs.
func cellHash(kind string, vals Values, deps []depHash) string {
	h := sha256.New()
	fmt.Fprintf(h, "gapbook-cell-1\n%q\n", kind)
	writeValues(h, vals)
	for _, d := range deps {
		fmt.Fprintf(h, "dep %q %s\n", d.id, d.hash)
	}
	return hex.EncodeToString(h.Sum(nil))
}

// hashes returns the hash of every cell from the file's inputs alone ("" for
// a cell whose inputs or references are invalid), with the version-1 names
// when legacy is set (migration).
func (nb *Notebook) hashes(legacy bool) []string {
	out := make([]string, len(nb.Cells))
	byID := map[string]string{}
	for i, c := range nb.Cells {
		k, ok := Lookup(c.Kind)
		if !ok {
			continue
		}
		vals, errs := ParseInputs(k, c.Inputs)
		if len(errs) > 0 {
			continue
		}
		var deps []depHash
		bad := false
		for _, r := range refs(k, vals) {
			h := byID[r.id]
			if h == "" {
				bad = true
				break
			}
			deps = append(deps, depHash{r.id, h})
		}
		if bad {
			continue
		}
		if legacy {
			vals = legacyValues(c.Kind, vals)
		}
		out[i] = cellHash(c.Kind, vals, deps)
		byID[c.ID] = out[i]
	}
	return out
}

// writeValues writes a canonical form of validated inputs: sorted names,
// numbers exact, so 3 and 3.0 hash alike.
func writeValues(w interface{ Write([]byte) (int, error) }, v Values) {
	for _, name := range slices.Sorted(maps.Keys(v)) {
		var s string
		switch x := v[name].(type) {
		case float64:
			s = "n " + strconv.FormatFloat(x, 'g', -1, 64)
		case int:
			s = "i " + strconv.Itoa(x)
		case string:
			s = "s " + strconv.Quote(x)
		case bool:
			s = "b " + strconv.FormatBool(x)
		case []float64:
			parts := make([]string, len(x))
			for i, f := range x {
				parts[i] = strconv.FormatFloat(f, 'g', -1, 64)
			}
			s = "N " + strings.Join(parts, " ")
		case []string:
			parts := make([]string, len(x))
			for i, t := range x {
				parts[i] = strconv.Quote(t)
			}
			s = "S " + strings.Join(parts, " ")
		default:
			s = fmt.Sprintf("? %v", x)
		}
		fmt.Fprintf(w, "%q %s\n", name, s)
	}
}

func (nb *Notebook) checkOverride(ov *Override) error {
	c, _ := nb.Cell(ov.Cell)
	if c == nil {
		return fmt.Errorf("override: no cell %q", ov.Cell)
	}
	k, ok := Lookup(c.Kind)
	if !ok {
		return fmt.Errorf("override: cell %s has unknown kind %q", c.ID, c.Kind)
	}
	for _, in := range k.Inputs() {
		if in.Name == ov.Input {
			return nil
		}
	}
	names := []string{}
	for _, in := range k.Inputs() {
		names = append(names, in.Name)
	}
	return fmt.Errorf("override: a %s cell has no input %q; inputs: %s", c.Kind, ov.Input, strings.Join(names, ", "))
}

// deps returns the ids cell i refers to (unvalidated inputs are skipped).
func (nb *Notebook) deps(i int) []string {
	c := nb.Cells[i]
	k, ok := Lookup(c.Kind)
	if !ok {
		return nil
	}
	vals, _ := ParseInputs(k, c.Inputs)
	var out []string
	for _, r := range refs(k, vals) {
		out = append(out, r.id)
	}
	return out
}

// Closure returns ids and every cell they need, directly or not.
func (nb *Notebook) Closure(ids []string) map[string]bool {
	need := map[string]bool{}
	for _, id := range ids {
		need[id] = true
	}
	for i := len(nb.Cells) - 1; i >= 0; i-- {
		if need[nb.Cells[i].ID] {
			for _, d := range nb.deps(i) {
				need[d] = true
			}
		}
	}
	return need
}

// MemberCell is a multi-member cell that an evaluation would compute: its
// inputs' hash and how many members it has.
type MemberCell struct {
	Cell    string `json:"cell"`
	Hash    string `json:"hash"`
	Members int    `json:"members"`
}

// Pending lists, without evaluating, the multi-member cells (kinds that
// are Multi) among only and the cells they need (all cells when only is
// empty) whose results the engine has not cached: the work that can be
// spread over several engines.
func (e *Engine) Pending(nb *Notebook, only []string) []MemberCell {
	var need map[string]bool
	if len(only) > 0 {
		need = nb.Closure(only)
	}
	out := []MemberCell{}
	for i, o := range nb.States() {
		c := nb.Cells[i]
		k, ok := Lookup(c.Kind)
		mk, multi := k.(Multi)
		if !ok || !multi || o.Hash == "" || need != nil && !need[c.ID] || e.cached(o.Hash) != nil {
			continue
		}
		vals, errs := ParseInputs(k, c.Inputs)
		if len(errs) > 0 {
			continue
		}
		if n := mk.Members(vals); n > 1 {
			out = append(out, MemberCell{Cell: c.ID, Hash: o.Hash, Members: n})
		}
	}
	return out
}

// Downstream returns id and every cell that depends on it, directly or
// not, in document order.
func (nb *Notebook) Downstream(id string) []string {
	hit := map[string]bool{id: true}
	out := []string{}
	for i, c := range nb.Cells {
		if c.ID == id {
			out = append(out, id)
			continue
		}
		for _, d := range nb.deps(i) {
			if hit[d] {
				hit[c.ID] = true
				out = append(out, c.ID)
				break
			}
		}
	}
	return out
}

// States returns, without evaluating, the state of every cell against
// the results saved in the file: ok when saved results exist for the
// current inputs, stale when inputs changed or nothing was saved, error
// when the cell or a cell it needs is invalid.
func (nb *Notebook) States() []*Outcome {
	var outs []*Outcome
	done := map[string]*Outcome{}
	pos := map[string]int{}
	for j, c := range nb.Cells {
		pos[c.ID] = j
	}
	for i, c := range nb.Cells {
		out := &Outcome{ID: c.ID, Kind: c.Kind, Status: StatusStale}
		outs = append(outs, out)
		done[c.ID] = out
		k, ok := Lookup(c.Kind)
		if !ok {
			out.Status, out.Err = StatusError, &CellError{Cell: c.ID, Msg: fmt.Sprintf("unknown kind %q", Clip(c.Kind, 40))}
			continue
		}
		vals, errs := ParseInputs(k, c.Inputs)
		if len(errs) > 0 {
			out.Status, out.Err = StatusError, &CellError{Cell: c.ID, Field: errs[0].Field, Msg: errs[0].Msg}
			continue
		}
		var depHashes []depHash
		bad := false
		for _, r := range refs(k, vals) {
			if msg := nb.refProblem(i, r, pos); msg != "" {
				out.Status, out.Err = StatusError, &CellError{Cell: c.ID, Field: r.field, Msg: msg}
				bad = true
				break
			}
			d := done[r.id]
			if d.Status == StatusError {
				out.Status, out.Err = StatusError, &CellError{Cell: c.ID, Field: r.field, Msg: fmt.Sprintf("needs cell %s, which failed", r.id), Needs: r.id}
				bad = true
				break
			}
			depHashes = append(depHashes, depHash{r.id, d.Hash})
		}
		if bad {
			continue
		}
		out.Hash = cellHash(c.Kind, vals, depHashes)
		if s := c.Saved; s != nil && s.Hash == out.Hash && s.Results != nil {
			out.Status, out.Results, out.Digest = StatusOK, s.Results, s.Results.Digest()
		}
	}
	return outs
}

// Sweep describes a sweep: Cell's Input takes each of Values in turn and
// the chain of Cells is evaluated; scalars of those cells form a table.
type Sweep struct {
	Cell   string
	Input  string
	Values []float64
	// Cells whose scalar results become columns; default: Cell and every
	// cell downstream of it.
	Cells []string
	// owner is the sweeping cell, when a cell runs the sweep (members).
	owner *memberOwner
}

type memberOwner struct {
	cell, hash string
	index      int
}

// SweepResult holds the sweep table (one row per value; first column the
// swept input, then "cell.scalar" columns, NaN where a run failed) and
// the evaluation of every row.
type SweepResult struct {
	Table Table
	Runs  []*Evaluation
	// Errors lists, per row, the first failing cell's error ("" if none).
	Errors []string
	// Missing counts the members left to another share (neither supplied
	// nor this evaluation's own): their rows are NaN.
	Missing int
}

// Sweep runs s through the engine, sharing its cache, without changing nb.
// progress, when set, is called with the row index and its evaluation
// progress.
func (e *Engine) Sweep(ctx context.Context, nb *Notebook, s Sweep, progress func(row int, p Progress)) (*SweepResult, error) {
	return e.sweep(ctx, nb, s, progress, 0, nil)
}

func (e *Engine) sweep(ctx context.Context, nb *Notebook, s Sweep, progress func(int, Progress), before int, store MemberStore) (*SweepResult, error) {
	if len(s.Values) == 0 {
		return nil, fmt.Errorf("sweep: no values to sweep %s.%s over", s.Cell, s.Input)
	}
	chain := s.Cells
	if len(chain) == 0 {
		for _, id := range nb.Downstream(s.Cell) {
			if _, i := nb.Cell(id); before <= 0 || i < before {
				chain = append(chain, id)
			}
		}
	}
	for _, id := range chain {
		c, i := nb.Cell(id)
		if c == nil {
			return nil, fmt.Errorf("sweep: no cell %q", id)
		}
		if before > 0 && i >= before {
			return nil, fmt.Errorf("sweep: cell %s does not come before the sweeping cell; a sweep can only run earlier cells", id)
		}
	}
	res := &SweepResult{Table: Table{Name: "sweep", Title: "sweep of " + s.Cell + "." + s.Input, Columns: []Column{{Name: s.Input}}}}
	// The members run on e.workers() goroutines; each is an evaluation of
	// its own, so the order in which they finish changes nothing.
	runs := make([]*Evaluation, len(s.Values))
	fails := make([]error, len(s.Values))
	members := make([]*Member, len(s.Values))
	key := func(row int) MemberKey {
		k := MemberKey{Row: row}
		if s.owner != nil {
			k.Cell, k.Hash, k.Index = s.owner.cell, s.owner.hash, s.owner.index
		}
		return k
	}
	todo := make([]bool, len(s.Values))
	for row := range s.Values {
		if store == nil || s.owner == nil {
			todo[row] = true
			continue
		}
		if m, ok := store.Lookup(key(row)); ok {
			members[row] = m
		} else if store.Mine(key(row)) {
			todo[row] = true
		} else {
			members[row] = &Member{MemberKey: key(row), Value: s.Values[row], Error: "computed by another share of the study"}
			res.Missing++
		}
	}
	var mu sync.Mutex // serialises the progress callbacks
	rows := make(chan int)
	var wg sync.WaitGroup
	for range min(e.workers(), len(s.Values)) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for row := range rows {
				b, _ := json.Marshal(s.Values[row])
				opts := Options{Override: &Override{s.Cell, s.Input, b}, Only: chain, before: before}
				if progress != nil {
					opts.Progress = func(p Progress) {
						mu.Lock()
						defer mu.Unlock()
						progress(row, p)
					}
				}
				ev, err := e.Evaluate(ctx, nb, opts)
				if err == nil && ev.Canceled {
					ev = nil // a member cut short is not kept
				}
				runs[row], fails[row] = ev, err
				if ev != nil {
					// The store hears of each member as it finishes, so
					// that a stop keeps those done.
					members[row] = memberOf(key(row), s.Values[row], ev, chain)
					if store != nil && s.owner != nil {
						store.Done(members[row])
					}
				}
			}
		}()
	}
	for row := range s.Values {
		if ctx.Err() != nil {
			break
		}
		if todo[row] {
			rows <- row
		}
	}
	close(rows)
	wg.Wait()
	col := map[string]int{}
	for row, v := range s.Values {
		if fails[row] != nil {
			return nil, fmt.Errorf("sweep: %v", fails[row])
		}
		m := members[row]
		if m == nil {
			// Cancelled: the members finished before the first missing
			// one are kept.
			break
		}
		if runs[row] != nil {
			res.Runs = append(res.Runs, runs[row])
		}
		vals := map[int]float64{}
		for _, sc := range m.Scalars {
			j, ok := col[sc.Name]
			if !ok {
				j = len(res.Table.Columns)
				col[sc.Name] = j
				res.Table.Columns = append(res.Table.Columns, Column{Name: sc.Name, Unit: sc.Unit})
			}
			vals[j] = sc.Value
		}
		msg := m.Error
		res.Errors = append(res.Errors, msg)
		r := []float64{v}
		for j := 1; j < len(res.Table.Columns); j++ {
			if x, ok := vals[j]; ok {
				r = append(r, x)
			} else {
				r = append(r, math.NaN())
			}
		}
		res.Table.Rows = append(res.Table.Rows, r)
	}
	// Columns that first appeared in a later row leave earlier rows short.
	for i, r := range res.Table.Rows {
		for len(r) < len(res.Table.Columns) {
			r = append(r, math.NaN())
		}
		res.Table.Rows[i] = r
	}
	if err := ctx.Err(); err != nil {
		return res, err
	}
	return res, nil
}

// memberOf keeps of one member's evaluation what its sweep needs.
func memberOf(k MemberKey, v float64, ev *Evaluation, chain []string) *Member {
	m := &Member{MemberKey: k, Value: v, Scalars: []MemberScalar{}}
	for _, id := range chain {
		o := ev.Cell(id)
		if o == nil {
			continue
		}
		if o.Status == StatusError && m.Error == "" {
			m.Error = o.Err.Error()
		}
		if o.Status != StatusOK {
			continue
		}
		for _, sc := range o.Results.Scalars {
			m.Scalars = append(m.Scalars, MemberScalar{Name: id + "." + sc.Name, Unit: sc.Unit, Value: sc.Value})
		}
	}
	return m
}
