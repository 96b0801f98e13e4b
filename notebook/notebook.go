package notebook

import (
	"encoding/json"
	"fmt"
	"strings"
)

// FormatVersion is the version of the file format this package writes.
const FormatVersion = 2

// Limits against hostile or broken files.
const (
	MaxFileBytes   = 64 << 20 // a whole file
	MaxCells       = 1000     // cells in one notebook
	MaxRuns        = 1000     // entries in the run history
	MaxStringBytes = 1 << 20  // any one string in the file
	MaxIDBytes     = 64       // a cell id
	MaxTitleBytes  = 1000     // the title
	MaxDepth       = 64       // nesting of arrays and objects
)

// Notebook is an ordered list of cells with a title and a run history.
type Notebook struct {
	Title   string
	Cells   []*Cell
	History []Run
	// Extra holds top-level fields this version does not know, kept as
	// they were so that saving loses nothing.
	Extra map[string]json.RawMessage
	// Migration says, per cell, what loading an older format version
	// changed (empty for a file of the current version).
	Migration []string
}

// Cell is one step of a notebook.
type Cell struct {
	ID   string
	Kind string
	// Inputs as they are in the file, compact JSON; unknown inputs stay.
	Inputs map[string]json.RawMessage
	// Saved holds the results last recorded in the file, or nil.
	Saved *Saved
	Extra map[string]json.RawMessage
}

// Saved is a cell's results as recorded in the file.
type Saved struct {
	// Hash identifies the inputs (and the inputs of every dependency)
	// the results were computed from; a different hash means stale.
	Hash string
	// Digest is Results.Digest() when they were saved.
	Digest  string
	Results *Results
	Extra   map[string]json.RawMessage
}

// Cell returns the cell with the given id and its index, or nil and -1.
func (nb *Notebook) Cell(id string) (*Cell, int) {
	for i, c := range nb.Cells {
		if c.ID == id {
			return c, i
		}
	}
	return nil, -1
}

// SetInput sets input name of cell to v, encoded as JSON. Cells that depend
// on it become stale because their hash changes.
func (c *Cell) SetInput(name string, v any) error {
	b, err := json.Marshal(v)
	if err != nil {
		return fmt.Errorf("cell %s: input %s: %v", c.ID, name, err)
	}
	if c.Inputs == nil {
		c.Inputs = map[string]json.RawMessage{}
	}
	c.Inputs[name] = b
	return nil
}

// ValidID reports whether id is a usable cell id: 1 to MaxIDBytes
// letters, digits, '-' and '_'.
func ValidID(id string) bool {
	if id == "" || len(id) > MaxIDBytes {
		return false
	}
	for _, r := range id {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '-' || r == '_') {
			return false
		}
	}
	return true
}

// Diagnostic is one thing wrong in a file, at a path such as
// "cells[3].inputs.p".
type Diagnostic struct {
	Path string
	Msg  string
}

func (p Diagnostic) String() string {
	if p.Path == "" {
		return p.Msg
	}
	return p.Path + ": " + p.Msg
}

// LoadError lists every problem found in a file.
type LoadError struct {
	Problems []Diagnostic
}

func (e *LoadError) Error() string {
	const show = 30
	var b strings.Builder
	for i, p := range e.Problems {
		if i == show {
			fmt.Fprintf(&b, "\n… and %d more problems", len(e.Problems)-show)
			break
		}
		if i > 0 {
			b.WriteByte('\n')
		}
		b.WriteString(p.String())
	}
	return b.String()
}
