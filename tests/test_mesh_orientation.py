"""Element node-order conventions: a mirrored cell type is read the other way round.

Written for real as VTU by meshio 5.3.5 (and read back through meshio), in both wedge
orders: caselint's (VTK 9 / gmsh: triangle (0, 1, 2) with its normal towards (3, 4, 5))
and the mirrored one. References: the closed-form volume of the box
(nx * ny * nz * h^3 [computed]) and VTK 9.7's ``vtkCellSizeFilter`` for the sign of a
wedge volume as written.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest

from caselint.mesh import read_mesh
from caselint.mesh.orientation import MIRROR, volume_signs
from caselint.mesh.pairing import ElementBlock
from mixed_mesh import mixed_box, tags, volume_boundary_meshio
from test_damaged_meshes import check, finding

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")

BOX_M3 = 7 * 3 * 2 * 0.1 ** 3


def vtu(tmp_path, name, box):
    path = tmp_path / name
    meshio.write(path, volume_boundary_meshio(box))
    return path


@pytest.mark.parametrize("mirrored", [False, True])
def test_both_wedge_orders_read_as_the_same_valid_mesh(tmp_path, mirrored):
    mesh = read_mesh(vtu(tmp_path, "box.vtu", mixed_box(mirrored=mirrored)),
                     tag_array="boundary", tags=tags())
    assert mesh.cell_counts["wedge"] == 24
    assert mesh.cell_volumes.min() > 0
    assert mesh.cell_volumes.sum() == pytest.approx(BOX_M3, rel=1e-12)
    notes = [n for n in mesh.notes if "mirrored node order" in n]
    assert notes == ([
        "24 of 24 wedge cells were written in the mirrored node order (the right-hand normal "
        "of triangle (0, 1, 2) pointing away from (3, 4, 5)); all 24 read in the other order"]
        if mirrored else [])
    if mirrored:                                # every face paired the right way round
        assert not len(mesh.data.report.clashing)


def test_mirrored_order_of_every_type_is_a_mirror_image():
    # The mirrored node order of each reference cell has the opposite volume sign.
    cells = {
        "tetra": [(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1)],
        "hexahedron": [(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0),
                       (0, 0, 1), (1, 0, 1), (1, 1, 1), (0, 1, 1)],
        "wedge": [(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (0, 1, 1)],
        "pyramid": [(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (0.5, 0.5, 1)],
        "triangle": [(0, 0, 0), (1, 0, 0), (0, 1, 0)],
        "quad": [(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0)],
    }
    for cell, pts in cells.items():
        dim = 2 if cell in ("triangle", "quad") else 3
        conn = np.arange(len(pts))[None, :]
        as_is = volume_signs(np.array(pts, float), ElementBlock(cell, conn, 0), dim)
        flipped = volume_signs(np.array(pts, float),
                               ElementBlock(cell, conn[:, list(MIRROR[cell])], 0), dim)
        assert (as_is.tolist(), flipped.tolist()) == ([1], [-1]), cell


def write_case(folder, mesh):
    case = folder / "case.yaml"
    case.write_text(
        f"caselint: 1\ncase: {{name: orientation}}\nmesh:\n  file: {mesh.name}\n"
        "  tag_array: boundary\n  tags: {" + ", ".join(f"{k}: {v}" for k, v in tags().items())
        + "}\n  boundaries: {inlet: inlet, outlet: outlet, walls: wall, floor: wall, "
        "top: symmetry}\n", encoding="utf-8")
    return case


@pytest.mark.parametrize("mirrored", [False, True])
def test_a_few_inverted_cells_stay_findings_in_either_order(tmp_path, mirrored):
    box = mixed_box(mirrored=mirrored)
    wedges = box.blocks[1][1]
    for row in (2, 9):                          # two cells turned against the others
        wedges[row] = wedges[row][list(MIRROR["wedge"])]
    path = vtu(tmp_path, "box.vtu", box)
    code, document, err = check(write_case(tmp_path, path))
    assert code == 1, err
    inverted = finding(document, "inverted-cells")
    assert inverted["measured"] == 2.0
    assert inverted["where"]["cells"] == [12 + 2, 12 + 9]      # file ids: after 12 hexahedra
    notes = read_mesh(path, tag_array="boundary", tags=tags()).notes
    assert notes == (("22 of 24 wedge cells were written in the mirrored node order (the "
                      "right-hand normal of triangle (0, 1, 2) pointing away from (3, 4, 5)); "
                      "all 24 read in the other order; 2 of them are inverted in that order",)
                     if mirrored else ())


def test_the_reports_say_what_reading_changed(tmp_path):
    """The reader's note on a mirrored block reaches the report (rule mesh-reading)."""
    path = vtu(tmp_path, "box.vtu", mixed_box(mirrored=True))
    code, document, err = check(write_case(tmp_path, path))
    checks = {c["rule"]: c for c in document["cases"][0]["checks"]}
    assert checks["mesh-reading"]["outcome"] == "pass"
    assert checks["mesh-reading"]["measured"] == 1.0
    notes = [f["message"] for f in document["cases"][0]["findings"]
             if f["rule"] == "mesh-reading"]
    assert len(notes) == 1 and "mirrored node order" in notes[0]
