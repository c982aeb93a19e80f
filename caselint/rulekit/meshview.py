"""The points of cells and faces, for rules that measure extents rather than metrics.

Thin wrappers over :mod:`caselint.mesh.topology` for the face-based mesh: rules ask here
instead of reading face lists themselves.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.topology import cells_of_points, face_point_mean

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh


def used_points(mesh: "Mesh") -> np.ndarray:
    """(P,) bool: which points lie on a face of some cell (cached on the mesh)."""
    return mesh.used_points()


def cells_using(mesh: "Mesh", point_ids: np.ndarray) -> np.ndarray:
    """Sorted ids of the cells with a face touching any of ``point_ids``."""
    marked = np.zeros(mesh.n_points, dtype=bool)
    marked[point_ids] = True
    return cells_of_points(mesh.data, marked)


def face_point_ids(mesh: "Mesh", faces: np.ndarray) -> np.ndarray:
    """(n, k) point ids of ``faces``, k their most points; shorter faces repeat their last."""
    return mesh.face_point_table(faces)


def face_points(mesh: "Mesh", faces: np.ndarray) -> np.ndarray:
    """The coordinates of the distinct points of ``faces`` (m)."""
    return mesh.points[np.unique(face_point_ids(mesh, faces).ravel())]


def face_vertex_mean(mesh: "Mesh", faces: np.ndarray, point_values: np.ndarray) -> np.ndarray:
    """Per face, the mean of a point field over the face's points."""
    return face_point_mean(mesh.data, point_values, faces)
