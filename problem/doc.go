// Package problem states a nonlinear diffusion problem once, for every stage
// that needs it: the domain and the meshes it is cut into, the potential,
// the data (source, boundary and initial values, compiled from formulas or
// given as functions) and an optional exact solution with the source it
// implies. The solver (nonlinear), the bounds (estimate) and the notebook
// all read the same Problem (docs/architecture.md, "One problem model").
package problem
