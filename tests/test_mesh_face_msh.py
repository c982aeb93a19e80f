"""The commercial solver's face-based .msh: ASCII and binary sections, polygonal faces,
polyhedral cells, zone names and types, and clear errors for broken files.

References: the documented example of the format (three unit quadrilaterals, embedded
below; areas 1 m^2 each [computed]); the mixed-element box of ``tests/mixed_mesh.py`` read
from VTU through meshio; the 2:1 refined block of ``caselint.mesh.refined`` (polyhedra)
with its closed-form volume. Files are written by ``tests/format_writers.py`` from the
documented section layout.
"""

from __future__ import annotations

import numpy as np
import pytest

from caselint.mesh import read_mesh
from caselint.mesh.formats.face_msh import looks_like_face_msh
from caselint.mesh.refined import refined_block
from format_writers import write_face_msh
from mixed_mesh import SIDE_ROLES, mixed_box, reference_data
from test_cli import run_cli

# The format documentation's first example: a 2-D mesh of three unit quadrilaterals in a
# row (x from 0 to 3, y from 0 to 1), interior faces in zone 2, walls in zones 3 and 4,
# a velocity inlet (bc-type a) and an outflow (bc-type 24 hex = 36).
DOCUMENTED_2D = """(0 "Grid:")

(0 "Dimensions:")
(2 2)

(12 (0 1 3 0))
(13 (0 1 a 0))
(10 (0 1 8 0 2))

(12 (7 1 3 1 3))

(13 (2 1 2 2 2)(
1 2 1 2
3 4 2 3))

(13 (3 3 5 3 2)(
5 1 1 0
1 3 2 0
3 6 3 0))

(13 (4 6 8 3 2)(
7 4 3 0
4 2 2 0
2 8 1 0))

(13 (5 9 9 a 2)(
8 5 1 0))

(13 (6 a a 24 2)(
6 7 3 0))

(10 (1 1 8 1 2)
(
1.00000000e+00 0.00000000e+00
1.00000000e+00 1.00000000e+00
2.00000000e+00 0.00000000e+00
2.00000000e+00 1.00000000e+00
0.00000000e+00 0.00000000e+00
3.00000000e+00 0.00000000e+00
3.00000000e+00 1.00000000e+00
0.00000000e+00 1.00000000e+00))
"""


def test_documented_example_reads_with_positive_areas(tmp_path):
    path = tmp_path / "three.msh"
    path.write_text(DOCUMENTED_2D)
    mesh = read_mesh(path)
    assert (mesh.dim, mesh.n_cells, mesh.data.n_faces, mesh.data.n_internal) == (2, 3, 10, 2)
    np.testing.assert_allclose(mesh.cell_volumes, [1.0, 1.0, 1.0], rtol=1e-12)
    assert mesh.notes == ()                    # the documented orientation, as read
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        "zone-3": 3, "zone-4": 3, "zone-5": 1, "zone-6": 1}
    assert mesh.data.group_types == {"zone-3": "wall", "zone-4": "wall", "zone-5": "inlet",
                                     "zone-6": "outlet"}
    assert mesh.data.zone_names == ("zone-7",)


@pytest.mark.parametrize("binary", [False, True])
def test_mixed_box_reads_like_the_vtu(tmp_path, binary):
    ref = reference_data(mixed_box(), tmp_path)
    mesh = read_mesh(write_face_msh(ref, tmp_path / "box.msh", roles=SIDE_ROLES,
                                    binary=binary))
    assert mesh.n_cells == ref.n_cells == 210 and mesh.data.n_faces == ref.n_faces
    assert mesh.cell_volumes.sum() == pytest.approx(0.042, rel=1e-12)
    assert mesh.cell_volumes.min() > 0 and mesh.notes == ()
    assert mesh.group_names == ref.group_names
    assert mesh.data.group_types == {"floor": "wall", "inlet": "inlet", "outlet": "outlet",
                                     "top": "symmetry", "walls": "wall"}


@pytest.mark.parametrize("binary", [False, True])
def test_polyhedra_and_polygonal_faces(tmp_path, binary):
    # 2:1 refined block: coarse cells next to the refined box are polyhedra with up to
    # eight-point faces (face type 5 polygonal, cell type 7 polyhedron).
    data = refined_block(np.linspace(0, 4, 5), np.linspace(0, 3, 4), np.linspace(0, 2, 3),
                         ((1, 3), (1, 2), (0, 1)))
    assert np.diff(data.face_offsets).max() > 4
    roles = dict.fromkeys(data.group_names, "wall")
    mesh = read_mesh(write_face_msh(data, tmp_path / "poly.msh", roles=roles, binary=binary))
    assert mesh.n_cells == data.n_cells
    assert mesh.cell_volumes.sum() == pytest.approx(4 * 3 * 2, rel=1e-12)
    from caselint.mesh.analysis import Mesh
    np.testing.assert_allclose(np.sort(mesh.cell_volumes), np.sort(Mesh(data).cell_volumes),
                               rtol=1e-12)
    assert mesh.group_names == data.group_names


