package notebook

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"reflect"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"
)

// versionKey is the top-level field that marks a gapbook file and carries
// its format version.
const versionKey = "gapbook"

// migrations[v] rewrites a decoded document of format version v into
// version v+1 in place. Load applies them in turn up to FormatVersion.
var migrations = map[int]func(doc map[string]any) error{}

// Load decodes a notebook file, migrating older format versions, and checks
// it. Every problem is reported with its path in the document. When the
// only problems are in cell inputs or kinds (things a person fixes in the
// cell), Load returns the notebook together with the *LoadError, so an
// editor can open it and show them; otherwise the notebook is nil.
func Load(data []byte) (*Notebook, error) {
	// A byte-order mark, which some editors write, is not part of the
	// document.
	data = bytes.TrimPrefix(data, bom)
	if len(data) > MaxFileBytes {
		return nil, &LoadError{[]Diagnostic{{"", fmt.Sprintf("file is %d bytes; at most %d allowed", len(data), MaxFileBytes)}}}
	}
	if !utf8.Valid(data) {
		return nil, &LoadError{[]Diagnostic{{"", "file is not valid UTF-8 text"}}}
	}
	d := json.NewDecoder(bytes.NewReader(data))
	d.UseNumber()
	var v any
	if err := d.Decode(&v); err != nil {
		return nil, &LoadError{[]Diagnostic{{"", syntaxMsg(data, err)}}}
	}
	if _, err := d.Token(); err == nil {
		return nil, &LoadError{[]Diagnostic{{"", fmt.Sprintf("unexpected data after the document at %s", lineCol(data, d.InputOffset()))}}}
	}
	var hard []Diagnostic
	checkTree(v, "", 0, &hard)
	if len(hard) > 0 {
		return nil, &LoadError{hard}
	}
	if p := checkDuplicateKeys(data); p != nil {
		return nil, &LoadError{[]Diagnostic{*p}}
	}
	doc, ok := v.(map[string]any)
	if !ok {
		return nil, &LoadError{[]Diagnostic{{"", "want a JSON object at the top of the file, got " + jsonType(v)}}}
	}
	from := doc[versionKey]
	if err := migrate(doc); err != nil {
		return nil, &LoadError{[]Diagnostic{{versionKey, err.Error()}}}
	}
	notes, _ := doc[migrationKey].([]string)
	delete(doc, migrationKey)
	nb, err := decode(doc)
	if nb != nil {
		nb.Migration = notes
		if from == json.Number("1") {
			nb.rehashV1()
		}
	}
	return nb, err
}

// bom is the UTF-8 byte-order mark.
var bom = []byte{0xEF, 0xBB, 0xBF}

// Sniff reports whether data can be a notebook file without decoding it
// into memory: within the size limit, UTF-8, one JSON object with a format
// version this program reads. It reads the document as a stream of tokens,
// so a large study costs no more than its text; Load checks the rest.
func Sniff(data []byte) error {
	data = bytes.TrimPrefix(data, bom)
	if len(data) > MaxFileBytes {
		return fmt.Errorf("file is %d bytes; at most %d allowed", len(data), MaxFileBytes)
	}
	if !utf8.Valid(data) {
		return errors.New("file is not valid UTF-8 text")
	}
	d := json.NewDecoder(bytes.NewReader(data))
	d.UseNumber()
	t, err := d.Token()
	if err != nil || t != json.Delim('{') {
		return errors.New("not a gapbook notebook: want a JSON object, {\"gapbook\": " + strconv.Itoa(FormatVersion) + ", ...}")
	}
	depth, version, expectKey := 1, "", true
	for depth > 0 {
		t, err := d.Token()
		if err != nil {
			return sniffErr(data, err)
		}
		delim, isDelim := t.(json.Delim)
		switch {
		case isDelim && (delim == '{' || delim == '['):
			if depth++; depth > MaxDepth {
				return fmt.Errorf("nesting deeper than %d levels", MaxDepth)
			}
		case isDelim:
			if depth--; depth == 1 {
				expectKey = true // a nested value of the top object ended
			}
		case depth == 1 && expectKey:
			if t == versionKey {
				n, err := d.Token()
				if err != nil {
					return sniffErr(data, err)
				}
				num, _ := n.(json.Number)
				version = string(num)
				if version == "" {
					version = "?"
				}
				continue // the value was read with its key
			}
			expectKey = false
		case depth == 1:
			expectKey = true // a scalar value of the top object
		}
	}
	if _, err := d.Token(); err == nil {
		return fmt.Errorf("unexpected data after the document at %s", lineCol(data, d.InputOffset()))
	}
	v, err := strconv.Atoi(version)
	switch {
	case version == "":
		return errors.New("gapbook: missing; a gapbook file starts with {\"gapbook\": " + strconv.Itoa(FormatVersion) + ", ...}")
	case err != nil || v < 0:
		return fmt.Errorf("gapbook: want a format version (a whole number ≥ 0), got %s", Clip(version, 40))
	case v > FormatVersion:
		return fmt.Errorf("gapbook: format version %d is newer than this gapbook reads (%d); update gapbook", v, FormatVersion)
	}
	return nil
}

