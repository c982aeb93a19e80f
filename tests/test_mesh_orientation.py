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


def test_mirrored_orders_keep_node_0_first():
    # The read renumbers cells by their first corner before the vote turns a block round
    # (caselint.mesh.build): that order is the same either way round only because every
    # mirrored order keeps node 0 where it is.
    assert all(order[0] == 0 for order in MIRROR.values())


def test_the_vote_gives_the_same_mesh_with_and_without_renumbering(tmp_path):
    # A mirrored file read with Morton renumbering (vote after it) and without (vote on the
    # file's numbering): the same cells turned round, with the same corners in the same
    # order (in the file's ids), and positive volumes (equal up to the order of the sums).
    from caselint.mesh.build import mesh_from_elements
    from caselint.mesh.analysis import Mesh

    rng = np.random.default_rng(3)
    n = 6
    grid = np.stack(np.meshgrid(*(np.arange(n + 1.0),) * 3, indexing="ij"), -1).reshape(-1, 3)
    points = grid + rng.uniform(-0.2, 0.2, grid.shape)
    i, j, k = (a.ravel() for a in np.meshgrid(*(np.arange(n),) * 3, indexing="ij"))
    node = lambda a, b, c: (a * (n + 1) + b) * (n + 1) + c  # noqa: E731
    hexes = np.stack([node(i, j, k), node(i + 1, j, k), node(i + 1, j + 1, k),
                      node(i, j + 1, k), node(i, j, k + 1), node(i + 1, j, k + 1),
                      node(i + 1, j + 1, k + 1), node(i, j + 1, k + 1)], axis=1)
    mirrored = hexes[rng.permutation(len(hexes))][:, list(MIRROR["hexahedron"])]
    block = [ElementBlock("hexahedron", mirrored.astype(np.int32), 0)]
    meshes = [Mesh(mesh_from_elements(path="x", points=points, dim=3, blocks=block,
                                      renumber=renumber)) for renumber in (True, False)]
    assert meshes[0].data.notes == meshes[1].data.notes and "mirrored" in meshes[0].data.notes[0]
    corners = [m.in_file_order(m.file_point_ids(m.data.shapes[0].connectivity)) for m in meshes]
    assert np.array_equal(corners[0], corners[1])
    assert np.array_equal(corners[1], mirrored[:, list(MIRROR["hexahedron"])])
    volumes = [m.in_file_order(m.cell_volumes) for m in meshes]
    assert np.allclose(volumes[0], volumes[1], rtol=1e-12) and volumes[0].min() > 0


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
