package batch

import (
	"bytes"
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"

	"gapbook/notebook"
)

// Export writes the results of every ok cell of ev into dir
// (created if needed): each table as CSV, each plot as SVG and each field
// as a VTK unstructured grid, named "<cell>-<result>.csv|svg|vtu". It
// returns the paths written, in cell order. The files are written into a
// temporary folder inside dir and moved into place only when all are
// complete: an export that fails or is interrupted (ctx) leaves no file
// behind, and never a truncated one.
func Export(ctx context.Context, dir string, ev *notebook.Evaluation) ([]string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, fmt.Errorf("export: cannot make %s: %w", dir, unwrapPath(err))
	}
	stage, err := os.MkdirTemp(dir, ".gapbook-export-*")
	if err != nil {
		return nil, fmt.Errorf("export: cannot write into %s: %w", dir, unwrapPath(err))
	}
	defer os.RemoveAll(stage)
	var names []string
	used := map[string]bool{}
	write := func(cell, name, ext string, data []byte) error {
		if err := ctx.Err(); err != nil {
			return fmt.Errorf("export: interrupted; nothing written: %w", err)
		}
		base := fileWord(cell) + "-" + fileWord(name)
		// Two results whose names differ only in characters a file name
		// cannot hold get numbered instead of overwriting each other.
		p := base + "." + ext
		for i := 2; used[p]; i++ {
			p = fmt.Sprintf("%s-%d.%s", base, i, ext)
		}
		used[p] = true
		if err := os.WriteFile(filepath.Join(stage, p), data, 0o644); err != nil {
			return fmt.Errorf("export: cannot write %s: %w", filepath.Join(dir, p), unwrapPath(err))
		}
		names = append(names, p)
		return nil
	}
	for _, o := range ev.Cells {
		if o.Status != notebook.StatusOK || o.Results == nil {
			continue
		}
		r := o.Results
		for _, t := range r.Tables {
			var b bytes.Buffer
			if err := notebook.WriteCSV(&b, t); err != nil {
				return nil, fmt.Errorf("export: cell %s, table %s: %w", o.ID, t.Name, err)
			}
			if err := write(o.ID, t.Name, "csv", b.Bytes()); err != nil {
				return nil, err
			}
		}
		for _, p := range r.Plots {
			svg := `<?xml version="1.0" encoding="UTF-8"?>` + "\n" + notebook.PlotSVG(p) + "\n"
			if err := write(o.ID, p.Name, "svg", []byte(svg)); err != nil {
				return nil, err
			}
		}
		for _, f := range r.Fields {
			var b bytes.Buffer
			if err := notebook.WriteVTU(&b, f); err != nil {
				return nil, fmt.Errorf("export: cell %s: %w", o.ID, err)
			}
			if err := write(o.ID, f.Name, "vtu", b.Bytes()); err != nil {
				return nil, err
			}
		}
	}
	// Every file is complete: move them into place.
	var paths []string
	for _, p := range names {
		full := filepath.Join(dir, p)
		if err := os.Rename(filepath.Join(stage, p), full); err != nil {
			return paths, fmt.Errorf("export: cannot move %s into place: %w", full, unwrapPath(err))
		}
		paths = append(paths, full)
	}
	return paths, nil
}

// fileWord keeps letters, digits, "-" and "_" of s and writes "_" for any
// other character (cell ids are already safe; result names may hold
// anything), so that no name can leave the export directory.
func fileWord(s string) string {
	var b strings.Builder
	for _, r := range s {
		switch {
		case r >= 'a' && r <= 'z', r >= 'A' && r <= 'Z', r >= '0' && r <= '9', r == '-', r == '_':
			b.WriteRune(r)
		default:
			b.WriteByte('_')
		}
	}
	if b.Len() == 0 {
		return "result"
	}
	return b.String()
}
