"""Compiled shape recognition (numba): which cells of a face-based mesh are tetrahedra,
pyramids, wedges or hexahedra, and their corner nodes.

The numpy reference is :func:`caselint.mesh.shapes.recognise_shapes` (the method is in
:mod:`caselint.mesh.shapes`); this kernel takes each cell in turn through the same steps
and tests (faces turned outward, the base face, the one edge leaving each base node, the
apex agreeing, distinct corners, the shape's faces on those corners equal to the cell's
faces as point sets), so it accepts the same cells with the same corners. Where the
reference takes the first face of the base's size as the base (pyramids, wedges) or the
first face (tetrahedra, hexahedra), the kernel takes the first face of the base's size:
the same face, since every face of a tetrahedron or hexahedron has that size.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit


@jit
def cell_shapes(face_offsets, face_points, cf_offsets, cf_faces, cf_owned, known, kinds,
                templates, lo_cell, hi_cell, kind, corners):
    """For cells ``lo_cell`` .. ``hi_cell - 1`` not ``known``: the row of ``kinds`` (faces,
    triangles, quadrilaterals, base nodes, nodes off the base) whose shape the cell has into
    ``kind`` (left as it is otherwise), and its corners into the first columns of
    ``corners``; ``templates[k]`` are the faces of shape ``k`` on its corners (4 slots, a
    triangle repeating its last corner; rows past the shape's faces unused)."""
    pts = np.empty((6, 4), dtype=np.int64)
    sizes = np.empty(6, dtype=np.int64)
    actual = np.empty((6, 4), dtype=np.int64)
    nodes = np.empty(8, dtype=np.int64)
    key = np.empty(4, dtype=np.int64)
    for c in range(lo_cell, hi_cell):
        if known[c]:
            continue
        first, n = cf_offsets[c], cf_offsets[c + 1] - cf_offsets[c]
        if n < 4 or n > 6:
            continue
        tri = quad = 0
        for j in range(n):
            f = cf_faces[first + j]
            s = face_offsets[f + 1] - face_offsets[f]
            tri += s == 3
            quad += s == 4
        shape = -1
        for k in range(kinds.shape[0]):
            if kinds[k, 0] == n and kinds[k, 1] == tri and kinds[k, 2] == quad:
                shape = k
        if shape < 0:
            continue
        base, off = kinds[shape, 3], kinds[shape, 4]
        for j in range(n):
            _outward(face_offsets, face_points, cf_faces[first + j], cf_owned[first + j],
                     pts, sizes, j)
        b = 0
        while sizes[b] != base:
            b += 1
        # the base seen from inside: the outward face reversed from its first point
        nodes[0] = pts[b, 0]
        for i in range(1, base):
            nodes[i] = pts[b, base - i]
        if not _above(pts, n, nodes, base, off):
            continue
        n_nodes = base + off
        if not _distinct(nodes, n_nodes):
            continue
        for j in range(n):
            for i in range(4):
                actual[j, i] = pts[j, i]
            if sizes[j] == 3:
                actual[j, 3] = -1
            _sort4(actual[j])
        same = True
        for t in range(n):
            for i in range(4):
                key[i] = nodes[templates[shape, t, i]]
            if templates[shape, t, 3] == templates[shape, t, 2]:
                key[3] = -1
            _sort4(key)
            hit = False
            for j in range(n):
                if (actual[j, 0] == key[0] and actual[j, 1] == key[1]
                        and actual[j, 2] == key[2] and actual[j, 3] == key[3]):
                    hit = True
                    break
            if not hit:
                same = False
                break
        if not same:
            continue
        kind[c] = shape
        for i in range(n_nodes):
            corners[c, i] = nodes[i]


@jit(inline="always")
def _outward(face_offsets, face_points, f, owned, pts, sizes, j):
    """Face ``f`` into row ``j`` of ``pts`` turned to point out of the cell (reversed from
    its first point where the cell is its neighbour; a triangle repeats its last point),
    its size into ``sizes[j]``; faces of other sizes are never read (the counts exclude
    them)."""
    lo = face_offsets[f]
    s = face_offsets[f + 1] - lo
    sizes[j] = s
    a, p, q = face_points[lo], face_points[lo + 1], face_points[lo + 2]
    r = face_points[lo + 3] if s == 4 else q
    if owned:
        pts[j, 0], pts[j, 1], pts[j, 2], pts[j, 3] = a, p, q, r
    elif s == 4:
        pts[j, 0], pts[j, 1], pts[j, 2], pts[j, 3] = a, r, q, p
    else:
        pts[j, 0], pts[j, 1], pts[j, 2], pts[j, 3] = a, q, p, p


@jit(inline="always")
def _above(pts, n, nodes, base, off):
    """The nodes off the base into ``nodes[base:]``: the end of the one edge of the outward
    faces leaving each base node to a node off the base (an apex: the same end from every
    base node); False where an edge is missing or not unique, or the apex disagrees."""
    for i in range(base):
        count = 0
        end = -1
        for j in range(n):
            for s in range(4):
                tail, head = pts[j, s], pts[j, (s + 1) % 4]
                if tail != nodes[i] or head == tail:
                    continue
                on_base = False
                for m in range(base):
                    on_base = on_base or head == nodes[m]
                if on_base:
                    continue
                count += 1
                if count == 1:
                    end = head
        if count != 1:
            return False
        if off == 1:
            if i == 0:
                nodes[base] = end
            elif end != nodes[base]:
                return False
        else:
            nodes[base + i] = end
    return True


@jit(inline="always")
def _distinct(nodes, n):
    for i in range(n):
        for j in range(i):
            if nodes[i] == nodes[j]:
                return False
    return True


@jit(inline="always")
def _sort4(v):
    # the min/max network of the reference's point-set keys
    a, b, c, d = v[0], v[1], v[2], v[3]
    a, b = min(a, b), max(a, b)
    c, d = min(c, d), max(c, d)
    a, c = min(a, c), max(a, c)
    b, d = min(b, d), max(b, d)
    b, c = min(b, c), max(b, c)
    v[0], v[1], v[2], v[3] = a, b, c, d
