package notebook

import (
	"crypto/sha256"
	"encoding/hex"
	"encoding/json"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"gapbook/convex"
)

// Label says how far a result can be trusted: convex.Label, the one label
// type, saved as its text.
type Label = convex.Label

// The three labels a result may carry (docs/math.md §8).
const (
	// Guaranteed: a proven bound of the mathematical model as entered.
	Guaranteed = convex.Guaranteed
	// Estimate: a computed value without a proof of its accuracy.
	Estimate = convex.Estimate
	// Reference: a value from outside the computation (an exact solution,
	// a published value) used for comparison.
	Reference = convex.Reference
)

// Scalar is one named, labelled number.
type Scalar struct {
	Name  string  `json:"name"`
	Value float64 `json:"value"`
	Label Label   `json:"label"`
	// Unit is the unit or, for dimensionless numbers, a short meaning.
	Unit string `json:"unit,omitempty"`
}

// Interval is a two-sided enclosure Lower ≤ quantity ≤ Upper whose ends
// are two of the cell's scalars, named by Ends, so that a script reading
// scalars and one reading intervals agree. Its label is the weaker of the
// two ends' labels (guaranteed only when both are). Intervals restate
// scalars, so the digest covers them through their ends.
type Interval struct {
	Name  string  `json:"name"`
	Lower float64 `json:"lower"`
	Upper float64 `json:"upper"`
	Label Label   `json:"label"`
	// Unit says what is enclosed, e.g. "J(u), the energy of the exact
	// solution".
	Unit string    `json:"unit,omitempty"`
	Ends [2]string `json:"ends"`
}

// IntervalDef names an interval by the scalars at its ends.
type IntervalDef struct {
	Name, Lower, Upper, Unit string
}

// weaker returns the label a number computed from a and b may carry.
func weaker(a, b Label) Label {
	switch {
	case a == Estimate || b == Estimate:
		return Estimate
	case a == Guaranteed && b == Guaranteed:
		return Guaranteed
	case a == Reference && b == Reference:
		return Reference
	}
	return Estimate
}

// AddIntervals appends the intervals of defs whose two ends are among r's
// scalars (an interval whose end was not computed is left out).
func (r *Results) AddIntervals(defs []IntervalDef) {
	for _, d := range defs {
		lo, ok1 := r.Scalar(d.Lower)
		hi, ok2 := r.Scalar(d.Upper)
		if !ok1 || !ok2 {
			continue
		}
		r.Intervals = append(r.Intervals, Interval{Name: d.Name, Lower: lo.Value, Upper: hi.Value,
			Label: weaker(lo.Label, hi.Label), Unit: d.Unit, Ends: [2]string{d.Lower, d.Upper}})
	}
}

// MarshalJSON writes the ends as numbers, or as "NaN", "Inf", "-Inf".
func (iv Interval) MarshalJSON() ([]byte, error) {
	type plain Interval
	return json.Marshal(struct {
		plain
		Lower num `json:"lower"`
		Upper num `json:"upper"`
	}{plain(iv), num(iv.Lower), num(iv.Upper)})
}

// UnmarshalJSON reads what MarshalJSON writes.
func (iv *Interval) UnmarshalJSON(b []byte) error {
	type plain Interval
	var w struct {
		plain
		Lower num `json:"lower"`
		Upper num `json:"upper"`
	}
	if err := strictUnmarshal(b, &w); err != nil {
		return err
	}
	*iv = Interval(w.plain)
	iv.Lower, iv.Upper = float64(w.Lower), float64(w.Upper)
	return nil
}

// Column names one column of a table.
type Column struct {
	Name string `json:"name"`
	Unit string `json:"unit,omitempty"`
}

// Table is a rectangular array of numbers with named columns and optional
// row labels (for instance the label of each run in a comparison).
type Table struct {
	Name    string      `json:"name"`
	Title   string      `json:"title,omitempty"`
	Columns []Column    `json:"columns"`
	Labels  []string    `json:"labels,omitempty"`
	Rows    [][]float64 `json:"rows"`
}

// Column returns the values of the column called name, or nil.
func (t *Table) Column(name string) []float64 {
	j := t.ColumnIndex(name)
	if j < 0 {
		return nil
	}
	out := make([]float64, len(t.Rows))
	for i, r := range t.Rows {
		out[i] = r[j]
	}
	return out
}

// ColumnIndex returns the index of the column called name, or −1.
func (t *Table) ColumnIndex(name string) int {
	for j, c := range t.Columns {
		if c.Name == name {
			return j
		}
	}
	return -1
}

