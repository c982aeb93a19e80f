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

from caselint.mesh import topology
from caselint.mesh.celltypes import FACES
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
    hexahedron (see the module docstring); cells in ``data.shapes`` keep their blocks."""
    if data.dim != 3 or data.n_cells == 0:
        return data.shapes
    known = np.zeros(data.n_cells, dtype=bool)
    for block in data.shapes:
        known[block.cells] = True
    cf = topology.cell_faces(data)
    counts = cf.counts()
    sizes = np.diff(data.face_offsets)[cf.faces]
    owner_of = np.repeat(np.arange(data.n_cells), counts)
    n_tri = np.bincount(owner_of, weights=sizes == 3, minlength=data.n_cells)
    n_quad = np.bincount(owner_of, weights=sizes == 4, minlength=data.n_cells)
    blocks = list(data.shapes)
    cell_type = np.int32 if data.n_cells < 2**31 else np.int64
    for shape, n_faces, tris, quads, base, off in _KINDS:
        cells = np.flatnonzero((counts == n_faces) & (n_tri == tris) & (n_quad == quads) & ~known)
        found_cells, found_corners = [], []
        for lo in range(0, len(cells), CHUNK):
            part = cells[lo:lo + CHUNK]
            corners, ok = _corners(data, cf, part, shape, n_faces, base, off)
            found_cells.append(part[ok])
            found_corners.append(corners[ok])
        if found_cells and sum(len(c) for c in found_cells):
            conn = np.concatenate(found_corners).astype(data.face_points.dtype, copy=False)
            blocks.append(ShapeBlock(shape, np.concatenate(found_cells).astype(cell_type),
                                     conn))
    return tuple(blocks)


def with_shapes(data: "MeshData") -> "MeshData":
    """``data`` with the shapes of :func:`recognise_shapes` recorded."""
    shapes = recognise_shapes(data)
    if len(shapes) == len(data.shapes):
        return data
    return dataclasses.replace(data, shapes=shapes)


def _outward_faces(data: "MeshData", cf: topology.CellFaces, cells: np.ndarray,
                   n_faces: int) -> tuple[np.ndarray, np.ndarray]:
    """(m, n_faces, 4) points of the cells' faces, each turned to point out of its cell
    (triangles repeat their last point), and (m, n_faces) the face sizes."""
    slots = cf.offsets[cells][:, None] + np.arange(n_faces)[None, :]
    faces = cf.faces[slots]
    owned = cf.owned[slots]
    start = data.face_offsets[faces]
    size = (data.face_offsets[faces + 1] - start)[..., None]
    k = np.arange(4)[None, None, :]
    forward = np.minimum(k, size - 1)
    # reversed from the first point, (p0, p_{n-1}, ..., p1), padded with p1
    backward = np.where(k == 0, 0, np.where(k < size, size - k, 1))
    index = np.where(owned[..., None], forward, backward)
    return data.face_points[start[..., None] + index], size[..., 0]


def _corners(data, cf, cells, shape, n_faces, base, off) -> tuple[np.ndarray, np.ndarray]:
    """Corner nodes (m, N) of ``cells`` as ``shape``, and which cells are that shape."""
    pts, sizes = _outward_faces(data, cf, cells, n_faces)
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


def _same_faces(corners: np.ndarray, pts: np.ndarray, sizes: np.ndarray,
                shape: str) -> np.ndarray:
    """(m,) whether the faces of ``shape`` on ``corners`` are the cells' faces (as sets)."""
    template = np.asarray(FACES[shape])
    expected = corners[:, template]                          # (m, n_faces, 4)
    # a triangle's padding (its last point repeated) depends on where it starts: blank it
    expected[:, template[:, 3] == template[:, 2], 3] = -1
    actual = pts.copy()
    actual[..., 3][sizes == 3] = -1
    expected.sort(axis=2)
    actual.sort(axis=2)
    match = np.all(expected[:, :, None, :] == actual[:, None, :, :], axis=3)
    return np.all(np.any(match, axis=2), axis=1)
