"""The points of cells and faces, for rules that measure extents rather than metrics.

The one place where the rule kit reads the mesh's element connectivity (cell blocks and
face vertex lists); the rules themselves do not.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.model import Mesh


def used_points(mesh: "Mesh") -> np.ndarray:
    """(P,) bool: which points at least one volume cell uses (cached on the mesh)."""

    def build() -> np.ndarray:
        used = np.zeros(mesh.n_points, dtype=bool)
        for block in mesh.cell_blocks:
            used[block.connectivity.ravel()] = True
        return used

    return mesh.cached("rulekit.used_points", build)


def cells_using(mesh: "Mesh", point_ids: np.ndarray) -> np.ndarray:
    """Sorted ids of the volume cells using any of ``point_ids``."""
    marked = np.zeros(mesh.n_points, dtype=bool)
    marked[point_ids] = True
    hits = [block.start + np.flatnonzero(marked[block.connectivity].any(axis=1))
            for block in mesh.cell_blocks]
    return np.concatenate(hits) if hits else np.empty(0, dtype=np.int64)


def face_point_ids(mesh: "Mesh", faces: np.ndarray) -> np.ndarray:
    """(n, k) point ids of ``faces`` (triangles repeat their last point; edges in 2-D)."""
    return mesh.faces[faces]


def face_points(mesh: "Mesh", faces: np.ndarray) -> np.ndarray:
    """The coordinates of the distinct points of ``faces`` (m)."""
    return mesh.points[np.unique(face_point_ids(mesh, faces).ravel())]


def face_vertex_mean(mesh: "Mesh", faces: np.ndarray, point_values: np.ndarray) -> np.ndarray:
    """Per face, the mean of a point field over the face's distinct vertices."""
    verts = face_point_ids(mesh, faces)
    if verts.shape[1] == 4:
        tri = verts[:, 3] == verts[:, 2]
        total = point_values[verts].sum(axis=1)
        return np.where(tri, (total - point_values[verts[:, 3]]) / 3.0, total / 4.0)
    return point_values[verts].mean(axis=1)