// Series is one line of a plot.
type Series struct {
	Name string    `json:"name"`
	X    []float64 `json:"x"`
	Y    []float64 `json:"y"`
}

// Plot is a line chart; it mirrors the fields of svgplot.Lines.
type Plot struct {
	Name   string   `json:"name"`
	Title  string   `json:"title,omitempty"`
	XLabel string   `json:"xlabel,omitempty"`
	YLabel string   `json:"ylabel,omitempty"`
	LogX   bool     `json:"logx,omitempty"`
	LogY   bool     `json:"logy,omitempty"`
	Series []Series `json:"series"`
}

// Field is a scalar field on a triangle mesh: node coordinates, triangles
// as triples of node indices, and either nodal values (one per node) or
// per-cell values (one per triangle).
type Field struct {
	Name    string     `json:"name"`
	Title   string     `json:"title,omitempty"`
	X       []float64  `json:"x"`
	Y       []float64  `json:"y"`
	Tri     [][3]int32 `json:"tri"`
	Values  []float64  `json:"values"`
	PerCell bool       `json:"percell,omitempty"`
}

// Results is what one cell computed. Scalars, tables, plots and fields are
// saved in the file and covered by the digest; Objects are in-memory values
// (a discrete solution, a mesh) handed to dependent cells and never saved.
type Results struct {
	Scalars   []Scalar   `json:"scalars,omitempty"`
	Intervals []Interval `json:"intervals,omitempty"`
	Tables    []Table    `json:"tables,omitempty"`
	Plots     []Plot     `json:"plots,omitempty"`
	Fields    []Field    `json:"fields,omitempty"`

	Objects map[string]any `json:"-"`
}

// Scalar returns the scalar called name.
func (r *Results) Scalar(name string) (Scalar, bool) {
	if r == nil {
		return Scalar{}, false
	}
	for _, s := range r.Scalars {
		if s.Name == name {
			return s, true
		}
	}
	return Scalar{}, false
}

// Table returns the table called name, or the first table when name is "".
func (r *Results) Table(name string) (*Table, bool) {
	if r == nil {
		return nil, false
	}
	for i := range r.Tables {
		if name == "" || r.Tables[i].Name == name {
			return &r.Tables[i], true
		}
	}
	return nil, false
}

// Check returns every inconsistency in r, each with its path below r
// (for example "tables[0].rows[3]: has 2 values, want 3, one per column").
func (r *Results) Check() []Diagnostic {
	var ps []Diagnostic
	add := func(path, f string, a ...any) { ps = append(ps, Diagnostic{path, fmt.Sprintf(f, a...)}) }
	r.checkScalars(add)
	r.checkIntervals(add)
	r.checkTables(add)
	r.checkPlots(add)
	r.checkFields(add)
	return ps
}

// checkScalars checks that names are unique and non-empty and labels valid.
func (r *Results) checkScalars(add func(path, f string, a ...any)) {
	seen := map[string]bool{}
	for i, s := range r.Scalars {
		p := fmt.Sprintf("scalars[%d]", i)
		switch {
		case s.Name == "":
			add(p+".name", "empty; every result needs a name")
		case seen[s.Name]:
			add(p+".name", "%q is used twice; scalar names must be unique", s.Name)
		}
		seen[s.Name] = true
		if !s.Label.Valid() {
			add(p+".label", "want guaranteed, estimate or reference, got %q", string(s.Label))
		}
	}
}

// checkIntervals checks that each interval restates two scalars of the cell.
func (r *Results) checkIntervals(add func(path, f string, a ...any)) {
	names := map[string]bool{}
	for i, iv := range r.Intervals {
		p := fmt.Sprintf("intervals[%d]", i)
		switch {
		case iv.Name == "":
			add(p+".name", "empty; every result needs a name")
		case names[iv.Name]:
			add(p+".name", "%q is used twice; interval names must be unique", iv.Name)
		}
		names[iv.Name] = true
		lo, ok1 := r.Scalar(iv.Ends[0])
		hi, ok2 := r.Scalar(iv.Ends[1])
		switch {
		case !ok1 || !ok2:
			add(p+".ends", "want the names of two scalars of the cell, got %q and %q", iv.Ends[0], iv.Ends[1])
		case !sameNumber(lo.Value, iv.Lower) || !sameNumber(hi.Value, iv.Upper):
			add(p, "ends %g and %g are not the values %g and %g of scalars %s and %s", iv.Lower, iv.Upper, lo.Value, hi.Value, lo.Name, hi.Name)
		case iv.Label != weaker(lo.Label, hi.Label):
			add(p+".label", "want %s, the weaker label of its ends, got %q", weaker(lo.Label, hi.Label), string(iv.Label))
		}
	}
}