func sniffErr(data []byte, err error) error {
	if errors.Is(err, io.EOF) || errors.Is(err, io.ErrUnexpectedEOF) {
		return errors.New("not valid JSON: the document ends before it is complete (a truncated file?)")
	}
	return errors.New(syntaxMsg(data, err))
}

func migrate(doc map[string]any) error {
	raw, ok := doc[versionKey]
	if !ok {
		return errors.New("missing; a gapbook file starts with {\"gapbook\": " + strconv.Itoa(FormatVersion) + ", ...}")
	}
	n, ok := raw.(json.Number)
	v, err := strconv.Atoi(string(n))
	if !ok || err != nil || v < 0 {
		return fmt.Errorf("want a format version (a whole number ≥ 0), got %s", Clip(jsonText(raw), 40))
	}
	if v > FormatVersion {
		return fmt.Errorf("format version %d is newer than this gapbook reads (%d); update gapbook", v, FormatVersion)
	}
	for ; v < FormatVersion; v++ {
		m := migrations[v]
		if m == nil {
			return fmt.Errorf("format version %d is no longer read by this gapbook (oldest %d)", v, oldestVersion())
		}
		if err := m(doc); err != nil {
			return fmt.Errorf("migrating from version %d to %d: %v", v, v+1, err)
		}
		doc[versionKey] = json.Number(strconv.Itoa(v + 1))
	}
	return nil
}

func oldestVersion() int {
	v := FormatVersion
	for v > 0 && migrations[v-1] != nil {
		v--
	}
	return v
}

func decode(doc map[string]any) (*Notebook, error) {
	var hard, soft []Diagnostic
	hardf := func(path, f string, a ...any) { hard = append(hard, Diagnostic{path, fmt.Sprintf(f, a...)}) }
	nb := &Notebook{Extra: extras(doc, versionKey, "title", "cells", "history")}
	if t, ok := doc["title"]; ok {
		s, ok := t.(string)
		switch {
		case !ok:
			hardf("title", "want a text, got %s", jsonType(t))
		case len(s) > MaxTitleBytes:
			hardf("title", "is %d bytes long; at most %d allowed", len(s), MaxTitleBytes)
		}
		nb.Title = s
	}
	cells, ok := doc["cells"].([]any)
	if c, present := doc["cells"]; present && !ok {
		hardf("cells", "want a list of cells, got %s", jsonType(c))
	}
	if len(cells) > MaxCells {
		hardf("cells", "has %d cells; at most %d allowed", len(cells), MaxCells)
		cells = nil
	}
	index := map[string]int{}
	for i, cv := range cells {
		path := fmt.Sprintf("cells[%d]", i)
		m, ok := cv.(map[string]any)
		if !ok {
			hardf(path, "want a cell object, got %s", jsonType(cv))
			continue
		}
		c := &Cell{Extra: extras(m, "id", "kind", "inputs", "results"), Inputs: map[string]json.RawMessage{}}
		id, ok := m["id"].(string)
		switch {
		case !ok:
			hardf(path+".id", "want a text id, got %s", jsonType(m["id"]))
		case !ValidID(id):
			hardf(path+".id", "%s is not a valid id; use 1 to %d letters, digits, - and _", strconv.Quote(Clip(id, 40)), MaxIDBytes)
		default:
			if j, dup := index[id]; dup {
				hardf(path+".id", "%q is already the id of cells[%d]; ids must be unique", id, j)
			}
			index[id] = i
		}
		c.ID = id
		kind, ok := m["kind"].(string)
		if !ok {
			hardf(path+".kind", "want the name of a kind, got %s", jsonType(m["kind"]))
		}
		c.Kind = kind
		if iv, present := m["inputs"]; present {
			im, ok := iv.(map[string]any)
			if !ok {
				hardf(path+".inputs", "want an object of inputs, got %s", jsonType(iv))
			}
			for k, v := range im {
				c.Inputs[k] = rawJSON(v)
			}
		}
		if rv, present := m["results"]; present {
			s, ps := decodeSaved(rv, path+".results")
			hard = append(hard, ps...)
			c.Saved = s
		}
		nb.Cells = append(nb.Cells, c)
	}
	if hv, present := doc["history"]; present {
		runs, ps := decodeHistory(hv)
		hard = append(hard, ps...)
		nb.History = runs
	}
	if len(hard) == 0 {
		soft = nb.Check()
	}
	switch {
	case len(hard) > 0:
		return nil, &LoadError{append(hard, soft...)}
	case len(soft) > 0:
		return nb, &LoadError{soft}
	}
	return nb, nil
}

