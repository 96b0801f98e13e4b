//go:build !js

package main

import (
	"context"
	"fmt"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"gapbook/notebook"
	_ "gapbook/notebook/kinds"
)

// TestSlurmSweep runs a 16-member sweep on a real Slurm cluster (the one
// scripts/slurm-up.sh starts on this machine): gapbook slurm --submit
// hands the job array of 4 shares and the merge job to sbatch, and the
// merged study equals the single-process run bit for bit. Without a
// cluster it skips loudly, unless GAPBOOK_REQUIRE_SLURM is set (.ci/run
// sets it after starting the cluster).
func TestSlurmSweep(t *testing.T) {
	if _, err := exec.LookPath("sbatch"); err != nil || os.Getenv("SLURM_CONF") == "" {
		if os.Getenv("GAPBOOK_REQUIRE_SLURM") != "" {
			t.Fatal("GAPBOOK_REQUIRE_SLURM is set but there is no Slurm (sbatch and SLURM_CONF); start one with scripts/slurm-up.sh")
		}
		t.Skip("SKIPPED: no Slurm cluster (sbatch, SLURM_CONF); start one with scripts/slurm-up.sh to run this test")
	}
	dir := t.TempDir()
	bin := filepath.Join(dir, "gapbook")
	if out, err := exec.Command("go", "build", "-o", bin, ".").CombinedOutput(); err != nil {
		t.Fatalf("building gapbook: %v\n%s", err, out)
	}
	values := make([]string, 16)
	for i := range values {
		values[i] = fmt.Sprint(1.5 + 0.25*float64(i))
	}
	doc := `{"gapbook": 2, "title": "slurm", "cells": [
 {"id": "p", "kind": "problem", "inputs": {"domain": "L-shape", "p": 3}},
 {"id": "m", "kind": "mesh", "inputs": {"problem": "p", "cells": 4}},
 {"id": "s", "kind": "solve", "inputs": {"mesh": "m"}},
 {"id": "b", "kind": "bound", "inputs": {"solution": "s"}},
 {"id": "sw", "kind": "sweep", "inputs": {"cell": "p", "input": "p", "values": [` + strings.Join(values, ", ") + `], "through": "b"}}]}`
	study := filepath.Join(dir, "study.gapbook")
	if err := os.WriteFile(study, []byte(doc), 0o644); err != nil {
		t.Fatal(err)
	}
	out, err := exec.Command(bin, "slurm", study, "--shares", "4", "--dir", filepath.Join(dir, "run"), "--submit").CombinedOutput()
	if err != nil {
		t.Fatalf("gapbook slurm: %v\n%s", err, out)
	}
	merged := filepath.Join(dir, "run", "merged.gapbook")
	deadline := time.Now().Add(3 * time.Minute)
	for {
		if _, err := os.Stat(merged); err == nil {
			break
		}
		if time.Now().After(deadline) {
			logs, _ := filepath.Glob(filepath.Join(dir, "run", "logs", "*"))
			var text []string
			for _, l := range logs {
				b, _ := os.ReadFile(l)
				text = append(text, l+":\n"+string(b))
			}
			q, _ := exec.Command("squeue").CombinedOutput()
			t.Fatalf("no merged study after 3 minutes\n%s\nsqueue:\n%s", strings.Join(text, "\n"), q)
		}
		time.Sleep(500 * time.Millisecond)
	}
	parts, _ := filepath.Glob(filepath.Join(dir, "run", "parts", "part-*.json"))
	if len(parts) != 4 {
		t.Errorf("%d parts, want 4", len(parts))
	}
	b, err := os.ReadFile(merged)
	if err != nil {
		t.Fatal(err)
	}
	nbm, err := notebook.Load(b)
	if err != nil {
		t.Fatal(err)
	}
	nb, _ := notebook.Load([]byte(doc))
	ev, err := notebook.NewEngine().Evaluate(context.Background(), nb, notebook.Options{})
	if err != nil {
		t.Fatal(err)
	}
	for i, o := range nbm.States() {
		if s := ev.Cells[i]; o.Status != notebook.StatusOK || o.Digest != s.Digest {
			t.Errorf("cell %s: merged on Slurm %s %s, single process %s", o.ID, o.Status, o.Digest, s.Digest)
		}
	}
}