// checkTables checks that every row is as long as the columns, with a label per row if any.
func (r *Results) checkTables(add func(path, f string, a ...any)) {
	for i, t := range r.Tables {
		p := fmt.Sprintf("tables[%d]", i)
		if t.Name == "" {
			add(p+".name", "empty; every result needs a name")
		}
		if len(t.Labels) != 0 && len(t.Labels) != len(t.Rows) {
			add(p+".labels", "has %d labels for %d rows", len(t.Labels), len(t.Rows))
		}
		for k, row := range t.Rows {
			if len(row) != len(t.Columns) {
				add(fmt.Sprintf("%s.rows[%d]", p, k), "has %d values, want %d, one per column", len(row), len(t.Columns))
			}
		}
	}
}

// checkPlots checks that every series has as many x values as y values.
func (r *Results) checkPlots(add func(path, f string, a ...any)) {
	for i, pl := range r.Plots {
		p := fmt.Sprintf("plots[%d]", i)
		if pl.Name == "" {
			add(p+".name", "empty; every result needs a name")
		}
		for k, s := range pl.Series {
			if len(s.X) != len(s.Y) {
				add(fmt.Sprintf("%s.series[%d]", p, k), "has %d x values and %d y values", len(s.X), len(s.Y))
			}
		}
	}
}

// checkFields checks that coordinates, triangles and values fit together.
func (r *Results) checkFields(add func(path, f string, a ...any)) {
	for i, f := range r.Fields {
		p := fmt.Sprintf("fields[%d]", i)
		if f.Name == "" {
			add(p+".name", "empty; every result needs a name")
		}
		n := len(f.X)
		if len(f.Y) != n {
			add(p+".y", "has %d values, want %d like x", len(f.Y), n)
		}
		for k, t := range f.Tri {
			for _, v := range t {
				if v < 0 || int(v) >= n {
					add(fmt.Sprintf("%s.tri[%d]", p, k), "node %d is out of range 0..%d", v, n-1)
					break
				}
			}
		}
		want, what := n, "one per node"
		if f.PerCell {
			want, what = len(f.Tri), "one per triangle"
		}
		if len(f.Values) != want {
			add(p+".values", "has %d values, want %d, %s", len(f.Values), want, what)
		}
	}
}

// DigestDigits is the number of significant digits at which numbers enter
// the digest: enough to catch a real change, few enough that the last bits
// of floating point on another machine do not count as one.
const DigestDigits = 12

// canon writes v with DigestDigits significant digits; -0 becomes 0 and
// non-finite values get fixed words.
func canon(v float64) string {
	switch {
	case math.IsNaN(v):
		return "nan"
	case math.IsInf(v, 1):
		return "inf"
	case math.IsInf(v, -1):
		return "-inf"
	case v == 0:
		return "0"
	}
	return strconv.FormatFloat(v, 'e', DigestDigits-1, 64)
}

// canonical is the byte stream the digest hashes: one token a line,
// strings quoted, numbers through canon. Titles, units and axis labels are
// presentation and left out; names, labels and shapes are in.
func (r *Results) canonical() []byte {
	var b strings.Builder
	tok := func(s string) { b.WriteString(s); b.WriteByte('\n') }
	str := func(s string) { tok(strconv.Quote(s)) }
	num := func(v float64) { tok(canon(v)) }
	nums := func(vs []float64) {
		tok(strconv.Itoa(len(vs)))
		for _, v := range vs {
			num(v)
		}
	}
	tok("gapbook-results-1")
	for _, s := range r.Scalars {
		tok("scalar")
		str(s.Name)
		str(string(s.Label))
		num(s.Value)
	}
	for _, t := range r.Tables {
		tok("table")
		str(t.Name)
		tok(strconv.Itoa(len(t.Columns)))
		for _, c := range t.Columns {
			str(c.Name)
		}
		tok(strconv.Itoa(len(t.Labels)))
		for _, l := range t.Labels {
			str(l)
		}
		tok(strconv.Itoa(len(t.Rows)))
		for _, row := range t.Rows {
			nums(row)
		}
	}
	for _, p := range r.Plots {
		tok("plot")
		str(p.Name)
		tok(strconv.Itoa(len(p.Series)))
		for _, s := range p.Series {
			str(s.Name)
			nums(s.X)
			nums(s.Y)
		}
	}
	for _, f := range r.Fields {
		tok("field")
		str(f.Name)
		tok(strconv.FormatBool(f.PerCell))
		nums(f.X)
		nums(f.Y)
		tok(strconv.Itoa(len(f.Tri)))
		for _, t := range f.Tri {
			tok(fmt.Sprintf("%d %d %d", t[0], t[1], t[2]))
		}
		nums(f.Values)
	}
	return []byte(b.String())
}

