package notebook

import (
	"encoding/json"
	"fmt"
	"strings"
)

// Format version 2 calls the growth exponent p, as users and docs/ do:
// version 1's input and result name "alpha" becomes "p" (problem and
// constant cells, sweeps over it, run history), and "alpha_eigenvalue"
// becomes "p_eigenvalue"; an input 0 that meant "not given" (mesh.h,
// constant.alpha) is left out (docs/format.md, "Version 2").
func init() { migrations[1] = migrateV1 }

// v1Names maps, per kind, the version-2 input names back to version 1.
var v1Names = map[string]map[string]string{
	"problem":  {"p": "alpha"},
	"constant": {"p": "alpha"},
}

// v2Scalar renames result names of version 1.
func v2Scalar(name string) string {
	switch {
	case name == "alpha":
		return "p"
	case name == "alpha_eigenvalue":
		return "p_eigenvalue"
	case strings.HasSuffix(name, ".alpha"):
		return strings.TrimSuffix(name, "alpha") + "p"
	case strings.HasSuffix(name, ".alpha_eigenvalue"):
		return strings.TrimSuffix(name, "alpha_eigenvalue") + "p_eigenvalue"
	}
	return name
}

const migrationV1 = "migration-v1"

func migrateV1(doc map[string]any) error {
	cells, _ := doc["cells"].([]any)
	for i, c := range cells {
		cell, ok := c.(map[string]any)
		if !ok {
			continue
		}
		kind, _ := cell["kind"].(string)
		var notes []string
		if in, ok := cell["inputs"].(map[string]any); ok {
			notes = append(notes, renameInputs(kind, in)...)
		}
		if res, ok := cell["results"].(map[string]any); ok {
			if n := renameResults(res); n > 0 {
				notes = append(notes, fmt.Sprintf("%d saved result name(s) renamed (alpha → p); the saved digest is that of the renamed results", n))
			}
		}
		if len(notes) > 0 {
			id, _ := cell["id"].(string)
			addNote(doc, fmt.Sprintf("cells[%d] (%s, %s): %s", i, Clip(id, 64), Clip(kind, 40), strings.Join(notes, "; ")))
		}
	}
	hist, _ := doc["history"].([]any)
	for _, r := range hist {
		run, ok := r.(map[string]any)
		if !ok {
			continue
		}
		if ov, ok := run["override"].(map[string]any); ok && ov["input"] == "alpha" {
			ov["input"] = "p"
		}
		if ins, ok := run["inputs"].(map[string]any); ok {
			for id, in := range ins {
				if m, ok := in.(map[string]any); ok {
					renameInputs(kindOf(cells, id), m)
				}
			}
		}
		if rc, ok := run["cells"].(map[string]any); ok {
			for _, c := range rc {
				if m, ok := c.(map[string]any); ok {
					renameResults(m)
				}
			}
		}
	}
	return nil
}

func kindOf(cells []any, id string) string {
	for _, c := range cells {
		if m, ok := c.(map[string]any); ok && m["id"] == id {
			k, _ := m["kind"].(string)
			return k
		}
	}
	return ""
}

// renameInputs renames version-1 inputs of a cell of the given kind in
// place and says what it did.
func renameInputs(kind string, in map[string]any) []string {
	var notes []string
	if _, ok := v1Names[kind]; ok {
		if v, ok := in["alpha"]; ok {
			if _, taken := in["p"]; !taken {
				in["p"] = v
				delete(in, "alpha")
				notes = append(notes, "input alpha renamed p")
			}
		}
	}
	// Version 1 let 0 stand for "not given" in mesh.h and constant.alpha;
	// version 2 leaves the input out instead (0 is refused).
	if (kind == "mesh" && isZero(in["h"])) || (kind == "constant" && isZero(in["p"])) {
		name := "h"
		if kind == "constant" {
			name = "p"
		}
		delete(in, name)
		notes = append(notes, "input "+name+" = 0 (meaning not given) left out")
	}
	if kind == "sweep" && in["input"] == "alpha" {
		in["input"] = "p"
		notes = append(notes, "swept input alpha renamed p")
	}
	if kind == "plot" {
		if x, ok := in["x"].(string); ok && v2Scalar(x) != x {
			in["x"] = v2Scalar(x)
			notes = append(notes, "column "+x+" renamed "+v2Scalar(x))
		}
		if ys, ok := in["y"].([]any); ok {
			for i, y := range ys {
				if s, ok := y.(string); ok && v2Scalar(s) != s {
					ys[i] = v2Scalar(s)
					notes = append(notes, "column "+s+" renamed "+v2Scalar(s))
				}
			}
		}
	}
	return notes
}

