"""Cells of known shape in face-based meshes: tetrahedra, hexahedra, wedges and pyramids.

A face-based file (the face-based mesh folder, polyhedral VTU) describes every cell by its
faces; metrics defined per shape (scaled Jacobian, edge ratio) need the corner nodes in
meshio/VTK order. :func:`recognise_shapes` finds the cells whose faces make one of the
four shapes and recovers their corners, so that the same mesh gives the same metrics
whether it was written as elements or as faces.

A cell is taken as

- a tetrahedron: 4 triangles; a pyramid: 1 quadrilateral and 4 triangles;
- a wedge: 2 triangles and 3 quadrilaterals; a hexahedron: 6 quadrilaterals;

when, in addition, its corners can be recovered and its faces are exactly the faces of
that shape on those corners (a cell with a split face, an open cell or a repeated point
stays a general polyhedron). Corner recovery, vectorised over the cells of one kind:
every face is turned to point out of the cell (reversed where the cell is its
neighbour); the *base* face (the first face for tetrahedra and hexahedra, the first
triangle of a wedge, the quadrilateral of a pyramid) seen from inside gives nodes 0, 1,
2(, 3) in the counter-clockwise order of the reference cells (:mod:`caselint.mesh.celltypes`);
the other nodes are found along the cell's edges: the node above base node ``j`` is the
end of the one edge that leaves it away from the base (an outward face runs along each
edge once in each direction, so ``(j, v)`` with ``v`` off the base occurs exactly once).
The apex of a tetrahedron or pyramid is found the same way from each base node, and
all must agree.

The right-hand orientation of outward faces gives the reference cells' positive volume on
a valid cell; an inverted cell keeps its faces' order and shows a negative Jacobian, as in
an element file.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

import numpy as np

import caselint.mesh.topology as topology
from caselint.mesh.celltypes import FACES
from caselint.mesh.kernels import compiled, in_threads
from caselint.mesh.model import ShapeBlock

if TYPE_CHECKING:
    from caselint.mesh.model import MeshData

#: (shape, faces, triangles, quadrilaterals, base nodes, nodes found off the base).
_KINDS = (
    ("tetra", 4, 4, 0, 3, 1),
    ("pyramid", 5, 4, 1, 4, 1),
    ("wedge", 5, 2, 3, 3, 3),
    ("hexahedron", 6, 0, 6, 4, 4),
)
#: Cells per vectorised pass.
CHUNK = 65_536


def recognise_shapes(data: "MeshData") -> tuple[ShapeBlock, ...]:
    """Shape blocks of every cell whose faces make a tetrahedron, pyramid, wedge or
    hexahedron (see the module docstring); cells in ``data.shapes`` keep their blocks.
    On large meshes the compiled kernel of :mod:`caselint.mesh.kernels.cell_shapes` does
    the same, cell by cell (the same blocks)."""
    if data.dim != 3 or data.n_cells == 0:
        return data.shapes
    known = np.zeros(data.n_cells, dtype=bool)
    for block in data.shapes:
        known[block.cells] = True
    cf = topology.cell_faces(data)
    kernel = compiled("cell_shapes", data.n_cells)
    found = (_compiled_shapes(kernel, data, cf, known) if kernel is not None
             else _numpy_shapes(data, cf, known))
    blocks = list(data.shapes)
    cell_type = np.int32 if data.n_cells < 2**31 else np.int64
    for shape, cells, corners in found:
        if len(cells):
            blocks.append(ShapeBlock(shape, cells.astype(cell_type),
                                     corners.astype(data.face_points.dtype, copy=False)))
    return tuple(blocks)


def _numpy_shapes(data: "MeshData", cf: topology.CellFaces, known: np.ndarray) -> list:
    """(shape, cells, corners) of each kind in the order of ``_KINDS``: the reference."""
    counts = cf.counts()
    face_sizes = np.diff(data.face_offsets)
    table = _face_table(data)
    sizes = face_sizes[cf.faces]
    owner_of = np.repeat(np.arange(data.n_cells), counts)
    n_tri = np.bincount(owner_of, weights=sizes == 3, minlength=data.n_cells)
    n_quad = np.bincount(owner_of, weights=sizes == 4, minlength=data.n_cells)
    found = []
    for shape, n_faces, tris, quads, base, off in _KINDS:
        cells = np.flatnonzero((counts == n_faces) & (n_tri == tris) & (n_quad == quads) & ~known)
        found_cells, found_corners = [np.zeros(0, dtype=np.int64)], []
        for lo in range(0, len(cells), CHUNK):
            part = cells[lo:lo + CHUNK]
            corners, ok = _corners(table, face_sizes, cf, part, shape, n_faces, base, off)
            found_cells.append(part[ok])
            found_corners.append(corners[ok])
        found.append((shape, np.concatenate(found_cells),
                      np.concatenate(found_corners) if found_corners else None))
    return found


def _compiled_shapes(kernel, data: "MeshData", cf: topology.CellFaces,
                     known: np.ndarray) -> list:
    """What :func:`_numpy_shapes` gives, from the compiled kernel over parts of the cells
    on threads (each part writes its own rows)."""
    kinds = np.array([row[1:] for row in _KINDS], dtype=np.int64)
    templates = np.zeros((len(_KINDS), 6, 4), dtype=np.int64)
    for k, row in enumerate(_KINDS):
        templates[k, :row[1]] = FACES[row[0]]
    kind = np.full(data.n_cells, -1, dtype=np.int8)
    corners = np.empty((data.n_cells, 8), dtype=data.face_points.dtype)

    def run(part: slice) -> tuple:
        kernel.cell_shapes(data.face_offsets, data.face_points, cf.offsets, cf.faces, cf.owned,
                           known, kinds, templates, part.start, part.stop, kind, corners)
        return ()

    in_threads(run, data.n_cells)
    found = []
    for k, row in enumerate(_KINDS):
        cells = np.flatnonzero(kind == k)
        found.append((row[0], cells, corners[cells, :row[4] + row[5]]))
    return found


def with_shapes(data: "MeshData") -> "MeshData":
    """``data`` with the shapes of :func:`recognise_shapes` recorded."""
    shapes = recognise_shapes(data)
    if len(shapes) == len(data.shapes):
        return data
    return dataclasses.replace(data, shapes=shapes)


def _face_table(data: "MeshData") -> np.ndarray:
    """(F, 4) points of every triangle (last point repeated) and quadrilateral, in face
    order (read once, in sequence); -1 rows for other faces."""
    sizes = np.diff(data.face_offsets)
    table = np.full((data.n_faces, 4), -1, dtype=data.face_points.dtype)
    for k, slots in ((3, [0, 1, 2, 2]), (4, [0, 1, 2, 3])):
        sel = np.flatnonzero(sizes == k)
        table[sel] = data.face_points[data.face_offsets[sel][:, None] + np.array(slots)]
    return table


def _outward_faces(table: np.ndarray, sizes_all: np.ndarray, cf: topology.CellFaces,
                   cells: np.ndarray, n_faces: int) -> tuple[np.ndarray, np.ndarray]:
    """(m, n_faces, 4) points of the cells' faces, each turned to point out of its cell
    (reversed from its first point; triangles repeat their last point), and (m, n_faces)
    the face sizes."""
    slots = cf.offsets[cells][:, None] + np.arange(n_faces)[None, :]
    faces = cf.faces[slots]
    pts = table[faces]
    size = sizes_all[faces]
    inward = ~cf.owned[slots]
    # turned round from the first point: (a, d, c, b) and (a, c, b, b)
    quad, tri = inward & (size == 4), inward & (size == 3)
    p1, p2, p3 = pts[..., 1].copy(), pts[..., 2].copy(), pts[..., 3].copy()
    pts[..., 1] = np.where(quad, p3, np.where(tri, p2, p1))
    pts[..., 2] = np.where(tri, p1, p2)
    pts[..., 3] = np.where(quad | tri, p1, p3)
    return pts, size


def _corners(table, sizes_all, cf, cells, shape, n_faces, base, off):
    """Corner nodes (m, N) of ``cells`` as ``shape``, and which cells are that shape."""
    pts, sizes = _outward_faces(table, sizes_all, cf, cells, n_faces)
    m = len(cells)
    rows = np.arange(m)
    wanted = {"pyramid": 4, "wedge": 3}.get(shape)
    first = np.argmax(sizes == wanted, axis=1) if wanted else np.zeros(m, dtype=np.int64)
    face0 = pts[rows, first]
    # the base seen from inside: the outward face reversed from its first point
    nodes = [face0[:, i] for i in ((0, 2, 1) if base == 3 else (0, 3, 2, 1))]
    # directed edges of the outward faces; (c, c) of a padded triangle is no edge
    tail = pts.reshape(m, -1)
    head = np.roll(pts, -1, axis=2).reshape(m, -1)
    off_base = head != tail
    for node in nodes:
        off_base &= head != node[:, None]
    ok = np.ones(m, dtype=bool)
    above = []
    for node in nodes:
        hit = (tail == node[:, None]) & off_base
        ok &= np.count_nonzero(hit, axis=1) == 1
        above.append(head[rows, np.argmax(hit, axis=1)])
    if off == 1:                       # one apex, reached from every base node
        for other in above[1:]:
            ok &= other == above[0]
        above = above[:1]
    corners = np.column_stack([*nodes, *above])
    ok &= _distinct(corners) & _same_faces(corners, pts, sizes, shape)
    return corners, ok


def _distinct(corners: np.ndarray) -> np.ndarray:
    """(m,) whether each row holds distinct nodes."""
    s = np.sort(corners, axis=1)
    return ~np.any(s[:, 1:] == s[:, :-1], axis=1)


def _set_keys(faces: np.ndarray, sizes_3: np.ndarray, n_points: int):
    """Two int64 keys of each face's point *set* ((..., 4) points; a triangle's padding
    blanked to -1 where ``sizes_3``), from its points sorted by a min/max network."""
    a, b, c, d = (faces[..., i].astype(np.int64) for i in range(4))
    d = np.where(sizes_3, -1, d)
    a, b = np.minimum(a, b), np.maximum(a, b)
    c, d = np.minimum(c, d), np.maximum(c, d)
    a, c = np.minimum(a, c), np.maximum(a, c)
    b, d = np.minimum(b, d), np.maximum(b, d)
    b, c = np.minimum(b, c), np.maximum(b, c)
    p = np.int64(n_points + 1)
    return (a + 1) * p + (b + 1), (c + 1) * p + (d + 1)


def _same_faces(corners: np.ndarray, pts: np.ndarray, sizes: np.ndarray,
                shape: str) -> np.ndarray:
    """(m,) whether the faces of ``shape`` on ``corners`` are the cells' faces (as sets)."""
    template = np.asarray(FACES[shape])
    n_points = int(max(corners.max(initial=0), pts.max(initial=0))) + 1
    tri = template[:, 3] == template[:, 2]
    e1, e2 = _set_keys(corners[:, template], np.broadcast_to(tri, template.shape[:1])[None, :],
                       n_points)
    a1, a2 = _set_keys(pts, sizes == 3, n_points)
    match = (e1[:, :, None] == a1[:, None, :]) & (e2[:, :, None] == a2[:, None, :])
    return np.all(np.any(match, axis=2), axis=1)
