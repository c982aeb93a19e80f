"""Building face-based mesh data (caselint.mesh.build, caselint.mesh.model) and the
connectivity derived from it (caselint.mesh.topology)."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from caselint.mesh import Mesh, mesh_from_meshio, model
from caselint.mesh.blocks import structured_hex
from caselint.mesh.build import mesh_from_faces, padded_to_csr, sorted_groups
from caselint.mesh.topology import duplicate_faces, face_point_mean


def two_cubes(**changes):
    """Two unit cubes side by side (x = 0..2) as faces, internal face listed LAST."""
    pts = np.array([[x, y, z] for z in (0, 1) for y in (0, 1) for x in (0, 1, 2)], float)

    def p(x, y, z):
        return x + 3 * y + 6 * z

    faces = [
        [p(0, 0, 0), p(0, 1, 0), p(1, 1, 0), p(1, 0, 0)],   # cell 0 bottom (-z)
        [p(0, 0, 1), p(1, 0, 1), p(1, 1, 1), p(0, 1, 1)],   # cell 0 top
        [p(0, 0, 0), p(0, 0, 1), p(0, 1, 1), p(0, 1, 0)],   # cell 0 x = 0 (-x)
        [p(0, 0, 0), p(1, 0, 0), p(1, 0, 1), p(0, 0, 1)],   # cell 0 y = 0 (-y)
        [p(0, 1, 0), p(0, 1, 1), p(1, 1, 1), p(1, 1, 0)],   # cell 0 y = 1
        [p(1, 0, 0), p(1, 1, 0), p(2, 1, 0), p(2, 0, 0)],   # cell 1 bottom
        [p(1, 0, 1), p(2, 0, 1), p(2, 1, 1), p(1, 1, 1)],   # cell 1 top
        [p(2, 0, 0), p(2, 1, 0), p(2, 1, 1), p(2, 0, 1)],   # cell 1 x = 2 (+x)
        [p(1, 0, 0), p(2, 0, 0), p(2, 0, 1), p(1, 0, 1)],   # cell 1 y = 0
        [p(1, 1, 0), p(1, 1, 1), p(2, 1, 1), p(2, 1, 0)],   # cell 1 y = 1
        [p(1, 0, 0), p(1, 1, 0), p(1, 1, 1), p(1, 0, 1)],   # internal x = 1 (+x out of 0)
    ]
    owner = [0] * 5 + [1] * 5 + [0]
    neighbour = [-1] * 10 + [1]
    group = [0, 0, 1, 0, 0, 0, 0, 2, 0, 0, -1]
    args = dict(path="two", points=pts, dim=3,
                face_offsets=np.arange(0, 4 * len(faces) + 1, 4),
                face_points=np.concatenate(faces), owner=np.array(owner),
                neighbour=np.array(neighbour), face_group=np.array(group),
                group_names=("walls", "inlet", "outlet"))
    args.update(changes)
    return mesh_from_faces(**args)


def test_internal_faces_are_moved_first_and_groups_sorted():
    data = two_cubes()
    assert data.n_internal == 1 and data.neighbour[0] == 1 and np.all(data.neighbour[1:] == -1)
    assert data.group_names == ("inlet", "outlet", "walls")
    mesh = Mesh(data)
    assert len(mesh.group_faces("walls")) == 8 and len(mesh.group_faces("inlet")) == 1
    np.testing.assert_allclose(mesh.cell_volumes, [1.0, 1.0], rtol=1e-14)
    np.testing.assert_allclose(mesh.cell_centroids, [[0.5, 0.5, 0.5], [1.5, 0.5, 0.5]])
    np.testing.assert_allclose(mesh.face_area_vectors[0], [1, 0, 0])
    counts = mesh.cell_faces.counts()
    assert counts.tolist() == [6, 6]


@pytest.mark.parametrize("change, message", [
    (dict(owner=np.array([0] * 5 + [1] * 5 + [0, 0])), "neighbour entries"),
    (dict(face_points=np.full(44, 99)), "face points refer to 99"),
    (dict(face_points=np.arange(40)), "face offsets must rise from 0 to the 40"),
    (dict(neighbour=np.array([-1] * 10 + [7]), n_cells=2), "neighbour refer to 7"),
])
def test_inconsistent_face_data_is_refused(change, message):
    with pytest.raises(ValueError, match=message):
        two_cubes(**change)


def test_padded_faces_become_polygons_without_repeats():
    offsets, points = padded_to_csr(np.array([[0, 1, 2, 2], [3, 4, 5, 6], [7, 7, 8, 9],
                                              [5, 5, 5, 5]]))
    assert offsets.tolist() == [0, 3, 7, 10, 11]
    assert points.tolist() == [0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 5]


def test_sorted_groups_merge_equal_names():
    names, groups = sorted_groups(("b", "a", "b"), np.array([0, 1, 2, -1]))
    assert names == ("a", "b") and groups.tolist() == [1, 0, 1, -1]


def test_face_point_mean_and_duplicate_faces():
    data = two_cubes()
    mesh = Mesh(data)
    x = data.points[:, 0]
    np.testing.assert_allclose(face_point_mean(data, x, np.arange(data.n_faces)),
                               mesh.face_centroids[:, 0])
    assert duplicate_faces(data).size == 0
    # the internal face listed once more, as a boundary face of cell 1: its points are
    # now on three cell sides
    doubled = two_cubes(face_offsets=np.arange(0, 4 * 12 + 1, 4),
                        face_points=np.r_[data.face_points, data.face_points[:4]],
                        owner=np.r_[data.owner, 1], neighbour=np.r_[data.neighbour, -1],
                        face_group=np.full(12, -1))
    assert duplicate_faces(doubled).tolist() == [0, 11]


def test_duplicate_faces_equal_a_search_by_point_sets():
    """Faces of a structured block listed again, turned and as boundary faces, among faces
    that share points but not all of them; the reference: point sets as Python sets."""
    data = mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 6),) * 3)).data
    rng = np.random.default_rng(6)
    again = rng.choice(data.n_faces, 25, replace=False)
    starts, stops = data.face_offsets[again], data.face_offsets[again + 1]
    extra = [data.face_points[a:b][::-1] for a, b in zip(starts, stops)]
    sizes = np.r_[np.diff(data.face_offsets), [len(e) for e in extra]]
    doubled = mesh_from_faces(
        path="doubled", points=data.points, dim=3,
        face_offsets=np.r_[0, np.cumsum(sizes)],
        face_points=np.r_[data.face_points, np.concatenate(extra)],
        owner=np.r_[data.owner, data.owner[again]], neighbour=np.r_[data.neighbour, [-1] * 25],
        n_cells=data.n_cells, face_group=np.r_[data.face_group, [-1] * 25],
        group_names=data.group_names, group_types=data.group_types)
    by_set: dict[frozenset, list[int]] = {}
    fo, fp = doubled.face_offsets, doubled.face_points
    for f in range(doubled.n_faces):
        by_set.setdefault(frozenset(fp[fo[f]:fo[f + 1]].tolist()), []).append(f)
    expected = sorted(f for faces in by_set.values() if len(faces) > 1 for f in faces)
    assert len(expected) == 50
    assert duplicate_faces(doubled).tolist() == expected


def test_element_meshes_know_their_non_manifold_faces():
    mesh = mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 3),) * 3))
    assert mesh.data.report.nonmanifold is not None and mesh.nonmanifold_faces.size == 0


def test_range_checks_part_by_part_equal_whole_array_ones(monkeypatch):
    # the checks read large arrays a part at a time (model.CHECK_PART): with parts of 7
    # entries they must find what numpy finds over the whole array, wherever the extreme
    # or the first empty face falls (at a part's start, end or inside)
    monkeypatch.setattr(model, "CHECK_PART", 7)
    rng = np.random.default_rng(4)
    for n in (1, 6, 7, 8, 50):
        values = rng.integers(-1000, 1000, n)
        assert model.value_span(values) == (values.min(), values.max())
        sizes = rng.integers(0, 4, n)
        offsets = np.r_[0, np.cumsum(sizes)]
        assert model.fewest_points(offsets) == (sizes.min(), int(np.argmin(sizes)))
    # an empty face in a later part is named, as the message says
    data = two_cubes()
    start, stop = data.face_offsets[9], data.face_offsets[10]
    offsets = data.face_offsets.copy()
    offsets[10:] -= stop - start
    with pytest.raises(ValueError, match="face 9 has no points"):
        dataclasses.replace(data, face_offsets=offsets,
                            face_points=np.delete(data.face_points, np.arange(start, stop)))
