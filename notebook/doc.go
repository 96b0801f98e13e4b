// Package notebook is the gapbook document and its engine: an ordered list
// of cells (id, kind, inputs, results) evaluated in order with caching,
// progress and cancellation, saved as a versioned JSON file, and rendered
// to safe HTML. Cell kinds live in a registry; a new kind is one file.
//
// # File format (version 2; docs/format.md)
//
// A notebook file (*.gapbook) is one UTF-8 JSON object:
//
//		{
//		  "gapbook": 2,
//		  "title": "Duct flow of a shear-thinning fluid",
//		  "cells": [
//		    {"id": "intro", "kind": "note",
//		     "inputs": {"text": "We solve $-\\nabla\\cdot(|\\nabla u|^{p-2}\\nabla u) = f$."}},
//		    {"id": "chart", "kind": "plot",
//		     "inputs": {"from": "study", "x": "h", "y": ["bound"], "logx": true, "logy": true},
//		     "results": {
//		       "hash": "<64 hex digits: SHA-256 of the inputs and of every input they depend on>",
//		       "digest": "<64 hex digits: SHA-256 of the results, see below>",
//		       "scalars": [{"name": "J", "value": 0.0123, "label": "guaranteed", "unit": "W"}],
//		       "tables": [{"name": "conv", "columns": [{"name": "h"}, {"name": "bound"}],
//		                   "rows": [[0.5, 0.1], [0.25, "NaN"]]}],
//		       "plots": [{"name": "plot", "series": [{"name": "bound", "x": [0.5], "y": [0.1]}]}],
//		       "fields": [{"name": "u", "x": [0, 1, 0], "y": [0, 0, 1],
//		                   "tri": [[0, 1, 2]], "values": [0, 1, 2], "percell": false}]
//		     }}
//		  ],
//		  "history": [
//		    {"at": "2026-05-01T10:00:00Z", "label": "p = 3",
//		     "override": {"cell": "problem", "input": "p", "value": 3},
//		     "inputs": {"problem": {"p": 3}},
//		     "cells": {"problem": {"status": "ok", "digest": "…",
//		               "scalars": [{"name": "J", "value": 0.0123, "label": "guaranteed"}]}}}
//		  ]
//		}
//
//	  - "gapbook" is the format version and marks the file as ours. Files of
//	    an older version are migrated on load (one function per version step);
//	    a newer version is refused with a request to update gapbook.
//	  - Cell ids are 1 to 64 letters, digits, "-" and "_", unique in the
//	    file. A cell refers to earlier cells only, by id, through inputs of
//	    type "id of an earlier cell" (for example "from" of a plot).
//	  - "inputs" holds the kind's inputs; absent ones take their defaults.
//	  - "results" is optional: what was computed last, with the hash of the
//	    inputs it came from (a different hash marks the cell stale) and its
//	    digest. Numbers that are not finite are written "NaN", "Inf", "-Inf".
//	    Labels are "guaranteed", "estimate" or "reference".
//	  - "history" keeps past runs: when, a label, the one input overridden
//	    (sweeps, exponent studies), the inputs as run, and per cell its
//	    status, digest, scalars and tables, so runs can be compared side by
//	    side and overlaid in a plot.
//	  - Fields this version does not know are kept as they are, at the top,
//	    in cells, in inputs, in results and in runs; load → save loses
//	    nothing. Inside scalars, tables, plots and fields the format is fixed
//	    and an unknown field is reported.
//
// The digest is the SHA-256 of a canonical text encoding of the results:
// one token a line, names and labels quoted, every number with 12
// significant digits in exponent form ("3.33333333333e-01", 0 and -0 as
// "0", "nan", "inf", "-inf"); units, titles and axis labels are left out.
// A rerun elsewhere that agrees to 12 digits gives the same digest and is
// reported as reproduced; otherwise the differing results are named.
//
// Loading checks everything and reports each problem with its path, for
// example "cells[3].inputs.p: want a number > 1, got "abc"". Limits guard
// against hostile files: 64 MiB per file, 1000 cells, 1000 runs, 1 MiB per
// string, 64 bytes per id, 1000 bytes of title, nesting depth 64, and no
// key twice in one object.
//
// # Notes
//
// Notes are markdown (CommonMark, rendered by goldmark in notebook/markdown)
// with mathematics between $…$ and $$…$$.
// Raw HTML is never rendered; links are kept only to http(s) addresses and
// in-page anchors ("#id"); images are never loaded (their alternative text
// is shown), so a notebook works offline and tells no server it was opened.
package notebook