def test_cell_zones_and_their_names(tmp_path):
    ref = reference_data(mixed_box(), tmp_path)
    from caselint.mesh.analysis import Mesh
    x = Mesh(ref).cell_centroids[:, 0]
    zones = (np.where(x < 0.35, 0, 1), ("upstream", "downstream"))
    mesh = read_mesh(write_face_msh(ref, tmp_path / "zones.msh", roles=SIDE_ROLES,
                                    cell_zones=zones))
    assert mesh.data.zone_names == ("downstream", "upstream")
    counts = np.bincount(mesh.data.cell_zone)
    assert counts.tolist() == [int((x >= 0.35).sum()), int((x < 0.35).sum())]


def test_faces_ordered_against_the_rule_are_read_reversed_with_a_note(tmp_path):
    ref = reference_data(mixed_box(), tmp_path)
    path = write_face_msh(ref, tmp_path / "box.msh", roles=SIDE_ROLES, against_rule=True)
    mesh = read_mesh(path)
    assert mesh.cell_volumes.sum() == pytest.approx(0.042, rel=1e-12)
    assert mesh.cell_volumes.min() > 0
    assert mesh.notes == ("the faces of this file are ordered the other way round from the "
                          "format's rule (the boundary enclosed a negative volume); read "
                          "reversed",)


def test_gmsh_msh_is_not_taken(tmp_path):
    path = tmp_path / "g.msh"
    path.write_text("$MeshFormat\n2.2 0 8\n$EndMeshFormat\n")
    assert not looks_like_face_msh(path)
    doc = tmp_path / "doc.msh"
    doc.write_text(DOCUMENTED_2D)
    assert looks_like_face_msh(doc)


# -- truncated and inconsistent files: exit 2 naming the file and what is wrong -------------


def _broken(tmp_path, edit, binary=False) -> str:
    ref = reference_data(mixed_box(), tmp_path)
    path = write_face_msh(ref, tmp_path / "box.msh", roles=SIDE_ROLES, binary=binary)
    path.write_bytes(edit(path.read_bytes()))
    code, _, err = run_cli("mesh", str(path))
    assert code == 2 and str(path) in err, err
    return err


@pytest.mark.parametrize("edit, message", [
    (lambda t: t[:len(t) // 2], "is not closed (truncated)"),
    (lambda t: t[:t.index(b"(13 (2")], "no face sections"),
    (lambda t: t.replace(b"(13 (0 1 20d 0))", b"(13 (0 1 20e 0))"),
     "526 faces declared, the face sections hold 525"),
    (lambda t: t.replace(b"(12 (0 1 d2 0))", b"(12 (0 1 d3 0))"),
     "1 of the 211 declared cells are on no face (first: cell 211)"),
    (lambda t: t.replace(b"(10 (0 1 72 0 3))", b"(10 (0 1 73 0 3))"),
     "1 of the 115 declared nodes are in no node section"),
    (lambda t: t.replace(b"(13 (2 1 ", b"(13 (2 2 ", 1),
     "face zone 2 declares 404 faces, the data holds more numbers (2501) than they use"),
    (lambda t: t.replace(b"(13 (2 1 195 2 0)(\n", b"(13 (2 1 195 2 0)(\nzz ", 1),
     "'zz' is not a hexadecimal number"),
])
def test_broken_ascii_files_exit_2(tmp_path, edit, message):
    assert message in _broken(tmp_path, edit)


@pytest.mark.parametrize("edit, message", [
    (lambda t: t[:len(t) // 2], "faces: 405 records declared, the data ends after 190"),
    (lambda t: t.replace(b"(3010 (1 1 72", b"(3010 (1 1 71"), "holds more data than its header"),
])
def test_broken_binary_files_exit_2(tmp_path, edit, message):
    assert message in _broken(tmp_path, edit, binary=True)


def test_mesh_zone_is_refused_for_a_single_mesh_format(tmp_path):
    from caselint.errors import MeshReadError

    path = tmp_path / "three.msh"
    path.write_text(DOCUMENTED_2D)
    with pytest.raises(MeshReadError, match="mesh.zone is '2', but this format holds a "
                                            "single mesh"):
        read_mesh(path, zone="2")
