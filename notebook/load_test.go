package notebook

import (
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"testing"
)

func problems(err error) []string {
	var le *LoadError
	if !errors.As(err, &le) {
		return nil
	}
	var out []string
	for _, p := range le.Problems {
		out = append(out, p.String())
	}
	return out
}

func TestLoadReportsProblemsWithPaths(t *testing.T) {
	tests := []struct {
		name    string
		doc     string
		partial bool // notebook returned despite problems
		want    []string
	}{
		{"bad number", `{"gapbook":1,"cells":[{"id":"a","kind":"scale"},{"id":"b","kind":"scale"},{"id":"c","kind":"scale"},{"id":"d","kind":"scale","inputs":{"a":"abc"}}]}`,
			true, []string{`cells[3].inputs.a: want a number > 0, got "abc"`}},
		{"every problem", `{"gapbook":1,"cells":[{"id":"a","kind":"scale","inputs":{"a":-1,"n":0}},{"id":"b","kind":"sail"}]}`,
			true, []string{"cells[0].inputs.a: want a number > 0, got -1", "cells[0].inputs.n: want a whole number ≥ 1 and ≤ 1000, got 0", `cells[1].kind: unknown kind "sail"; known kinds: `}},
		{"refs", `{"gapbook":1,"cells":[{"id":"a","kind":"scale","inputs":{"from":"b"}},{"id":"b","kind":"memo"},{"id":"c","kind":"scale","inputs":{"from":"b"}}]}`,
			true, []string{`cells[0].inputs.from: cell "b" comes after this one; a cell can only use earlier cells`, `cells[2].inputs.from: cell "b" is a memo cell; want a cell of kind scale`}},
		{"bad ids", `{"gapbook":1,"cells":[{"id":"a b","kind":"memo"},{"id":"x","kind":"memo"},{"id":"x","kind":"memo"},{"id":"","kind":"memo"},{"kind":"memo"}]}`,
			false, []string{`cells[0].id: "a b" is not a valid id; use 1 to 64 letters, digits, - and _`, `cells[2].id: "x" is already the id of cells[1]; ids must be unique`, `cells[3].id: "" is not a valid id`, "cells[4].id: want a text id, got null"}},
		{"shapes", `{"gapbook":1,"title":3,"cells":{},"history":"x"}`,
			false, []string{"title: want a text, got the number 3", "cells: want a list of cells, got an object", "history: want a list of runs, got the text \"x\""}},
		{"not json", "{\"gapbook\":1,\n \"cells\": [,]}", false, []string{"not valid JSON at line 2, column 12"}},
		{"empty", "", false, []string{"file is empty"}},
		{"top array", `[1]`, false, []string{"want a JSON object at the top of the file, got a list"}},
		{"no version", `{"cells":[]}`, false, []string{`gapbook: missing; a gapbook file starts with {"gapbook": 2, ...}`}},
		{"newer", `{"gapbook":7}`, false, []string{"gapbook: format version 7 is newer than this gapbook reads (2); update gapbook"}},
		{"version text", `{"gapbook":"1"}`, false, []string{`gapbook: want a format version (a whole number ≥ 0), got "1"`}},
		{"duplicate key", `{"gapbook":1,"cells":[{"id":"a","id":"b","kind":"memo"}]}`, false, []string{`field "id" appears twice in one object`}},
		{"trailing", `{"gapbook":1} {}`, false, []string{"unexpected data after the document"}},
		{"bad results", `{"gapbook":1,"cells":[{"id":"a","kind":"memo","results":{"hash":"zz","scalars":[{"name":"J","value":1,"label":"sure"}]}}]}`,
			false, []string{"cells[0].results.hash: want 64 hexadecimal digits (SHA-256), got \"zz\""}},
		{"bad label", `{"gapbook":1,"cells":[{"id":"a","kind":"memo","results":{"scalars":[{"name":"J","value":1,"label":"sure"}],"tables":[{"name":"t","columns":[{"name":"x"}],"rows":[[1,2]]}]}}]}`,
			false, []string{`cells[0].results.scalars[0].label: want guaranteed, estimate or reference, got "sure"`, "cells[0].results.tables[0].rows[0]: has 2 values, want 1, one per column"}},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			nb, err := Load([]byte(tt.doc))
			got := problems(err)
			if err == nil || len(got) != len(tt.want) {
				t.Fatalf("got %d problems %q, want %q", len(got), got, tt.want)
			}
			for i := range tt.want {
				if !strings.Contains(got[i], tt.want[i]) {
					t.Errorf("problem %d = %q, want it to contain %q", i, got[i], tt.want[i])
				}
			}
			if (nb != nil) != tt.partial {
				t.Errorf("notebook returned = %v, want %v", nb != nil, tt.partial)
			}
		})
	}
}