// Digest returns the SHA-256, in hexadecimal, of a canonical encoding of
// the saved part of r with numbers rounded to DigestDigits significant
// digits. Equal digests mean the results agree to that many digits.
func (r *Results) Digest() string {
	if r == nil {
		r = &Results{}
	}
	s := sha256.Sum256(r.canonical())
	return hex.EncodeToString(s[:])
}

// Compare lists how b differs from a at DigestDigits significant digits,
// one line each, at most max lines (max <= 0: no limit). An empty list
// means the digests agree.
func Compare(a, b *Results, max int) []string {
	if a == nil {
		a = &Results{}
	}
	if b == nil {
		b = &Results{}
	}
	var out []string
	// Compare item by item so a message names the result that differs.
	ia, ib := a.items(), b.items()
	for key, va := range ia {
		if vb, ok := ib[key]; !ok {
			out = append(out, fmt.Sprintf("%s %s: missing now", key.kind, key.name))
		} else if va != vb {
			out = append(out, describe(key.kind, key.name, va, vb))
		}
	}
	for key := range ib {
		if _, ok := ia[key]; !ok {
			out = append(out, fmt.Sprintf("%s %s: new, not in the saved results", key.kind, key.name))
		}
	}
	slices.Sort(out)
	if len(out) == 0 && a.Digest() != b.Digest() {
		out = append(out, "results are in a different order")
	}
	if max > 0 && len(out) > max {
		out = append(out[:max], fmt.Sprintf("… and %d more", len(out)-max))
	}
	return out
}

type itemKey struct{ kind, name string }

// items maps every result to its canonical encoding.
func (r *Results) items() map[itemKey]string {
	m := map[itemKey]string{}
	for _, s := range r.Scalars {
		m[itemKey{"scalar", s.Name}] = string(s.Label) + " " + canon(s.Value)
	}
	for _, t := range r.Tables {
		m[itemKey{"table", t.Name}] = string((&Results{Tables: []Table{t}}).canonical())
	}
	for _, p := range r.Plots {
		m[itemKey{"plot", p.Name}] = string((&Results{Plots: []Plot{p}}).canonical())
	}
	for _, f := range r.Fields {
		m[itemKey{"field", f.Name}] = string((&Results{Fields: []Field{f}}).canonical())
	}
	return m
}

func describe(kind, name, a, b string) string {
	if kind == "scalar" {
		return fmt.Sprintf("scalar %s: saved %s, now %s", name, a, b)
	}
	la, lb := strings.Split(a, "\n"), strings.Split(b, "\n")
	n := 0
	for i := 0; i < len(la) || i < len(lb); i++ {
		if i >= len(la) || i >= len(lb) || la[i] != lb[i] {
			n++
		}
	}
	if len(la) != len(lb) {
		return fmt.Sprintf("%s %s: its shape changed", kind, name)
	}
	if n == 1 {
		return fmt.Sprintf("%s %s: 1 value differs", kind, name)
	}
	return fmt.Sprintf("%s %s: %d values differ", kind, name, n)
}

func sameNumber(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }

// num is a float64 that also travels through JSON when it is not finite
// (as the strings "NaN", "Inf", "-Inf"), since a failed run in a sweep
// leaves NaN in a table.
type num float64

func (v num) MarshalJSON() ([]byte, error) {
	f := float64(v)
	switch {
	case math.IsNaN(f):
		return []byte(`"NaN"`), nil
	case math.IsInf(f, 1):
		return []byte(`"Inf"`), nil
	case math.IsInf(f, -1):
		return []byte(`"-Inf"`), nil
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 64), nil
}

func (v *num) UnmarshalJSON(b []byte) error {
	switch string(b) {
	case `"NaN"`:
		*v = num(math.NaN())
		return nil
	case `"Inf"`:
		*v = num(math.Inf(1))
		return nil
	case `"-Inf"`:
		*v = num(math.Inf(-1))
		return nil
	}
	f, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		return fmt.Errorf("want a number, \"NaN\", \"Inf\" or \"-Inf\", got %s", Clip(string(b), 40))
	}
	*v = num(f)
	return nil
}

func nums(v []float64) []num {
	if v == nil {
		return nil
	}
	out := make([]num, len(v))
	for i, f := range v {
		out[i] = num(f)
	}
	return out
}

