package batch

import (
	"context"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gapbook/notebook"
)

// A report written over an existing file replaces it whole; a path that
// cannot be written is a clear error naming it, with the old file intact
// and no temporary file left behind.
func TestWriteFileAtomic(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "report.html")
	if err := WriteFileAtomic(path, []byte("old")); err != nil {
		t.Fatal(err)
	}
	if err := WriteFileAtomic(path, []byte("new report")); err != nil {
		t.Fatal(err)
	}
	if b, _ := os.ReadFile(path); string(b) != "new report" {
		t.Errorf("report holds %q", b)
	}
	blocker := filepath.Join(dir, "file")
	os.WriteFile(blocker, []byte("x"), 0o644)
	bad := filepath.Join(blocker, "report.html") // a file is not a directory
	err := WriteFileAtomic(bad, []byte("y"))
	if err == nil || !strings.Contains(err.Error(), "cannot write "+bad) || !strings.Contains(err.Error(), "not a directory") {
		t.Errorf("unwritable path: %v", err)
	}
	entries, _ := os.ReadDir(dir)
	if len(entries) != 2 {
		t.Errorf("files left in the directory: %v", entries)
	}
}

// An interrupted run writes nothing: no JSON, no report, no export files;
// an export interrupted while it writes leaves no file either.
func TestInterruptedRunWritesNothing(t *testing.T) {
	dir := t.TempDir()
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	report, export := filepath.Join(dir, "r.html"), filepath.Join(dir, "out")
	var out strings.Builder
	_, _, err := Run(ctx, "../../../examples/default.gapbook", Options{JSON: true, Report: report, Export: export, Stdout: &out})
	if err == nil || !strings.Contains(err.Error(), "interrupted") {
		t.Errorf("interrupted run: %v", err)
	}
	if _, err := os.Stat(report); err == nil {
		t.Error("an interrupted run wrote its report")
	}
	if _, err := os.Stat(export); err == nil {
		t.Error("an interrupted run made its export directory")
	}
	if out.Len() != 0 {
		t.Errorf("an interrupted run printed JSON: %.80s", out.String())
	}
	// Export itself, interrupted: nothing in the directory.
	nb, _ := notebook.Load([]byte(`{"gapbook": 2, "cells": [{"id": "p", "kind": "problem", "inputs": {"domain": "rectangle"}}, {"id": "m", "kind": "mesh", "inputs": {"problem": "p", "cells": 2}}]}`))
	ev, err := notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := Export(ctx, export, ev); err == nil || !strings.Contains(err.Error(), "interrupted") {
		t.Errorf("interrupted export: %v", err)
	}
	if entries, _ := os.ReadDir(export); len(entries) != 0 {
		t.Errorf("an interrupted export left %v", entries)
	}
}