// Check validates every cell against its kind: known kind, valid inputs,
// references to earlier cells of the right kinds. Paths are as in a file.
func (nb *Notebook) Check() []Diagnostic {
	var ps []Diagnostic
	pos := map[string]int{}
	for i, c := range nb.Cells {
		pos[c.ID] = i
	}
	for i, c := range nb.Cells {
		path := fmt.Sprintf("cells[%d]", i)
		k, ok := Lookup(c.Kind)
		if !ok {
			ps = append(ps, Diagnostic{path + ".kind", fmt.Sprintf("unknown kind %q; known kinds: %s", Clip(c.Kind, 40), strings.Join(Kinds(), ", "))})
			continue
		}
		vals, errs := ParseInputs(k, c.Inputs)
		for _, e := range errs {
			ps = append(ps, Diagnostic{path + ".inputs." + e.Field, e.Msg})
		}
		for _, r := range refs(k, vals) {
			if msg := nb.refProblem(i, r, pos); msg != "" {
				ps = append(ps, Diagnostic{path + ".inputs." + r.field, msg})
			}
		}
	}
	return ps
}

// refProblem says what is wrong with reference r from the cell at index i.
func (nb *Notebook) refProblem(i int, r refUse, pos map[string]int) string {
	j, ok := pos[r.id]
	switch {
	case !ok:
		return fmt.Sprintf("no cell %q in this notebook", r.id)
	case j == i:
		return "a cell cannot use itself"
	case j > i:
		return fmt.Sprintf("cell %q comes after this one; a cell can only use earlier cells", r.id)
	case len(r.kinds) > 0 && !slices.Contains(r.kinds, nb.Cells[j].Kind):
		return fmt.Sprintf("cell %q is a %s cell; want a cell of kind %s", r.id, nb.Cells[j].Kind, strings.Join(r.kinds, " or "))
	}
	return ""
}

func decodeSaved(v any, path string) (*Saved, []Diagnostic) {
	m, ok := v.(map[string]any)
	if !ok {
		return nil, []Diagnostic{{path, "want an object of results, got " + jsonType(v)}}
	}
	var ps []Diagnostic
	s := &Saved{Extra: extras(m, "hash", "digest", "scalars", "intervals", "tables", "plots", "fields"), Results: &Results{}}
	for _, k := range []string{"hash", "digest"} {
		h, present := m[k]
		if !present {
			continue
		}
		str, ok := h.(string)
		if !ok || !isHex64(str) {
			ps = append(ps, Diagnostic{path + "." + k, "want 64 hexadecimal digits (SHA-256), got " + Clip(jsonText(h), 40)})
		}
		if k == "hash" {
			s.Hash = str
		} else {
			s.Digest = str
		}
	}
	parts := []struct {
		key string
		dst any
	}{{"scalars", &s.Results.Scalars}, {"intervals", &s.Results.Intervals}, {"tables", &s.Results.Tables}, {"plots", &s.Results.Plots}, {"fields", &s.Results.Fields}}
	for _, p := range parts {
		if raw, present := m[p.key]; present {
			if err := strictUnmarshal(rawJSON(raw), p.dst); err != nil {
				ps = append(ps, Diagnostic{path + "." + p.key, jsonErr(err)})
			}
		}
	}
	if len(ps) == 0 {
		for _, p := range s.Results.Check() {
			ps = append(ps, Diagnostic{path + "." + p.Path, p.Msg})
		}
	}
	return s, ps
}

