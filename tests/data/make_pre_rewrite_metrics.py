"""Write pre_rewrite_metrics.npz: the geometry and quality metrics the element-based mesh
core (caselint 0.1.0, commit 4343d93, before faces became polygons) computed on five
fixed-shape meshes. tests/test_mesh_rewrite_regression.py checks that the face-based core
gives the same numbers. Run it with that commit's caselint importable:

    git worktree add /tmp/old 4343d93 && PYTHONPATH=/tmp/old python tests/data/make_pre_rewrite_metrics.py

Cells are keyed by their id in the file, faces by the sorted file ids of their points.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from regression_meshes import MESHES  # noqa: E402

from caselint.mesh import mesh_from_meshio, quality  # noqa: E402


def face_keys(mesh) -> np.ndarray:
    """(F, 4) sorted file point ids of each face, padded triangles as (a, b, c, c)."""
    faces = mesh.file_point_ids(mesh.faces)
    return np.sort(faces, axis=1)


def main() -> None:
    out = {}
    for name, raw in MESHES().items():
        mesh = mesh_from_meshio(raw)
        order = np.argsort(mesh.file_cell_ids())
        cells = {"volume": mesh.cell_volumes, "centroid": mesh.cell_centroids,
                 "scaled_jacobian": quality.scaled_jacobian(mesh),
                 "corner_jacobian": quality.min_corner_jacobian(mesh),
                 "edge_ratio": quality.edge_ratio(mesh)}
        for key, values in cells.items():
            out[f"{name}/cell/{key}"] = values[order]
        out[f"{name}/face/keys"] = face_keys(mesh)
        faces = {"area_vector": mesh.face_area_vectors, "centroid": mesh.face_centroids,
                 "non_orthogonality": quality.non_orthogonality_deg(mesh),
                 "skewness": quality.skewness(mesh), "growth": quality.growth_ratio(mesh),
                 "internal": (mesh.neighbour >= 0).astype(np.int8)}
        for key, values in faces.items():
            out[f"{name}/face/{key}"] = values
    np.savez_compressed(Path(__file__).with_name("pre_rewrite_metrics.npz"), **out)


if __name__ == "__main__":
    main()
