// Command wasm is the notebook engine as a WebAssembly program for a Web
// Worker: it decodes requests from the page, calls package notebook and
// posts progress and results back. It holds no numerics of its own.
//
// # Protocol
//
// Every message is a JSON text. The engine keeps its own copy of the
// notebook: the page sends the whole file once per engine (and when a file
// is opened), then only what changed, cell by cell:
//
//	{"id": 7, "op": "run", "doc": "<the .gapbook file text>", "only": ["solve"], "record": "p = 3"}
//	{"id": 8, "op": "show", "edit": {"cells": [{"id": "problem", "kind": "problem", "inputs": {...}}], "order": ["about", "problem", ...]}}
//
// An edit's cells replace the cells with their ids (or are added); "order"
// lists every cell id in order and drops the others; "title" and "history"
// replace the notebook's when present.
//
// and the worker answers with messages carrying the same id and a type:
//
//	{"type": "ready", "kinds": [...], "caution": "...", "version": 1}   once, at start-up (id 0)
//	{"id": 7, "type": "progress", "cell": "solve", "fraction": 0.4, "message": "Newton step 3"}
//	{"id": 7, "type": "cell", "view": {...}}      a cell finished (run only)
//	{"id": 7, "type": "member", "member": {...}}  a member of a multi-member cell finished (run only)
//	{"id": 7, "type": "done", ...}                the answer; ends the request
//	{"id": 7, "type": "error", "error": "..."}    the request failed; ends it
//	{"type": "exit"}                              the engine ended (posted by worker.js)
//
// A cell view ("view", and each of "cells" in an answer) carries the id,
// kind and status ("ok", "stale", "error") of a cell, its error (input to
// blame, message, failed dependency), "fields" (a message per input),
// "scalars" (name, label, unit, "value" with every digit and "shown" for
// people), "html" (tables, plots and fields, escaped), "body" (a note's
// text rendered), the digest and whether saved results were reproduced.
//
// Operations: "show" (cell views from the saved results, no evaluation),
// "run" (evaluate all cells or "only" some and the cells they need; the
// answer carries "results", the saved results of each cell computed, and,
// when "record" is set, the "history" with the new run appended; the
// engine's copy is updated the same way), "preview" (markdown of
// a note), "compare" (runs side by side: table and overlaid plot),
// "report" (the printable page) and "csv" (a table of a cell as CSV),
// "plan" (the multi-member cells a run of "only" would compute, not cached:
// "pending", each with its cell, hash and number of members).
//
// A run may carry "members", members the page already has (they are taken
// instead of computed), and "share": [K, N], which computes only the K-th
// of N shares of the members of multi-member cells, saves nothing and
// answers with "computed" alone: a helper worker's part of a run spread
// over several engines (docs/architecture.md, "Members in the page").
// Cancelling is the page's job: it terminates the worker and starts a new
// one from the compiled module.
package main
