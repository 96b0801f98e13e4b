package main

import (
	"encoding/json"
	"reflect"
	"testing"

	"gapbook/notebook"
)

const sweepStudy = `{"gapbook": 2, "cells": [
 {"id": "p", "kind": "problem", "inputs": {"domain": "interval", "p": 3}},
 {"id": "m", "kind": "mesh", "inputs": {"problem": "p", "cells": 4}},
 {"id": "s", "kind": "solve", "inputs": {"mesh": "m"}},
 {"id": "sw", "kind": "sweep", "inputs": {"cell": "m", "input": "cells", "values": [2, 3, 4, 5, 6], "through": "s"}}]}`

// members returns the members a run posted to the page.
func (r *recorder) members(t *testing.T) []notebook.Member {
	t.Helper()
	r.mu.Lock()
	defer r.mu.Unlock()
	var out []notebook.Member
	for _, m := range r.msgs {
		if m["type"] != "member" {
			continue
		}
		b, _ := json.Marshal(m["member"])
		var x notebook.Member
		if err := json.Unmarshal(b, &x); err != nil {
			t.Fatal(err)
		}
		out = append(out, x)
	}
	return out
}

func sweepResults(t *testing.T, reply map[string]any) any {
	t.Helper()
	res, ok := reply["results"].(map[string]any)["sw"]
	if !ok {
		t.Fatalf("no saved results of the sweep in %v", reply)
	}
	return res
}

// The page spreads a run's members over helper workers: each computes its
// share and posts its members; the main engine takes them and computes
// none, and its results equal those of one engine alone, bit for bit.
func TestMembersSpreadOverWorkers(t *testing.T) {
	alone := &recorder{}
	one := newServer(alone.post)
	want := sweepResults(t, ask(t, one, alone, map[string]any{"id": 1, "op": "run", "doc": sweepStudy}))
	if n := len(alone.members(t)); n != 5 {
		t.Errorf("one engine posted %d members, want 5", n)
	}

	mainRec := &recorder{}
	main := newServer(mainRec.post)
	plan := ask(t, main, mainRec, map[string]any{"id": 1, "op": "plan", "doc": sweepStudy})
	pending, _ := plan["pending"].([]any)
	if len(pending) != 1 || pending[0].(map[string]any)["cell"] != "sw" || pending[0].(map[string]any)["members"] != 5.0 {
		t.Fatalf("plan: %v, want the sweep with 5 members", plan)
	}
	var supply []notebook.Member
	for k := 1; k <= 2; k++ {
		r := &recorder{}
		h := newServer(r.post)
		reply := ask(t, h, r, map[string]any{"id": 1, "op": "run", "doc": sweepStudy, "share": []int{k, 2}})
		if reply["type"] != "done" || reply["results"] != nil {
			t.Fatalf("share %d/2: %v; want done without results", k, reply)
		}
		got := r.members(t)
		// The sweep is cell 3: row r is share (r+3) mod 2 + 1, so share 1
		// has rows 1 and 3, share 2 rows 0, 2 and 4.
		if wantN := []int{2, 3}[k-1]; len(got) != wantN || reply["computed"] != float64(wantN) {
			t.Errorf("share %d/2 computed %d members (says %v), want %d", k, len(got), reply["computed"], wantN)
		}
		supply = append(supply, got...)
	}
	mainRec.msgs = nil
	reply := ask(t, main, mainRec, map[string]any{"id": 2, "op": "run", "members": supply})
	if reply["computed"] != 0.0 {
		t.Errorf("the main engine computed %v members, want 0 (all supplied)", reply["computed"])
	}
	if got := sweepResults(t, reply); !reflect.DeepEqual(got, want) {
		t.Errorf("spread results differ from one engine's:\n%v\n%v", got, want)
	}
	// Now cached: nothing left to spread.
	plan = ask(t, main, mainRec, map[string]any{"id": 3, "op": "plan"})
	if p, _ := plan["pending"].([]any); len(p) != 0 {
		t.Errorf("plan after the run: %v, want nothing pending", plan)
	}
	if m := ask(t, main, mainRec, map[string]any{"id": 4, "op": "run", "share": []int{3, 2}}); m["type"] != "error" {
		t.Errorf("share 3/2 accepted: %v", m)
	}
}

// A share run leaves the engine's copy of the notebook as it was: nothing
// partial is saved.
func TestShareRunSavesNothing(t *testing.T) {
	r := &recorder{}
	s := newServer(r.post)
	ask(t, s, r, map[string]any{"id": 1, "op": "run", "doc": sweepStudy, "share": []int{1, 2}})
	if string(s.doc) != sweepStudy {
		t.Errorf("a share run changed the engine's copy:\n%s", s.doc)
	}
}
