package batch

import (
	"bytes"
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// Every example runs through Run, the code path of `gapbook run`, and
// every cell must be ok.
func TestExamplesRun(t *testing.T) {
	files, err := filepath.Glob("../../../examples/*.gapbook")
	if err != nil || len(files) == 0 {
		t.Fatalf("no examples found: %v", err)
	}
	for _, f := range files {
		t.Run(filepath.Base(f), func(t *testing.T) {
			var out, log bytes.Buffer
			report := filepath.Join(t.TempDir(), "r.html")
			res, ok, err := Run(context.Background(), f, Options{JSON: true, Report: report, Stdout: &out, Stderr: &log})
			if err != nil || !ok {
				t.Fatalf("ok=%v err=%v\n%s", ok, err, log.String())
			}
			var parsed struct {
				Cells []struct {
					ID, Status, Error string
					Values            map[string]struct {
						Value *float64
						Label string
					}
				}
			}
			if err := json.Unmarshal(out.Bytes(), &parsed); err != nil {
				t.Fatal(err)
			}
			if len(parsed.Cells) != len(res.Cells) || len(parsed.Cells) == 0 {
				t.Fatalf("%d cells in JSON", len(parsed.Cells))
			}
			for _, c := range parsed.Cells {
				if c.Status != "ok" || c.Error != "" {
					t.Errorf("cell %s: %s %s", c.ID, c.Status, c.Error)
				}
			}
			if n := strings.Count(log.String(), "\n"); n != len(res.Cells)+1 {
				t.Errorf("want one progress line per cell and a summary, got:\n%s", log.String())
			}
			html, _ := os.ReadFile(report)
			if !strings.Contains(string(html), "licensed engineers") {
				t.Error("report lacks the caution")
			}
		})
	}
}

// A failing cell is reported in the JSON with its message, and the cells
// that need it say so; the run is not ok.
func TestRunJSONForFailures(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "f.gapbook")
	doc := `{"gapbook":2,"title":"f","cells":[
	 {"id":"a","kind":"problem","inputs":{"domain":"interval","p":2.5}},
	 {"id":"b","kind":"mesh","inputs":{"problem":"a","cells":4,"h":-1}},
	 {"id":"c","kind":"solve","inputs":{"mesh":"b"}}]}`
	os.WriteFile(path, []byte(doc), 0o644)
	var out bytes.Buffer
	res, ok, err := Run(context.Background(), path, Options{JSON: true, Stdout: &out})
	if err != nil || ok {
		t.Fatalf("ok=%v err=%v", ok, err)
	}
	var parsed map[string]any
	if err := json.Unmarshal(out.Bytes(), &parsed); err != nil {
		t.Fatal(err)
	}
	cells := parsed["cells"].([]any)
	a := cells[0].(map[string]any)
	p := a["values"].(map[string]any)["p"].(map[string]any)
	if p["value"].(float64) != 2.5 || p["label"] != "reference" || a["status"] != "ok" {
		t.Errorf("cell a: %v", a)
	}
	if b := cells[1].(map[string]any); b["status"] != "error" || !strings.Contains(b["error"].(string), "cell b: input h:") {
		t.Errorf("cell b: %v", b)
	}
	c := cells[2].(map[string]any)
	if c["status"] != "error" || c["error"] != "cell c: input mesh: needs cell b, which failed" {
		t.Errorf("cell c: %v", c)
	}
	if res.OK {
		t.Error("OK must be false")
	}
}
