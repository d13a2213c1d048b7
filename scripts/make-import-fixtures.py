#!/usr/bin/env python3
"""Writes the mesh-import fixtures (fixtures/import/) with meshio, a general-purpose mesh I/O
library from PyPI, so the readers are tested on files fieldgrade did not write.

    python3 -m venv target/fixture-venv && target/fixture-venv/bin/pip install meshio numpy
    target/fixture-venv/bin/python scripts/make-import-fixtures.py

The part: a planar coaxial annulus, inner radius 10 mm, outer 30 mm (lengths in mm), meshed
as a structured polar grid split into triangles; P1 (`triangle`, `line`) and P2
(`triangle6`, `line3`, mid-side nodes of the circular edges on the circles). Cell array
"region": 1 for the dielectric triangles; the boundary lines carry 10 (inner circle) and
20 (outer circle). Encodings: VTU ascii, VTU binary base64 uncompressed, VTU binary base64
zlib, legacy VTK ASCII.

A second part: the L-shaped domain (-1, 1)² minus the fourth quadrant (lengths in m), a
structured grid of 0.25 squares each split into two triangles (P1), region 1; the two edges
meeting at the re-entrant corner carry tag 10 (an electrode), the rest of the boundary 20.
One encoding: VTU binary base64. The fixtures are committed; the tests need no Python.
"""

import math
import sys
from pathlib import Path

import meshio
import numpy as np

A, B = 10.0, 30.0
NR, NT = 6, 48


def annulus(order):
    """Points, triangles, boundary lines and their tags of the annulus."""
    # Grid of (radius index, angle index) at the doubled resolution for P2 (every other
    # point a corner).
    k = 2 if order == 2 else 1
    nr, nt = NR * k, NT * k
    pts = []
    index = {}
    for i in range(nr + 1):
        r = A + (B - A) * i / nr
        for j in range(nt):
            t = 2 * math.pi * j / nt
            index[(i, j)] = len(pts)
            pts.append([r * math.cos(t), r * math.sin(t), 0.0])

    def p(i, j):
        return index[(i, j % nt)]

    tris, lines, tags = [], [], []
    for i in range(0, nr, k):
        for j in range(0, nt, k):
            if order == 1:
                tris.append([p(i, j), p(i + 1, j), p(i + 1, j + 1)])
                tris.append([p(i, j), p(i + 1, j + 1), p(i, j + 1)])
            else:
                # Corners at even grid indices, mid-side nodes between them (the diagonal's
                # mid node is the grid point at the cell centre).
                tris.append([p(i, j), p(i + 2, j), p(i + 2, j + 2), p(i + 1, j), p(i + 2, j + 1), p(i + 1, j + 1)])
                tris.append([p(i, j), p(i + 2, j + 2), p(i, j + 2), p(i + 1, j + 1), p(i + 1, j + 2), p(i, j + 1)])
    for j in range(0, nt, k):
        for i, tag in ((0, 10), (nr, 20)):
            if order == 1:
                lines.append([p(i, j), p(i, j + 1)])
            else:
                lines.append([p(i, j), p(i, j + 2), p(i, j + 1)])
            tags.append(tag)
    # The diagonal's mid node in P2 must be the midpoint of the straight diagonal, not the
    # polar grid point: move it there (curved sides only on the circles).
    pts = np.array(pts)
    if order == 2:
        for n, t in enumerate(tris):
            a, b, c, m0, m1, m2 = t
            if n % 2 == 0:
                pts[m2] = (pts[a] + pts[c]) / 2  # diagonal: third edge c–a
            else:
                pts[m0] = (pts[a] + pts[b]) / 2  # diagonal: first edge a–b
    return pts, np.array(tris), np.array(lines), np.array(tags)


def l_shape():
    """Points, triangles, boundary lines and their tags of the L-shaped domain."""
    n = 8  # squares per side of (-1, 1)
    h = 2.0 / n
    index = {}
    pts = []

    def inside(i, j):
        # Square (i, j) has its lower-left corner at (-1 + i h, -1 + j h); the fourth
        # quadrant (x > 0, y < 0) is left out.
        return not (i >= n // 2 and j < n // 2)

    def p(i, j):
        if (i, j) not in index:
            index[(i, j)] = len(pts)
            pts.append([-1.0 + i * h, -1.0 + j * h, 0.0])
        return index[(i, j)]

    tris = []
    for j in range(n):
        for i in range(n):
            if inside(i, j):
                tris.append([p(i, j), p(i + 1, j), p(i + 1, j + 1)])
                tris.append([p(i, j), p(i + 1, j + 1), p(i, j + 1)])
    # Boundary edges: the edges of exactly one triangle.
    count = {}
    for t in tris:
        for a, b in ((t[0], t[1]), (t[1], t[2]), (t[2], t[0])):
            k = (min(a, b), max(a, b))
            count[k] = count.get(k, 0) + 1
    lines, tags = [], []
    for (a, b), c in sorted(count.items()):
        if c == 1:
            pa, pb = pts[a], pts[b]
            # The electrode: y = 0 for x in [0, 1] and x = 0 for y in [-1, 0].
            on_y0 = pa[1] == 0.0 and pb[1] == 0.0 and min(pa[0], pb[0]) >= 0.0
            on_x0 = pa[0] == 0.0 and pb[0] == 0.0 and max(pa[1], pb[1]) <= 0.0
            lines.append([a, b])
            tags.append(10 if on_y0 or on_x0 else 20)
    return np.array(pts), np.array(tris), np.array(lines), np.array(tags)


def main():
    out = Path(sys.argv[1] if len(sys.argv) > 1 else "fixtures/import")
    out.mkdir(parents=True, exist_ok=True)
    for order in (1, 2):
        pts, tris, lines, tags = annulus(order)
        tri, line = ("triangle", "line") if order == 1 else ("triangle6", "line3")
        mesh = meshio.Mesh(
            pts,
            [(tri, tris), (line, lines)],
            cell_data={"region": [np.full(len(tris), 1, dtype=np.int32), tags.astype(np.int32)]},
        )
        stem = f"coax-p{order}"
        meshio.write(out / f"{stem}-ascii.vtu", mesh, file_format="vtu", binary=False)
        meshio.write(out / f"{stem}-base64.vtu", mesh, file_format="vtu", binary=True, compression=None)
        meshio.write(out / f"{stem}-zlib.vtu", mesh, file_format="vtu", binary=True, compression="zlib")
        meshio.write(out / f"{stem}-legacy.vtk", mesh, file_format="vtk", binary=False)
        print(f"{stem}: {len(pts)} points, {len(tris)} triangles, {len(lines)} boundary lines")
    pts, tris, lines, tags = l_shape()
    mesh = meshio.Mesh(
        pts,
        [("triangle", tris), ("line", lines)],
        cell_data={"region": [np.full(len(tris), 1, dtype=np.int32), tags.astype(np.int32)]},
    )
    meshio.write(out / "lshape-p1-base64.vtu", mesh, file_format="vtu", binary=True, compression=None)
    print(f"lshape-p1: {len(pts)} points, {len(tris)} triangles, {len(lines)} boundary lines")
    print(f"written with meshio {meshio.__version__}")


if __name__ == "__main__":
    main()
