"""Cell sizes of a mesh for grid studies: the representative size h and the first-layer
height at walls.

A grid study reads several meshes, often the largest of the project, for a few numbers
each: the cell count, the total volume and h = (V/N)^(1/3) (Celik et al. 2008). The
volumes are the mesh's own (:mod:`caselint.mesh.geometry`), so a study sees exactly the
cells the other rules see.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh


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
        volumes = mesh.cell_volumes
    total = float(volumes.sum()) if volumes.size else 0.0
    n = mesh.n_cells
    h = (total / n) ** (1.0 / mesh.dim) if n > 0 and total > 0 else 0.0
    return MeshSize(mesh.path, mesh.dim, n, total, h, int(np.count_nonzero(volumes <= 0)))


def first_layer_heights(mesh: "Mesh", groups, volumes: np.ndarray | None = None) -> np.ndarray:
    """First-layer height (m) at each face of ``groups``: owner cell volume over face area.

    V/A is the exact wall-normal height of a prism or hexahedron standing on the face, and a
    third of it for a tetrahedron; it is a consistent measure across a family of meshes of
    one kind. Faces of zero area are left out.
    """
    if volumes is None:
        volumes = mesh.cell_volumes
    ids = [mesh.group_faces(name) for name in groups if name in mesh.group_names]
    faces = np.unique(np.concatenate(ids)) if ids else np.zeros(0, dtype=np.int64)
    if faces.size == 0:
        return np.zeros(0)
    areas = mesh.face_areas[faces]
    keep = areas > 0
    return volumes[mesh.owner[faces[keep]]] / areas[keep]