// renameResults renames scalars and table columns of saved results in
// place and counts them.
func renameResults(res map[string]any) int {
	n := 0
	rename := func(m map[string]any) {
		if s, ok := m["name"].(string); ok {
			if t := v2Scalar(s); t != s {
				m["name"] = t
				n++
			}
		}
	}
	each := func(v any, f func(map[string]any)) {
		list, _ := v.([]any)
		for _, x := range list {
			if m, ok := x.(map[string]any); ok {
				f(m)
			}
		}
	}
	each(res["scalars"], rename)
	each(res["tables"], func(t map[string]any) { each(t["columns"], rename) })
	return n
}

// addNote records what a migration changed, for Notebook.Migration.
func addNote(doc map[string]any, note string) {
	notes, _ := doc[migrationKey].([]string)
	doc[migrationKey] = append(notes, note)
}

// migrationKey holds the migration notes in the decoded document; it is
// not a field of the file (decode takes it out).
const migrationKey = "\x00migration"

// rehashV1 moves the saved hashes of a migrated version-1 notebook to
// version 2: a saved hash that equals the version-1 hash of the cell's
// inputs (names as they were) is replaced by the version-2 hash, so
// results saved for the same inputs stay current.
func (nb *Notebook) rehashV1() {
	v1 := nb.hashes(true)
	v2 := nb.hashes(false)
	for i, c := range nb.Cells {
		if s := c.Saved; s != nil && v1[i] != "" && s.Hash == v1[i] {
			s.Hash = v2[i]
			if s.Results != nil {
				s.Digest = s.Results.Digest()
			}
		}
		// Version 2 carries intervals; they restate saved scalars, so the
		// digest is unchanged.
		k, ok := Lookup(c.Kind)
		ek, enclosing := k.(Enclosing)
		if s := c.Saved; ok && enclosing && s != nil && s.Results != nil && len(s.Results.Intervals) == 0 {
			s.Results.AddIntervals(ek.Intervals())
			if n := len(s.Results.Intervals); n > 0 {
				nb.Migration = append(nb.Migration, fmt.Sprintf("cells[%d] (%s, %s): %d interval(s) added from the saved scalars", i, c.ID, c.Kind, n))
			}
		}
	}
}

// legacyValues returns the validated inputs of a cell of kind k under
// their version-1 names and values.
func legacyValues(kind string, v Values) Values {
	out := Values{}
	for name, x := range v {
		if old, ok := v1Names[kind][name]; ok {
			name = old
		}
		if kind == "sweep" && name == "input" && x == "p" {
			x = "alpha"
		}
		if kind == "plot" {
			x = legacyColumns(name, x)
		}
		out[name] = x
	}
	return out
}

// legacyColumns names a plot's columns as version 1 did.
func legacyColumns(name string, x any) any {
	v1 := func(s string) string {
		switch {
		case s == "p":
			return "alpha"
		case s == "p_eigenvalue":
			return "alpha_eigenvalue"
		case strings.HasSuffix(s, ".p"):
			return strings.TrimSuffix(s, "p") + "alpha"
		case strings.HasSuffix(s, ".p_eigenvalue"):
			return strings.TrimSuffix(s, "p_eigenvalue") + "alpha_eigenvalue"
		}
		return s
	}
	switch v := x.(type) {
	case string:
		if name == "x" {
			return v1(v)
		}
	case []string:
		if name == "y" {
			out := make([]string, len(v))
			for i, s := range v {
				out[i] = v1(s)
			}
			return out
		}
	}
	return x
}

func isZero(v any) bool {
	n, ok := v.(json.Number)
	if !ok {
		return false
	}
	f, err := n.Float64()
	return err == nil && f == 0
}
