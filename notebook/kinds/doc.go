// Package kinds holds the cell kinds of a notebook, one file each: its
// declared inputs with defaults and limits, its evaluation (reading earlier
// cells' results through notebook.Context) and, where it has one, its own
// rendering. Each file registers its kind with notebook.Register in init;
// import the package for its side effect to make the kinds available
// (docs/architecture.md, "Cell kinds").
package kinds
