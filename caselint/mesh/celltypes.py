"""Local node templates of the cell types caselint checks, in meshio/VTK node ordering.

Every face template is ordered so that its right-hand normal points *out* of a
positive-volume cell. Triangular faces repeat their last vertex so that all 3-D
faces fit one ``(n, 4)`` array; a quadrilateral formula applied to ``(a, b, c, c)``
gives the exact triangle (see :mod:`caselint.mesh.geometry`).

Reference cells (positive volume, checked in ``tests/test_mesh_celltypes.py``):

- tetra: nodes 0, 1, 2 seen from node 3 run counter-clockwise.
- hexahedron: bottom 0-1-2-3 counter-clockwise seen from the top 4-5-6-7.
- pyramid: base 0-1-2-3 counter-clockwise seen from the apex 4.
- wedge: triangle 0-1-2 counter-clockwise seen from triangle 3-4-5, i.e. the right-hand
  normal of (0, 1, 2) points *towards* (3, 4, 5), exactly like the hexahedron. This is the
  ordering gmsh writes for prisms and the one for which VTK 9.7's ``vtkMeshQuality`` and
  ``vtkCellSizeFilter`` report a positive volume. Older VTK documentation describes the
  (0, 1, 2) normal as pointing away from (3, 4, 5); a block written in that convention
  is read in the mirrored order, with a note (:mod:`caselint.mesh.orientation`).
"""

from __future__ import annotations

import re

import numpy as np

#: Cell types of a :class:`caselint.mesh.model.Mesh`; ``Mesh.cell_type`` indexes this tuple.
CELL_TYPES: tuple[str, ...] = ("tetra", "hexahedron", "wedge", "pyramid", "triangle", "quad")
TYPE_INDEX: dict[str, int] = {name: i for i, name in enumerate(CELL_TYPES)}
VOLUME_TYPES: tuple[str, ...] = ("tetra", "hexahedron", "wedge", "pyramid")
SURFACE_TYPES: tuple[str, ...] = ("triangle", "quad")
N_NODES: dict[str, int] = {
    "tetra": 4, "hexahedron": 8, "wedge": 6, "pyramid": 5, "triangle": 3, "quad": 4, "line": 2,
}

#: Outward faces of each cell type; triangles padded by repeating the last vertex.
FACES: dict[str, tuple[tuple[int, ...], ...]] = {
    "tetra": ((0, 2, 1, 1), (0, 1, 3, 3), (1, 2, 3, 3), (0, 3, 2, 2)),
    "hexahedron": (
        (0, 3, 2, 1), (4, 5, 6, 7), (0, 1, 5, 4), (1, 2, 6, 5), (2, 3, 7, 6), (3, 0, 4, 7),
    ),
    "wedge": ((0, 2, 1, 1), (3, 4, 5, 5), (0, 1, 4, 3), (1, 2, 5, 4), (2, 0, 3, 5)),
    "pyramid": ((0, 3, 2, 1), (0, 1, 4, 4), (1, 2, 4, 4), (2, 3, 4, 4), (3, 0, 4, 4)),
    # 2-D cells: the faces are the edges of a counter-clockwise polygon.
    "triangle": ((0, 1), (1, 2), (2, 0)),
    "quad": ((0, 1), (1, 2), (2, 3), (3, 0)),
}

#: Which face templates of a type are triangles (the rest are quadrilaterals).
TRIANGLE_FACES: dict[str, tuple[int, ...]] = {
    "tetra": (0, 1, 2, 3), "hexahedron": (), "wedge": (0, 1), "pyramid": (1, 2, 3, 4),
}

#: Edges of each cell type, for the edge ratio.
EDGES: dict[str, tuple[tuple[int, int], ...]] = {
    "tetra": ((0, 1), (1, 2), (2, 0), (0, 3), (1, 3), (2, 3)),
    "hexahedron": (
        (0, 1), (1, 2), (2, 3), (3, 0), (4, 5), (5, 6), (6, 7), (7, 4),
        (0, 4), (1, 5), (2, 6), (3, 7),
    ),
    "wedge": ((0, 1), (1, 2), (2, 0), (3, 4), (4, 5), (5, 3), (0, 3), (1, 4), (2, 5)),
    "pyramid": ((0, 1), (1, 2), (2, 3), (3, 0), (0, 4), (1, 4), (2, 4), (3, 4)),
    "triangle": ((0, 1), (1, 2), (2, 0)),
    "quad": ((0, 1), (1, 2), (2, 3), (3, 0)),
}

#: Corner Jacobians as (corner, a, b, c): J = det(x_a - x_o, x_b - x_o, x_c - x_o) > 0 on a
#: valid cell. Hexahedron and wedge corners follow Verdict (SAND2007-1751) edge for edge.
CORNERS: dict[str, tuple[tuple[int, int, int, int], ...]] = {
    "tetra": ((0, 1, 2, 3),),
    "hexahedron": (
        (0, 1, 3, 4), (1, 2, 0, 5), (2, 3, 1, 6), (3, 0, 2, 7),
        (4, 7, 5, 0), (5, 4, 6, 1), (6, 5, 7, 2), (7, 6, 4, 3),
    ),
    "wedge": ((0, 1, 2, 3), (1, 2, 0, 4), (2, 0, 1, 5), (3, 0, 5, 4), (4, 1, 3, 5), (5, 3, 2, 4)),
}

#: Verdict splits a pyramid into these four tetrahedra for its Jacobian metrics.
PYRAMID_TETS: tuple[tuple[int, int, int, int], ...] = (
    (0, 1, 2, 4), (0, 2, 3, 4), (0, 1, 3, 4), (1, 2, 3, 4),
)

#: 2-D corners as (corner, next, previous): J = (x_next - x_o) x (x_prev - x_o) . z.
CORNERS_2D: dict[str, tuple[tuple[int, int, int], ...]] = {
    "triangle": ((0, 1, 2), (1, 2, 0), (2, 0, 1)),
    "quad": ((0, 1, 3), (1, 2, 0), (2, 3, 1), (3, 0, 2)),
}

_ORDER_SUFFIX = re.compile(r"^(tetra|hexahedron|wedge|pyramid|triangle|quad|line)(\d+)$")


def linear_type(meshio_type: str) -> str | None:
    """The linear cell type whose corners open a meshio block of ``meshio_type``.

    ``tetra10`` gives ``tetra``: meshio (like VTK and gmsh) lists the corner nodes first,
    so a higher-order cell is read by its corners and its curved edges are ignored.
    Returns ``None`` for types caselint cannot read that way (polyhedra, Lagrange cells).
    """
    if meshio_type in N_NODES:
        return meshio_type
    match = _ORDER_SUFFIX.match(meshio_type)
    return match.group(1) if match else None


def face_index(cell: str) -> np.ndarray:
    """The face templates of ``cell`` as an ``(n_faces, 4)`` (3-D) or ``(n_faces, 2)`` array."""
    return np.asarray(FACES[cell], dtype=np.intp)