func decodeHistory(v any) ([]Run, []Diagnostic) {
	list, ok := v.([]any)
	if !ok {
		return nil, []Diagnostic{{"history", "want a list of runs, got " + jsonType(v)}}
	}
	if len(list) > MaxRuns {
		return nil, []Diagnostic{{"history", fmt.Sprintf("has %d runs; at most %d allowed", len(list), MaxRuns)}}
	}
	var runs []Run
	var ps []Diagnostic
	for i, e := range list {
		path := fmt.Sprintf("history[%d]", i)
		m, ok := e.(map[string]any)
		if !ok {
			ps = append(ps, Diagnostic{path, "want a run object, got " + jsonType(e)})
			continue
		}
		r := Run{Extra: extras(m, "at", "label", "override", "inputs", "cells")}
		fields := []struct {
			key string
			dst any
		}{{"at", &r.At}, {"label", &r.Label}, {"override", &r.Override}, {"inputs", &r.Inputs}, {"cells", &r.Cells}}
		for _, f := range fields {
			if raw, present := m[f.key]; present {
				if err := strictUnmarshal(rawJSON(raw), f.dst); err != nil {
					ps = append(ps, Diagnostic{path + "." + f.key, jsonErr(err)})
				}
			}
		}
		runs = append(runs, r)
	}
	return runs, ps
}

// Save encodes nb as a file of the current format version: indented JSON,
// known fields first in a fixed order, unknown fields kept.
func Save(nb *Notebook) ([]byte, error) {
	var ps []Diagnostic
	if len(nb.Cells) > MaxCells {
		ps = append(ps, Diagnostic{"cells", fmt.Sprintf("has %d cells; at most %d allowed", len(nb.Cells), MaxCells)})
	}
	if len(nb.History) > MaxRuns {
		ps = append(ps, Diagnostic{"history", fmt.Sprintf("has %d runs; at most %d allowed", len(nb.History), MaxRuns)})
	}
	seen := map[string]int{}
	cells := make([]any, len(nb.Cells))
	for i, c := range nb.Cells {
		if !ValidID(c.ID) {
			ps = append(ps, Diagnostic{fmt.Sprintf("cells[%d].id", i), fmt.Sprintf("%q is not a valid id; use 1 to %d letters, digits, - and _", Clip(c.ID, 40), MaxIDBytes)})
		} else if j, dup := seen[c.ID]; dup {
			ps = append(ps, Diagnostic{fmt.Sprintf("cells[%d].id", i), fmt.Sprintf("%q is already the id of cells[%d]; ids must be unique", c.ID, j)})
		}
		seen[c.ID] = i
		o := obj{{"id", c.ID}, {"kind", c.Kind}, {"inputs", rawMap(c.Inputs)}}
		if s := c.Saved; s != nil {
			r := s.Results
			if r == nil {
				r = &Results{}
			}
			so := obj{}
			if s.Hash != "" {
				so = append(so, kv{"hash", s.Hash})
			}
			if s.Digest != "" {
				so = append(so, kv{"digest", s.Digest})
			}
			for _, p := range []struct {
				k string
				n int
				v any
			}{{"scalars", len(r.Scalars), r.Scalars}, {"intervals", len(r.Intervals), r.Intervals}, {"tables", len(r.Tables), r.Tables}, {"plots", len(r.Plots), r.Plots}, {"fields", len(r.Fields), r.Fields}} {
				if p.n > 0 {
					so = append(so, kv{p.k, p.v})
				}
			}
			o = append(o, kv{"results", withExtra(so, s.Extra)})
		}
		cells[i] = withExtra(o, c.Extra)
	}
	if len(ps) > 0 {
		return nil, &LoadError{ps}
	}
	top := obj{{versionKey, FormatVersion}, {"title", nb.Title}, {"cells", cells}}
	if len(nb.History) > 0 {
		hist := make([]any, len(nb.History))
		for i, r := range nb.History {
			o := obj{{"at", r.At}, {"label", r.Label}}
			if r.Override != nil {
				o = append(o, kv{"override", r.Override})
			}
			if r.Inputs != nil {
				o = append(o, kv{"inputs", r.Inputs})
			}
			if r.Cells != nil {
				o = append(o, kv{"cells", r.Cells})
			}
			hist[i] = withExtra(o, r.Extra)
		}
		top = append(top, kv{"history", hist})
	}
	b, err := json.MarshalIndent(withExtra(top, nb.Extra), "", "  ")
	if err != nil {
		return nil, err
	}
	return append(b, '\n'), nil
}