func TestLimits(t *testing.T) {
	big := strings.Repeat("x", MaxStringBytes+1)
	var cells []string
	for i := 0; i <= MaxCells; i++ {
		cells = append(cells, fmt.Sprintf(`{"id":"c%d","kind":"memo"}`, i))
	}
	deep := strings.Repeat("[", MaxDepth+2) + strings.Repeat("]", MaxDepth+2)
	tests := []struct{ doc, want string }{
		{`{"gapbook":1,"cells":[{"id":"a","kind":"memo","inputs":{"text":"` + big + `"}}]}`, "cells[0].inputs.text: text is 1048577 bytes long; at most 1048576 allowed"},
		{`{"gapbook":1,"cells":[` + strings.Join(cells, ",") + `]}`, "cells: has 1001 cells; at most 1000 allowed"},
		{`{"gapbook":1,"extra":` + deep + `}`, "nested deeper than 64 levels"},
		{`{"gapbook":1,"title":"` + strings.Repeat("t", MaxTitleBytes+1) + `"}`, "title: is 1001 bytes long; at most 1000 allowed"},
		{`{"gapbook":1,"cells":[{"id":"` + strings.Repeat("i", 65) + `","kind":"memo"}]}`, "is not a valid id; use 1 to 64"},
	}
	for _, tt := range tests {
		_, err := Load([]byte(tt.doc))
		if err == nil || !strings.Contains(err.Error(), tt.want) {
			t.Errorf("got %v, want %q", Clip(fmt.Sprint(err), 200), tt.want)
		}
	}
	if _, err := Load(make([]byte, MaxFileBytes+1)); err == nil || !strings.Contains(err.Error(), "at most 67108864 allowed") {
		t.Errorf("size limit: %v", err)
	}
}

func TestUnknownFieldsKept(t *testing.T) {
	doc := `{"gapbook":2,"title":"T","future":{"x":[1,2.50,"y"]},"cells":[{"id":"a","kind":"memo","inputs":{"text":"hi","colour":"teal","n":1.0e3},"folded":true,"results":{"hint":1}}],"history":[{"at":"","label":"","weather":"fine"}]}`
	nb, err := Load([]byte(doc))
	if err != nil {
		t.Fatal(err)
	}
	out, err := Save(nb)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{`"future": {`, `2.50`, `"colour": "teal"`, `"n": 1.0e3`, `"folded": true`, `"hint": 1`, `"weather": "fine"`} {
		if !strings.Contains(string(out), want) {
			t.Errorf("saved file lacks %s:\n%s", want, out)
		}
	}
	if !jsonEqual(t, []byte(doc), out) {
		t.Errorf("load → save changed the document:\n%s", out)
	}
}

// jsonEqual compares two documents as JSON values, numbers by value.
func jsonEqual(t *testing.T, a, b []byte) bool {
	t.Helper()
	var va, vb any
	if err := json.Unmarshal(a, &va); err != nil {
		t.Fatal(err)
	}
	if err := json.Unmarshal(b, &vb); err != nil {
		t.Fatal(err)
	}
	ja, _ := json.Marshal(va)
	jb, _ := json.Marshal(vb)
	return string(ja) == string(jb)
}

// A synthetic version 0 called cells "steps", the kind "type" and the
// inputs "params"; the migration renames them.
func TestMigrationFromVersion0(t *testing.T) {
	migrations[0] = func(doc map[string]any) error {
		steps, ok := doc["steps"].([]any)
		if !ok {
			return errors.New("steps: want a list")
		}
		for _, s := range steps {
			m, ok := s.(map[string]any)
			if !ok {
				return errors.New("steps: want objects")
			}
			m["kind"], m["inputs"] = m["type"], m["params"]
			delete(m, "type")
			delete(m, "params")
		}
		doc["cells"] = steps
		delete(doc, "steps")
		return nil
	}
	defer delete(migrations, 0)
	nb, err := Load([]byte(`{"gapbook":0,"title":"old","steps":[{"id":"a","type":"scale","params":{"a":2}},{"id":"b","type":"memo","params":{"text":"x"},"keep":1}]}`))
	if err != nil {
		t.Fatal(err)
	}
	out, _ := Save(nb)
	want := `{"gapbook":2,"title":"old","cells":[{"id":"a","kind":"scale","inputs":{"a":2}},{"id":"b","kind":"memo","inputs":{"text":"x"},"keep":1}]}`
	if !jsonEqual(t, out, []byte(want)) {
		t.Errorf("migrated to\n%s\nwant\n%s", out, want)
	}
	if _, err := Load([]byte(`{"gapbook":0,"steps":3}`)); err == nil || !strings.Contains(err.Error(), "gapbook: migrating from version 0 to 1: steps: want a list") {
		t.Errorf("failed migration: %v", err)
	}
	delete(migrations, 0)
	if _, err := Load([]byte(`{"gapbook":0}`)); err == nil || !strings.Contains(err.Error(), "format version 0 is no longer read by this gapbook (oldest 1)") {
		t.Errorf("without migration: %v", err)
	}
}

func TestSaveRefusesBadIDs(t *testing.T) {
	nb := &Notebook{Cells: []*Cell{{ID: "ok", Kind: "memo"}, {ID: "ok", Kind: "memo"}, {ID: "<x>", Kind: "memo"}}}
	_, err := Save(nb)
	got := problems(err)
	if len(got) != 2 || !strings.Contains(got[0], `cells[1].id: "ok" is already the id of cells[0]`) || !strings.Contains(got[1], `cells[2].id: "<x>" is not a valid id`) {
		t.Errorf("got %q", got)
	}
}