func floats(v []num) []float64 {
	if v == nil {
		return nil
	}
	out := make([]float64, len(v))
	for i, f := range v {
		out[i] = float64(f)
	}
	return out
}

// MarshalJSON writes Value as a number, or as "NaN", "Inf", "-Inf".
func (s Scalar) MarshalJSON() ([]byte, error) {
	type plain Scalar
	return json.Marshal(struct {
		plain
		Value num `json:"value"`
	}{plain(s), num(s.Value)})
}

// UnmarshalJSON reads what MarshalJSON writes.
func (s *Scalar) UnmarshalJSON(b []byte) error {
	type plain Scalar
	var w struct {
		plain
		Value num `json:"value"`
	}
	if err := strictUnmarshal(b, &w); err != nil {
		return err
	}
	*s = Scalar(w.plain)
	s.Value = float64(w.Value)
	return nil
}

// MarshalJSON writes non-finite entries as strings.
func (t Table) MarshalJSON() ([]byte, error) {
	type plain Table
	rows := make([][]num, len(t.Rows))
	for i, r := range t.Rows {
		rows[i] = nums(r)
		if rows[i] == nil {
			rows[i] = []num{}
		}
	}
	if t.Columns == nil {
		t.Columns = []Column{}
	}
	return json.Marshal(struct {
		plain
		Rows [][]num `json:"rows"`
	}{plain(t), rows})
}

// UnmarshalJSON reads what MarshalJSON writes.
func (t *Table) UnmarshalJSON(b []byte) error {
	type plain Table
	var w struct {
		plain
		Rows [][]num `json:"rows"`
	}
	if err := strictUnmarshal(b, &w); err != nil {
		return err
	}
	*t = Table(w.plain)
	t.Rows = make([][]float64, len(w.Rows))
	for i, r := range w.Rows {
		t.Rows[i] = floats(r)
		if t.Rows[i] == nil {
			t.Rows[i] = []float64{}
		}
	}
	return nil
}

// MarshalJSON writes non-finite entries as strings.
func (s Series) MarshalJSON() ([]byte, error) {
	return json.Marshal(struct {
		Name string `json:"name"`
		X    []num  `json:"x"`
		Y    []num  `json:"y"`
	}{s.Name, nonNil(nums(s.X)), nonNil(nums(s.Y))})
}

// UnmarshalJSON reads what MarshalJSON writes.
func (s *Series) UnmarshalJSON(b []byte) error {
	var w struct {
		Name string `json:"name"`
		X    []num  `json:"x"`
		Y    []num  `json:"y"`
	}
	if err := strictUnmarshal(b, &w); err != nil {
		return err
	}
	*s = Series{w.Name, nonNilF(floats(w.X)), nonNilF(floats(w.Y))}
	return nil
}

// MarshalJSON writes non-finite entries as strings.
func (f Field) MarshalJSON() ([]byte, error) {
	type plain Field
	if f.Tri == nil {
		f.Tri = [][3]int32{}
	}
	return json.Marshal(struct {
		plain
		X      []num `json:"x"`
		Y      []num `json:"y"`
		Values []num `json:"values"`
	}{plain(f), nonNil(nums(f.X)), nonNil(nums(f.Y)), nonNil(nums(f.Values))})
}

// UnmarshalJSON reads what MarshalJSON writes.
func (f *Field) UnmarshalJSON(b []byte) error {
	type plain Field
	var w struct {
		plain
		X      []num `json:"x"`
		Y      []num `json:"y"`
		Values []num `json:"values"`
	}
	if err := strictUnmarshal(b, &w); err != nil {
		return err
	}
	*f = Field(w.plain)
	f.X, f.Y, f.Values = nonNilF(floats(w.X)), nonNilF(floats(w.Y)), nonNilF(floats(w.Values))
	if f.Tri == nil {
		f.Tri = [][3]int32{}
	}
	return nil
}

func nonNil(v []num) []num {
	if v == nil {
		return []num{}
	}
	return v
}

func nonNilF(v []float64) []float64 {
	if v == nil {
		return []float64{}
	}
	return v
}

// strictUnmarshal refuses unknown fields: inside a result the format is
// ours and fixed per version, so an unknown field is a mistake to report.
func strictUnmarshal(b []byte, v any) error {
	d := json.NewDecoder(strings.NewReader(string(b)))
	d.DisallowUnknownFields()
	return d.Decode(v)
}

// Clip shortens s to at most n characters for a message, marking the cut.
func Clip(s string, n int) string {
	r := []rune(s)
	if len(r) <= n {
		return s
	}
	return string(r[:n]) + "…"
}