// obj is a JSON object whose keys are written in the order given.
type obj []kv

type kv struct {
	k string
	v any
}

func (o obj) MarshalJSON() ([]byte, error) {
	var b bytes.Buffer
	b.WriteByte('{')
	for i, e := range o {
		if i > 0 {
			b.WriteByte(',')
		}
		k, _ := json.Marshal(e.k)
		b.Write(k)
		b.WriteByte(':')
		v, err := json.Marshal(e.v)
		if err != nil {
			return nil, fmt.Errorf("%s: %w", e.k, err)
		}
		b.Write(v)
	}
	b.WriteByte('}')
	return b.Bytes(), nil
}

func withExtra(o obj, extra map[string]json.RawMessage) obj {
	for _, k := range slices.Sorted(maps.Keys(extra)) {
		o = append(o, kv{k, extra[k]})
	}
	return o
}

func rawMap(m map[string]json.RawMessage) obj {
	o := obj{}
	return withExtra(o, m)
}

// extras returns the fields of m whose keys are not known, as raw JSON.
func extras(m map[string]any, known ...string) map[string]json.RawMessage {
	var out map[string]json.RawMessage
	for k, v := range m {
		if slices.Contains(known, k) {
			continue
		}
		if out == nil {
			out = map[string]json.RawMessage{}
		}
		out[k] = rawJSON(v)
	}
	return out
}

// rawJSON re-encodes a decoded value; json.Number keeps the digits as
// written, so numbers survive unchanged.
func rawJSON(v any) json.RawMessage {
	b, err := json.Marshal(v)
	if err != nil {
		return json.RawMessage("null")
	}
	return b
}

func jsonText(v any) string { return string(rawJSON(v)) }

func jsonType(v any) string {
	switch x := v.(type) {
	case nil:
		return "null"
	case bool:
		return strconv.FormatBool(x)
	case json.Number:
		return "the number " + Clip(string(x), 40)
	case string:
		return "the text " + strconv.Quote(Clip(x, 40))
	case []any:
		return "a list"
	case map[string]any:
		return "an object"
	}
	return fmt.Sprintf("%T", v)
}

func jsonErr(err error) string {
	var te *json.UnmarshalTypeError
	if errors.As(err, &te) {
		where := te.Field
		if where == "" {
			where = "value"
		}
		return fmt.Sprintf("%s: want %s, got %s", where, goTypeWords(te.Type), te.Value)
	}
	return strings.TrimPrefix(err.Error(), "json: ")
}

// goTypeWords names a Go type of the file's model in the words of the format.
func goTypeWords(t reflect.Type) string {
	switch t.Kind() {
	case reflect.Slice, reflect.Array:
		return "a list of " + goTypeWords(t.Elem()) + "s"
	case reflect.Map:
		return "an object"
	case reflect.String:
		return "a text"
	case reflect.Bool:
		return "true or false"
	case reflect.Float32, reflect.Float64, reflect.Int, reflect.Int32, reflect.Int64:
		return "a number"
	case reflect.Pointer:
		return goTypeWords(t.Elem())
	}
	return strings.ToLower(t.Name())
}

