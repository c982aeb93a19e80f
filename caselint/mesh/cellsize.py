"""Cell sizes of a mesh without building its topology: volumes, the representative size h,
and the first-layer height at walls.

A grid study reads several meshes, often the largest of the project, for a few numbers
each: the cell count, the total volume and h = (V/N)^(1/3). Those need no face
deduplication, so cell volumes are computed here from each cell's own face templates with
the face-pyramid formula of :mod:`caselint.mesh.geometry`, V = (1/dim) sum_f S_f . (m_f - x0)
about the cell's first vertex x0. For a conforming mesh this equals ``Mesh.cell_volumes``
(the same faces, seen from each cell; the sum does not depend on x0); a test keeps the two
equal. Work is done in chunks of cells, per cell type.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.celltypes import face_index
from caselint.mesh.geometry import chunks, coordinate_columns

if TYPE_CHECKING:
    from caselint.mesh.model import Mesh


def _area_vectors(cols, f: np.ndarray, dim: int):
    """Area vectors (x, y, z lists) of faces ``f``: half the cross product of the diagonals."""
    if dim == 2:
        xa, ya = cols[0][f[:, 0]], cols[1][f[:, 0]]
        xb, yb = cols[0][f[:, 1]], cols[1][f[:, 1]]
        return [yb - ya, xa - xb, np.zeros_like(xa)]
    d1 = [cols[k][f[:, 2]] - cols[k][f[:, 0]] for k in range(3)]
    d2 = [cols[k][f[:, 3]] - cols[k][f[:, 1]] for k in range(3)]
    return [0.5 * (d1[1] * d2[2] - d1[2] * d2[1]),
            0.5 * (d1[2] * d2[0] - d1[0] * d2[2]),
            0.5 * (d1[0] * d2[1] - d1[1] * d2[0])]


def local_cell_volumes(mesh: "Mesh") -> np.ndarray:
    """(C,) signed cell volumes (m^3; 2-D areas, m^2) from each cell's own faces."""
    cols = coordinate_columns(mesh.points)
    out = np.zeros(mesh.n_cells)
    dim = mesh.dim
    for block in mesh.cell_blocks:
        templates = face_index(block.type)
        conn = block.connectivity
        for sl in chunks(len(conn)):
            cells = conn[sl]
            x0 = [c[cells[:, 0]] for c in cols]
            total = np.zeros(len(cells))
            for tpl in templates:                     # a few face templates per type
                f = cells[:, tpl]
                S = _area_vectors(cols, f, dim)
                m = [cols[k][f].mean(axis=1) for k in range(3)]
                total += S[0] * (m[0] - x0[0]) + S[1] * (m[1] - x0[1]) + S[2] * (m[2] - x0[2])
            out[block.start + sl.start : block.start + sl.stop] = total / dim
    return out


def face_areas_of(mesh: "Mesh", faces: np.ndarray) -> np.ndarray:
    """(k,) areas (m^2; 2-D edge lengths, m) of the mesh faces ``faces`` (ids)."""
    cols = coordinate_columns(mesh.points)
    S = _area_vectors(cols, mesh.faces[faces], mesh.dim)
    return np.sqrt(S[0] ** 2 + S[1] ** 2 + S[2] ** 2)


@dataclass(frozen=True)
class MeshSize:
    """How big a mesh is: cells, total volume (m^3; 2-D m^2 on unit depth) and h (m)."""

    path: str
    dim: int
    n_cells: int
    volume: float
    h: float
    nonpositive_cells: int


def mesh_size(mesh: "Mesh", volumes: np.ndarray | None = None) -> MeshSize:
    """Cell count, total volume and representative size h = (V/N)^(1/dim) (Celik 2008).

    ``h`` is 0 when the mesh has no cells or a non-positive total volume (a damaged mesh);
    ``nonpositive_cells`` counts inverted or degenerate cells.
    """
    if volumes is None:
        volumes = local_cell_volumes(mesh)
    total = float(volumes.sum()) if volumes.size else 0.0
    n = mesh.n_cells
    h = (total / n) ** (1.0 / mesh.dim) if n > 0 and total > 0 else 0.0
    return MeshSize(mesh.path, mesh.dim, n, total, h, int(np.count_nonzero(volumes <= 0)))


def first_layer_heights(mesh: "Mesh", groups, volumes: np.ndarray | None = None) -> np.ndarray:
    """First-layer height (m) at each face of ``groups``: owner cell volume over face area.

    V/A is the exact wall-normal height of a prism or hexahedron standing on the face, and a
    third of it for a tetrahedron; it is a consistent measure across a family of meshes of
    one kind. Faces of zero area are left out. Builds the mesh topology.
    """
    if volumes is None:
        volumes = local_cell_volumes(mesh)
    ids = [mesh.group_faces(name) for name in groups if name in mesh.group_names]
    faces = np.unique(np.concatenate(ids)) if ids else np.zeros(0, dtype=np.int64)
    if faces.size == 0:
        return np.zeros(0)
    areas = face_areas_of(mesh, faces)
    keep = areas > 0
    return volumes[mesh.owner[faces[keep]]] / areas[keep]
