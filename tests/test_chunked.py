"""Chunked and one-shot computation agree.

Geometry, metrics, wall layers and rays work through ``caselint.mesh.geometry.chunks``
(262,144 entities per piece by default, to bound the temporaries of large meshes). Here
the same meshes are analysed with pieces of 7 entities (hundreds of pieces) and with one
piece holding everything; the results must agree. Per-entity values computed from the
points alone (face geometry, Jacobians, edge ratios, layer heights, ray widths and cell
counts) must be equal to the bit. Cell volumes and centroids are sums over a cell's
faces, and the faces of one cell can fall into different pieces, so the order of the
additions changes: they, and the face metrics built on the centroids, must agree to
1e-13 relative (1e-10 degrees absolute for angles that are round-off about zero).
"""

from __future__ import annotations

import numpy as np
import pytest

from caselint.mesh import geometry, mesh_from_meshio, quality
from caselint.mesh.blocks import graded, shuffled, structured_hex, tetrahedralise
from caselint.mesh.obstacles import carved_hex
from caselint.mesh.rays import wall_rays
from caselint.mesh.wall_layers import wall_layers
from near_wall_meshes import geometric, prism_block

TINY, HUGE = 7, 10**9


def _meshes():
    """Shuffled hexahedra graded to a wall, tetrahedra, prism layers under tetrahedra, and a
    block with two fins (walls inside the domain)."""
    axis = graded(0.0, 1.0, 6, 1.3)
    yield "hex", shuffled(structured_hex(axis, np.linspace(0, 2, 5), axis), seed=3), ("zmin",)
    yield "tet", shuffled(tetrahedralise(structured_hex(*(np.linspace(0, 1, 4),) * 3)),
                          seed=4), ("xmin", "xmax")
    yield "prism-tet", shuffled(prism_block(geometric(1e-3, 1.2, 3), [0.02, 0.03]),
                                seed=5), ("zmin",)
    yield "fins", carved_hex(np.linspace(0, 10, 21), np.linspace(0, 4, 9), np.linspace(0, 2, 5),
                             {"fin-a": [((2, 4.5), (0, 3), (0, 2))],
                              "fin-b": [((6, 8), (0, 3), (0, 2))]}), ("fin-a", "fin-b")


def _analyse(raw, walls, chunk, monkeypatch):
    monkeypatch.setattr(geometry, "CHUNK", chunk)
    mesh = mesh_from_meshio(raw)
    out = {
        "area_vectors": mesh.face_area_vectors, "face_centroids": mesh.face_centroids,
        "volumes": mesh.cell_volumes, "cell_centroids": mesh.cell_centroids,
        "apex": mesh.geometry.apex, "face_warp": quality.face_warp_deg(mesh),
        "non_orthogonality": quality.non_orthogonality_deg(mesh),
        "skewness": quality.skewness(mesh), "growth": quality.growth_ratio(mesh),
        "scaled_jacobian": quality.scaled_jacobian(mesh),
        "corner_jacobian": quality.min_corner_jacobian(mesh),
        "edge_ratio": quality.edge_ratio(mesh),
    }
    faces = np.concatenate([mesh.group_faces(g) for g in walls])
    layers = wall_layers(mesh, faces)
    out.update(layer_heights=layers.heights, n_layers=layers.n_layers, end=layers.end)
    hits = wall_rays(mesh, walls)
    out.update(ray_width=hits.width, ray_cells=hits.cells, ray_hit=hits.hit_face)
    return out


#: Per-cell sums and what is computed from them (relative tolerance, absolute tolerance):
#: angles and skewness of near-orthogonal faces are round-off about zero.
SUMMED = {"volumes": (1e-13, 0), "cell_centroids": (1e-13, 0), "growth": (1e-13, 0),
          "non_orthogonality": (1e-12, 1e-10), "skewness": (1e-12, 1e-12)}


@pytest.mark.parametrize("name,raw,walls", list(_meshes()), ids=lambda v: v
                         if isinstance(v, str) else "")
def test_tiny_chunks_agree_with_one_chunk(name, raw, walls, monkeypatch):
    one = _analyse(raw, walls, HUGE, monkeypatch)
    many = _analyse(raw, walls, TINY, monkeypatch)
    assert one["volumes"].size > 10 * TINY         # many pieces, really
    for key, value in one.items():
        if key in SUMMED:
            rtol, atol = SUMMED[key]
            np.testing.assert_allclose(many[key], value, rtol=rtol, atol=atol, err_msg=key)
        else:
            np.testing.assert_array_equal(many[key], value, err_msg=key)
    assert np.all(one["volumes"] > 0)


def test_chunk_size_is_read_at_each_call(monkeypatch):
    monkeypatch.setattr(geometry, "CHUNK", 4)
    assert [(s.start, s.stop) for s in geometry.chunks(10)] == [(0, 4), (4, 8), (8, 10)]
    assert [(s.start, s.stop) for s in geometry.chunks(10, 6)] == [(0, 6), (6, 10)]
