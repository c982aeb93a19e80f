"""The face-based mesh core gives the numbers the element-based core gave.

Reference: tests/data/pre_rewrite_metrics.npz, written by the element-based core (commit
4343d93; tests/data/make_pre_rewrite_metrics.py) on five perturbed, shuffled meshes of
every fixed cell type [regression values of our own earlier code, itself checked against
VTK's vtkMeshQuality and scipy]. Cells are matched by their id in the file, faces by the
set of their points' file ids. The formulas are the same; only the order of floating-point
operations changed (the fan about the vertex mean gives a quadrilateral's area vector as a
sum of four cross products instead of the cross product of its diagonals), so values agree
to round-off. Two metrics were redefined since, on purpose: the old "growth" was the volume
ratio (now :func:`caselint.mesh.size_ratio.volume_ratio`; growth is a size ratio), and the
old skewness |x_f - x_i| / |d| is now over max(|d|, the cells' mean size across the face),
so the textbook value is recovered from it here.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from caselint.mesh import mesh_from_meshio, quality
from caselint.mesh.size_ratio import sizes_across_faces
from regression_meshes import MESHES

REFERENCE = Path(__file__).parent / "data" / "pre_rewrite_metrics.npz"


@pytest.fixture(scope="module")
def reference():
    with np.load(REFERENCE) as data:
        return {k: data[k] for k in data.files}


def _face_keys(mesh) -> np.ndarray:
    """Sorted file point ids of each face, triangles padded as (a, b, c, c) like the old core."""
    table = mesh.file_point_ids(mesh.face_point_table())
    if table.shape[1] == 3:
        table = np.column_stack([table, table[:, 2]])
    return np.sort(table, axis=1)


@pytest.mark.parametrize("name", ["hex", "tet", "mixed", "quad", "triangle"])
def test_every_metric_is_unchanged(name, reference):
    mesh = mesh_from_meshio(MESHES()[name])
    order = np.argsort(mesh.file_cell_ids())
    cells = {"volume": mesh.cell_volumes, "centroid": mesh.cell_centroids,
             "scaled_jacobian": quality.scaled_jacobian(mesh),
             "corner_jacobian": quality.min_corner_jacobian(mesh),
             "edge_ratio": quality.edge_ratio(mesh)}
    for key, values in cells.items():
        np.testing.assert_allclose(values[order], reference[f"{name}/cell/{key}"], rtol=1e-12,
                                   atol=1e-15, err_msg=key)
    # faces: match by point set
    old_keys, new_keys = reference[f"{name}/face/keys"], _face_keys(mesh)
    assert len(old_keys) == len(new_keys)
    old_order, new_order = np.lexsort(old_keys.T[::-1]), np.lexsort(new_keys.T[::-1])
    np.testing.assert_array_equal(old_keys[old_order], new_keys[new_order])
    internal = reference[f"{name}/face/internal"][old_order].astype(bool)
    assert np.array_equal(internal, (mesh.neighbour >= 0)[new_order])
    faces = {"centroid": mesh.face_centroids,
             "non_orthogonality": quality.non_orthogonality_deg(mesh),
             "skewness": _textbook_skewness(mesh), "growth": quality.volume_ratio(mesh)}
    for key, values in faces.items():
        np.testing.assert_allclose(values[new_order], reference[f"{name}/face/{key}"][old_order],
                                   rtol=1e-10, atol=1e-12, err_msg=key)
    # area vectors: the same face may be owned by the other cell now (owner is no longer
    # the lower file id), so compare magnitudes and the line they lie on
    old_s = reference[f"{name}/face/area_vector"][old_order]
    new_s = mesh.face_area_vectors[new_order]
    np.testing.assert_allclose(np.linalg.norm(new_s, axis=1), np.linalg.norm(old_s, axis=1),
                               rtol=1e-12)
    np.testing.assert_allclose(np.abs(np.einsum("ij,ij->i", new_s, old_s)),
                               np.linalg.norm(new_s, axis=1) * np.linalg.norm(old_s, axis=1),
                               rtol=1e-12)


def _textbook_skewness(mesh) -> np.ndarray:
    """|x_f - x_i| / |d| from caselint's skewness |x_f - x_i| / max(|d|, spacing)."""
    n = mesh.n_internal
    own, nbr = sizes_across_faces(mesh)
    d = mesh.cell_centroids[mesh.neighbour[:n]] - mesh.cell_centroids[mesh.owner[:n]]
    dn = np.linalg.norm(d, axis=1)
    out = quality.skewness(mesh).copy()
    out[:n] *= np.maximum(dn, 0.5 * (own + nbr)) / dn
    return out
