"""SU2 meshes read by caselint's own reader: marker names, zones, CRLF, declared counts.

Reference: the same mixed-element box written as VTU and read through meshio
(``tests/mixed_mesh.py``; closed-form volume nx * ny * nz * h^3 [computed]). The SU2 files
are written by ``tests/format_writers.py`` from the format's documented layout.
"""

from __future__ import annotations

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh import read_mesh
from caselint.mesh.blocks import structured_hex
from format_writers import su2_zone, write_su2
from mixed_mesh import ElementMesh, mixed_box
from test_cli import run_cli


def small_block() -> ElementMesh:
    """A 2 x 1 x 1 block of hexahedra with sides solid-xmin ... (the second zone)."""
    m = structured_hex([5.0, 6.0, 7.0], [0.0, 1.0], [0.0, 1.0])
    quads = m.cells[1].data
    tag = m.cell_data["gmsh:physical"][1]
    names = {int(v[0]): k for k, v in m.field_data.items()}
    return ElementMesh(m.points, [("hexahedron", m.cells[0].data)],
                       [("quad", quads[tag == t], f"solid-{names[t]}") for t in sorted(names)])


def test_marker_names_become_groups_and_counts_match_the_box(tmp_path):
    box = mixed_box(mirrored=True)
    mesh = read_mesh(write_su2(box, tmp_path / "box.su2"))
    assert mesh.cell_counts == {"hexahedron": 12, "wedge": 24, "pyramid": 42, "tetra": 132}
    assert mesh.cell_volumes.sum() == pytest.approx(7 * 3 * 2 * 0.1 ** 3, rel=1e-12)
    assert mesh.cell_volumes.min() > 0
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        "floor": 33, "inlet": 6, "outlet": 12, "top": 33, "walls": 36}
    assert not mesh.data.report.unmatched and not mesh.data.report.internal
    # the wedges, written in the mirrored order, are turned round, and a note says so
    assert mesh.notes == (
        "24 of 24 wedge cells were written in the mirrored node order (the right-hand normal "
        "of triangle (0, 1, 2) pointing away from (3, 4, 5)); all 24 read in the other order",)


def test_crlf_reads_the_same_as_lf(tmp_path):
    lf = read_mesh(write_su2(mixed_box(), tmp_path / "lf.su2"))
    crlf = read_mesh(write_su2(mixed_box(), tmp_path / "crlf.su2", crlf=True))
    assert b"\r\n" in (tmp_path / "crlf.su2").read_bytes()
    np.testing.assert_array_equal(lf.cell_volumes, crlf.cell_volumes)
    assert lf.group_names == crlf.group_names


def test_file_cell_ids_are_the_rows_of_the_file(tmp_path):
    # element rows shuffled (types interleaved); one tetrahedron turned inside out
    box = mixed_box()
    tets = box.blocks[-1][1]
    tets[7] = tets[7][[0, 2, 1, 3]]
    order = np.random.default_rng(3).permutation(box.n_cells)
    mesh = read_mesh(write_su2(box, tmp_path / "rows.su2", order=order))
    row_of_cell = np.argsort(order)
    bad = np.flatnonzero(mesh.cell_volumes < 0)
    assert mesh.file_cell_ids(bad).tolist() == [int(row_of_cell[box.n_cells - len(tets) + 7])]
    assert mesh.cell_volumes.sum() == pytest.approx(0.042 - 2 * tets_volume(box, 7), rel=1e-12)


def tets_volume(box: ElementMesh, row: int) -> float:
    a, b, c, d = box.points[box.blocks[-1][1][row]]
    return abs(float(np.dot(np.cross(b - a, c - a), d - a))) / 6


def two_zones(tmp_path, **kwargs):
    return write_su2(None, tmp_path / "cht.su2", zones=[mixed_box(), small_block()], **kwargs)


def test_two_zone_file_is_refused_without_mesh_zone_listing_the_zones(tmp_path):
    with pytest.raises(MeshReadError) as info:
        read_mesh(two_zones(tmp_path))
    assert str(info.value).endswith(
        "holds 2 zones; set mesh.zone in the case file to the one to check (zones 1: 210 "
        "cells, markers floor, inlet, outlet, top, walls; 2: 2 cells, markers solid-xmax, "
        "solid-xmin, solid-ymax, solid-ymin, solid-zmax, solid-zmin)")


