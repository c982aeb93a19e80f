"""Mesh builders used by tests, examples and benchmarks.

References: closed forms (geometric series, cell and face counts of tensor grids,
tetrahedral splits that conserve volume and conform between cells).
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest

from caselint.mesh import mesh_from_meshio, read_mesh
from caselint.mesh.blocks import (
    graded, hex_to_tets, shuffled, structured_hex, structured_parity, tetrahedralise, write_gmsh22,
)


def test_graded_is_a_geometric_progression():
    # Sum of a geometric series: the first size is L (r - 1) / (r^n - 1).
    x = graded(1.0, 3.0, 10, 1.15)
    sizes = np.diff(x)
    assert len(x) == 11 and x[0] == 1.0 and x[-1] == 3.0
    assert np.allclose(sizes[1:] / sizes[:-1], 1.15, rtol=1e-12)
    assert sizes[0] == pytest.approx(2.0 * 0.15 / (1.15**10 - 1), rel=1e-13)
    assert np.allclose(np.diff(graded(0, 1, 4, 1.0)), 0.25)
    shrinking = np.diff(graded(0, 1, 5, 0.5))
    assert np.allclose(shrinking[1:] / shrinking[:-1], 0.5, rtol=1e-12)
    with pytest.raises(ValueError):
        graded(0, 1, 0, 1.2)


def test_structured_hex_counts_groups_and_orientation():
    m = structured_hex(np.linspace(0, 1, 4), np.linspace(0, 1, 3), np.linspace(0, 1, 6))
    assert len(m.points) == 4 * 3 * 6
    assert len(m.cells[0].data) == 3 * 2 * 5
    assert len(m.cells[1].data) == 2 * (2 * 5 + 3 * 5 + 3 * 2)
    mesh = mesh_from_meshio(m)
    outward = {"xmin": (0, -1), "xmax": (0, 1), "ymin": (1, -1), "ymax": (1, 1),
               "zmin": (2, -1), "zmax": (2, 1)}
    for name, (axis, sign) in outward.items():
        faces = mesh.group_faces(name)
        assert np.all(sign * mesh.face_area_vectors[faces, axis] > 0), name
    # the boundary quads as written are outward too (each matches its owner's face)
    quads = m.cells[1].data
    p = m.points
    s = np.cross(p[quads[:, 2]] - p[quads[:, 0]], p[quads[:, 3]] - p[quads[:, 1]])
    centre = p[quads].mean(axis=1) - 0.5
    assert np.all(np.einsum("ij,ij->i", s, centre) > 0)


@pytest.mark.parametrize("scheme", [5, 6])
def test_tetrahedralise_conserves_volume_and_conforms(scheme):
    nx, ny, nz = 3, 2, 2
    m = structured_hex(np.linspace(0, 3, nx + 1), np.linspace(0, 2, ny + 1),
                       np.linspace(0, 1, nz + 1))
    tm = tetrahedralise(m, scheme=scheme, parity=structured_parity(nx, ny, nz))
    mesh = mesh_from_meshio(tm)
    assert mesh.cell_counts == {"tetra": scheme * nx * ny * nz}
    assert np.all(mesh.cell_volumes > 0)
    assert mesh.cell_volumes.sum() == pytest.approx(6.0, rel=1e-14)
    # conforming: the only exposed faces are the split boundary quads, all grouped
    assert len(mesh.boundary_faces) == 2 * len(m.cells[1].data)
    assert np.all(mesh.face_group[mesh.boundary_faces] >= 0)
    assert mesh.unmatched_group_elements == {}


def test_hex_to_tets_rejects_other_schemes():
    with pytest.raises(ValueError, match="scheme must be 5 or 6"):
        hex_to_tets(np.arange(8)[None, :], scheme=4)


def test_shuffled_keeps_geometry_and_groups():
    m = structured_hex(np.linspace(0, 1, 3), np.linspace(0, 1, 3), np.linspace(0, 1, 3))
    s = shuffled(m, seed=2)
    assert not np.array_equal(s.points, m.points)
    a, b = mesh_from_meshio(m), mesh_from_meshio(s)
    assert np.allclose(np.sort(a.cell_volumes), np.sort(b.cell_volumes))
    assert {g: len(a.group_faces(g)) for g in a.group_names} == \
        {g: len(b.group_faces(g)) for g in b.group_names}


def test_write_gmsh22_round_trip(tmp_path, capfd):
    m = structured_hex(np.linspace(0, 2, 3), np.linspace(0, 1, 2), np.linspace(0, 1, 2))
    path = tmp_path / "b.msh"
    write_gmsh22(m, path)
    assert capfd.readouterr() == ("", "")
    assert path.read_text().startswith("$MeshFormat\n2.2 0 8\n")
    back = meshio.read(path)
    assert np.allclose(back.points, m.points)
    mesh = read_mesh(path)
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        "xmax": 1, "xmin": 1, "ymax": 2, "ymin": 2, "zmax": 2, "zmin": 2}
