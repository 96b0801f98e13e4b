package batch

import (
	"context"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gapbook/notebook"
)

// sweepStudy is a study with two sweeps: 7 exponents through the bound
// cell, and 5 mesh sizes through the solve.
const sweepStudy = `{"gapbook": 2, "title": "shares", "cells": [
 {"id": "p", "kind": "problem", "inputs": {"domain": "L-shape", "p": 3}},
 {"id": "m", "kind": "mesh", "inputs": {"problem": "p", "cells": 4}},
 {"id": "s", "kind": "solve", "inputs": {"mesh": "m"}},
 {"id": "b", "kind": "bound", "inputs": {"solution": "s"}},
 {"id": "byp", "kind": "sweep", "inputs": {"cell": "p", "input": "p", "values": [1.5, 2, 2.5, 3, 3.5, 4, 5], "through": "b"}},
 {"id": "byn", "kind": "sweep", "inputs": {"cell": "m", "input": "cells", "values": [2, 3, 4, 5, 6], "through": "s"}}]}`

// A study run in three shares and merged equals the study run in one
// process, bit for bit (every cell's digest); a part of another version of
// the study is refused, and a missing part is named.
func TestSharesMergeBitForBit(t *testing.T) {
	dir := t.TempDir()
	study := filepath.Join(dir, "study.gapbook")
	os.WriteFile(study, []byte(sweepStudy), 0o644)
	ctx := context.Background()

	nb, _ := notebook.Load([]byte(sweepStudy))
	single, err := notebook.NewEngine().Evaluate(ctx, nb, notebook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	var parts []string
	total := 0
	for k := 1; k <= 3; k++ {
		out := filepath.Join(dir, fmt.Sprintf("part-%d.json", k))
		p, err := RunShare(ctx, study, k, 3, 1, out)
		if err != nil {
			t.Fatal(err)
		}
		total += len(p.Members)
		parts = append(parts, out)
	}
	if total != 12 {
		t.Errorf("the shares computed %d members, want 12 (7 + 5), each once", total)
	}
	doc, ev, err := Merge(ctx, study, parts)
	if err != nil {
		t.Fatal(err)
	}
	for i, o := range ev.Cells {
		if s := single.Cells[i]; o.Status != notebook.StatusOK || o.Digest != s.Digest {
			t.Errorf("cell %s: merged %s %s, single process %s %s", o.ID, o.Status, o.Digest, s.Status, s.Digest)
		}
	}
	// The merged file holds the results, current for its inputs.
	merged, err := notebook.Load(doc)
	if err != nil {
		t.Fatal(err)
	}
	for _, o := range merged.States() {
		if o.Status != notebook.StatusOK {
			t.Errorf("merged file: cell %s is %s", o.ID, o.Status)
		}
	}

	if _, _, err := Merge(ctx, study, parts[:2]); err == nil || !strings.Contains(err.Error(), "share 3/3 is missing") {
		t.Errorf("a missing part: %v", err)
	}
	other := filepath.Join(dir, "other.gapbook")
	os.WriteFile(other, []byte(strings.Replace(sweepStudy, `"p": 3}`, `"p": 2.5}`, 1)), 0o644)
	if _, _, err := Merge(ctx, other, parts); err == nil || !strings.Contains(err.Error(), "another version of the study") {
		t.Errorf("parts of another version: %v", err)
	}
	if _, _, err := Merge(ctx, study, []string{parts[0], parts[0]}); err == nil || !strings.Contains(err.Error(), "are both share 1/3") {
		t.Errorf("a part twice: %v", err)
	}
	var p Part
	b, _ := os.ReadFile(parts[0])
	if json.Unmarshal(b, &p) != nil || p.Version != PartVersion || p.Share != [2]int{1, 3} || len(p.Study) != 64 {
		t.Errorf("part file: %+v", p)
	}
}
