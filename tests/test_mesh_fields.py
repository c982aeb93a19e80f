"""Point and cell data carried by a mesh file reach ``Mesh.point_data`` / ``Mesh.cell_data``.

Cell data is kept per volume cell in cell-id order (boundary-element blocks left out);
arrays missing on a volume block, or not numeric, are left out. Values are kept as stored:
only coordinates are scaled by ``scale_to_m``.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest

from caselint.mesh import mesh_from_meshio, read_mesh
from caselint.mesh.blocks import structured_hex, tetrahedralise


def two_volume_blocks() -> meshio.Mesh:
    """A hexahedron block and a tetrahedron block side by side, plus boundary quads."""
    hexes = structured_hex([0, 1, 2], [0, 1], [0, 1])
    tets = tetrahedralise(structured_hex([2, 3], [0, 1], [0, 1]))
    offset = len(hexes.points)
    points = np.vstack([hexes.points, tets.points])
    cells = [("hexahedron", hexes.cells[0].data), ("quad", hexes.cells[1].data),
             ("tetra", tets.cells[0].data + offset)]
    return meshio.Mesh(points, cells)


def test_cell_data_is_joined_over_volume_blocks_in_cell_order():
    m = two_volume_blocks()
    n_hex, n_quad, n_tet = (len(b.data) for b in m.cells)
    u_hex = np.tile([1.0, 0.0, 0.0], (n_hex, 1))
    u_tet = np.tile([0.0, 2.0, 0.0], (n_tet, 1))
    m.cell_data = {
        "U": [u_hex, np.zeros((n_quad, 3)), u_tet],
        "label": [np.array(["a"] * n_hex), np.array(["b"] * n_quad), np.array(["c"] * n_tet)],
    }
    m.point_data = {"T": np.arange(len(m.points), dtype=float)}
    mesh = mesh_from_meshio(m, scale_to_m=1e-3)
    assert set(mesh.cell_data) == {"U"} and set(mesh.point_data) == {"T"}
    assert mesh.cell_data["U"].shape == (mesh.n_cells, 3) == (n_hex + n_tet, 3)
    hex_block = next(b for b in mesh.data.shapes if b.type == "hexahedron")
    tet_block = next(b for b in mesh.data.shapes if b.type == "tetra")
    assert np.array_equal(mesh.cell_data["U"][hex_block.cells], u_hex)
    assert np.array_equal(mesh.cell_data["U"][tet_block.cells], u_tet)
    # caselint renumbers points for locality; each keeps its own value, not scaled
    assert np.array_equal(mesh.point_data["T"], mesh.file_point_ids())
    assert np.array_equal(mesh.in_file_order(mesh.point_data["T"], "point"),
                          np.arange(len(m.points)))


def test_fields_survive_a_vtu_file(tmp_path):
    m = structured_hex([0, 1, 2], [0, 1], [0, 1])
    m = meshio.Mesh(m.points, [m.cells[0]],
                    point_data={"U": np.tile([0.5, 0.0, 0.0], (len(m.points), 1))},
                    cell_data={"p": [np.array([1.0, 2.0])]})
    path = tmp_path / "fields.vtu"
    meshio.write(path, m)
    mesh = read_mesh(path)
    assert mesh.point_data["U"].shape == (mesh.n_points, 3)
    assert np.array_equal(mesh.cell_data["p"].ravel(), [1.0, 2.0])


def test_meshes_without_fields_have_empty_mappings():
    mesh = mesh_from_meshio(structured_hex([0, 1], [0, 1], [0, 1]))
    assert mesh.point_data == {} and set(mesh.cell_data) <= {"gmsh:physical", "gmsh:geometrical"}


def test_field_rows_must_match_the_mesh():
    import dataclasses

    good = mesh_from_meshio(structured_hex([0, 1], [0, 1], [0, 1]))
    with pytest.raises(ValueError, match="point data 'U' has 3 rows for 8 points"):
        dataclasses.replace(good.data, point_data={"U": np.zeros((3, 3))})
