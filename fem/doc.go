// Package fem holds the finite element building blocks of gapbook:
// quadrature on intervals and triangles, compressed sparse row matrices,
// the conforming P1 space with fast re-assembly, a multigrid-preconditioned
// conjugate gradient solver, lowest-order Raviart–Thomas fluxes and the
// Crouzeix–Raviart space with its Dirichlet eigenvalue.
//
// Everything works on meshes from package mesh. Hot paths (assembly,
// matrix-vector products, V-cycles) take destination slices and do not
// allocate, so a Newton step on a million unknowns costs linear time.
package fem
