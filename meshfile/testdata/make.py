#!/usr/bin/python3
"""Writes the fixtures of meshfile's tests with general-purpose tools from
Debian: meshio (python3-meshio) for every writer it has of the formats read,
and gmsh for a mesh of our own geometry (plate.geo). Run from this folder:
/usr/bin/python3 make.py. The test reads the files; the values are
u = x^2 + 3y + 1 at the nodes, so the test can check them exactly."""
import subprocess
import meshio
import numpy as np

# A 4 x 3 grid of points on (0,2) x (0,1), split into triangles.
nx, ny = 4, 3
xs, ys = np.linspace(0, 2, nx + 1), np.linspace(0, 1, ny + 1)
pts = np.array([[x, y, 0.0] for y in ys for x in xs])
tri, quad = [], []
for j in range(ny):
    for i in range(nx):
        a = j * (nx + 1) + i
        b, c, d = a + 1, a + nx + 2, a + nx + 1
        tri += [[a, b, c], [a, c, d]]
        quad.append([a, b, c, d])
u = pts[:, 0] ** 2 + 3 * pts[:, 1] + 1
data = {"u": u, "w": 2 * u}

def write(name, cells, **kw):
    meshio.write(name, meshio.Mesh(pts, cells, point_data=data), **kw)

tris = [("triangle", np.array(tri))]
write("tri-ascii.vtu", tris, binary=False)
write("tri-zlib.vtu", tris, binary=True, compression="zlib")
write("tri-raw.vtu", tris, binary=True, compression=None)
write("tri.vtk", tris, binary=False)
write("quad-ascii.vtu", [("quad", np.array(quad))], binary=False)

# gmsh files need the physical and geometrical tags per cell.
def gmsh(name, fmt, cells):
    m = meshio.Mesh(pts, cells, point_data={"u": u},
                    cell_data={"gmsh:physical": [np.ones(len(c[1]), dtype=int) for c in cells],
                               "gmsh:geometrical": [np.ones(len(c[1]), dtype=int) for c in cells]})
    meshio.write(name, m, file_format=fmt, binary=False)

gmsh("tri-22.msh", "gmsh22", tris)
gmsh("tri-41.msh", "gmsh", tris)

# A plate with named sides meshed by gmsh itself, in both versions.
for v in ("2.2", "4.1"):
    subprocess.run(["gmsh", "-2", "plate.geo", "-format", "msh" + v.replace(".", ""), "-o", "plate-%s.msh" % v.replace(".", "")],
                   check=True, stdout=subprocess.DEVNULL)