def test_mesh_zone_picks_one_zone(tmp_path):
    path = two_zones(tmp_path)
    solid = read_mesh(path, zone="2")
    assert solid.n_cells == 2 and solid.cell_volumes.sum() == pytest.approx(2.0)
    assert solid.group_names == ("solid-xmax", "solid-xmin", "solid-ymax", "solid-ymin",
                                 "solid-zmax", "solid-zmin")
    assert "zone 2 of 2 read (mesh.zone)" in solid.notes
    fluid = read_mesh(path, zone="1")
    assert fluid.n_cells == 210 and fluid.cell_volumes.sum() == pytest.approx(0.042)
    with pytest.raises(MeshReadError, match="mesh.zone '3' is not a zone of this file"):
        read_mesh(path, zone="3")


def test_mesh_zone_in_the_case_file(tmp_path):
    two_zones(tmp_path, crlf=True)
    case = tmp_path / "case.yaml"
    text = ("caselint: 1\ncase: {name: cht}\nmesh:\n  file: cht.su2\n{zone}"
            "  boundaries: {solid-xmin: wall}\n")
    case.write_text(text.replace("{zone}", ""))
    code, _, err = run_cli("check", str(case))
    assert code == 2 and "cht.su2: holds 2 zones" in err
    case.write_text(text.replace("{zone}", "  zone: 2\n"))
    code, out, err = run_cli("check", str(case), "--format", "json")
    assert code in (0, 1), err


# -- truncated and inconsistent files: exit 2 naming the file and what is wrong -------------


def _edited(tmp_path, edit) -> str:
    path = write_su2(mixed_box(), tmp_path / "box.su2")
    path.write_text(edit(path.read_text()))
    with pytest.raises(MeshReadError) as info:
        read_mesh(path)
    assert str(path) in str(info.value)
    return str(info.value)


@pytest.mark.parametrize("edit, message", [
    (lambda t: t[:len(t) // 2], "line 214: NPOIN= 114 but 39 point lines follow"),                    # cut in the points
    (lambda t: t[:t.index("NPOIN")], "has no NPOIN= section"),
    (lambda t: t.replace("NELEM= 210", "NELEM= 211"), "line 3: NELEM= 211 but 210 element"),
    (lambda t: t.replace("NMARK= 5", "NMARK= 6"), "NMARK= 6 but 5 markers"),
    (lambda t: t.replace("MARKER_ELEMS= 6", "MARKER_ELEMS= 7"), "MARKER_ELEMS= 7 but 6"),
    (lambda t: t.replace("\n12 ", "\n17 ", 1), "line 4: element of type 17 (unknown)"),
    (lambda t: t.replace("\n12 ", "\n5 ", 1), "line 4: element of type 5 (triangle)"),
    (lambda t: t.replace("NDIME= 3", "NDIME= 4"), "NDIME= 4; expected 2 or 3"),
    (lambda t: t.replace("\n12 0 ", "\n12 ", 1), "line 4: a hexahedron (type 12) needs 8"),
    (lambda t: t.replace("\n12 0 ", "\n12 9999 ", 1), "refers to point 9999"),
    (lambda t: t.replace("\n0 0 0 0\n", "\n0 zero 0 0\n", 1), "'zero' is not a number"),
])
def test_truncated_or_inconsistent_files_are_refused(tmp_path, edit, message):
    assert message in _edited(tmp_path, edit)


def test_cli_exit_2_names_the_file(tmp_path):
    path = write_su2(mixed_box(), tmp_path / "box.su2")
    path.write_text(path.read_text()[:-200])
    code, _, err = run_cli("mesh", str(path))
    assert code == 2 and "box.su2" in err and "MARKER_ELEMS= 36 but" in err


def test_two_dimensional_file(tmp_path):
    from caselint.mesh.blocks import structured_quad

    m = structured_quad(np.linspace(0, 2, 5), np.linspace(0, 1, 3))
    tag = m.cell_data["gmsh:physical"][1]
    names = {int(v[0]): k for k, v in m.field_data.items()}
    plane = ElementMesh(m.points, [("quad", m.cells[0].data)],
                        [("line", m.cells[1].data[tag == t], names[t]) for t in sorted(names)])
    path = tmp_path / "plane.su2"
    path.write_text("\n".join(su2_zone(plane, dim=2)) + "\n")
    mesh = read_mesh(path)
    assert (mesh.dim, mesh.n_cells) == (2, 8)
    assert mesh.cell_volumes.sum() == pytest.approx(2.0, rel=1e-12)     # 2 m x 1 m
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        "xmax": 2, "xmin": 2, "ymax": 4, "ymin": 4}