func isHex64(s string) bool {
	if len(s) != 64 {
		return false
	}
	for _, c := range s {
		if !(c >= '0' && c <= '9' || c >= 'a' && c <= 'f') {
			return false
		}
	}
	return true
}

// checkTree enforces the nesting and string-length limits everywhere,
// including in fields this version does not know.
func checkTree(v any, path string, depth int, ps *[]Diagnostic) {
	if len(*ps) >= 50 {
		return
	}
	if depth > MaxDepth {
		*ps = append(*ps, Diagnostic{path, fmt.Sprintf("nested deeper than %d levels", MaxDepth)})
		return
	}
	switch x := v.(type) {
	case string:
		if len(x) > MaxStringBytes {
			*ps = append(*ps, Diagnostic{path, fmt.Sprintf("text is %d bytes long; at most %d allowed", len(x), MaxStringBytes)})
		}
	case []any:
		for i, e := range x {
			checkTree(e, fmt.Sprintf("%s[%d]", path, i), depth+1, ps)
		}
	case map[string]any:
		for _, k := range slices.Sorted(maps.Keys(x)) {
			if len(k) > MaxStringBytes {
				*ps = append(*ps, Diagnostic{path, fmt.Sprintf("a field name is %d bytes long; at most %d allowed", len(k), MaxStringBytes)})
				continue
			}
			checkTree(x[k], joinPath(path, k), depth+1, ps)
		}
	}
}

func joinPath(path, key string) string {
	plain := key != ""
	for _, r := range key {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '_' || r == '-') {
			plain = false
			break
		}
	}
	if !plain {
		return path + "[" + strconv.Quote(Clip(key, 40)) + "]"
	}
	if path == "" {
		return key
	}
	return path + "." + key
}

// checkDuplicateKeys finds an object with the same key twice: the decoder
// would silently keep the last one, and saving would then lose the other.
func checkDuplicateKeys(data []byte) *Diagnostic {
	d := json.NewDecoder(bytes.NewReader(data))
	type frame struct {
		obj    bool
		keys   map[string]bool
		expect bool // next string token in an object is a key
	}
	var stack []*frame
	for {
		t, err := d.Token()
		if err != nil {
			return nil
		}
		var top *frame
		if len(stack) > 0 {
			top = stack[len(stack)-1]
		}
		if top != nil && top.obj && top.expect {
			if k, ok := t.(string); ok {
				if top.keys[k] {
					return &Diagnostic{"", fmt.Sprintf("field %q appears twice in one object at %s; keep one", Clip(k, 40), lineCol(data, d.InputOffset()))}
				}
				top.keys[k] = true
				top.expect = false
				continue
			}
		}
		switch t {
		case json.Delim('{'):
			stack = append(stack, &frame{obj: true, keys: map[string]bool{}, expect: true})
			continue
		case json.Delim('['):
			stack = append(stack, &frame{})
			continue
		case json.Delim('}'), json.Delim(']'):
			stack = stack[:len(stack)-1]
		}
		if len(stack) > 0 && stack[len(stack)-1].obj {
			stack[len(stack)-1].expect = true
		}
	}
}

func syntaxMsg(data []byte, err error) string {
	var se *json.SyntaxError
	if errors.As(err, &se) {
		return fmt.Sprintf("not valid JSON at %s: %s", lineCol(data, max(se.Offset-1, 0)), se.Error())
	}
	if errors.Is(err, errors.New("EOF")) || err.Error() == "EOF" {
		return "file is empty; want a JSON object"
	}
	if err.Error() == "unexpected EOF" {
		return "file ends in the middle of the JSON document"
	}
	return "not valid JSON: " + err.Error()
}

func lineCol(data []byte, off int64) string {
	if off > int64(len(data)) {
		off = int64(len(data))
	}
	line := 1 + bytes.Count(data[:off], []byte{'\n'})
	col := off - int64(bytes.LastIndexByte(data[:off], '\n'))
	return fmt.Sprintf("line %d, column %d", line, col)
}
