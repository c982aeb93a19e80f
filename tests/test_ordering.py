"""Renumbering for locality (caselint.mesh.ordering): codes, locality, and file ids.

Reference for the Morton code: the bit-interleaving definition (bit b of x, y, z goes to
bit 3b, 3b + 1, 3b + 2), computed here independently with Python integers.
"""

from __future__ import annotations

import meshio
import numpy as np

from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import shuffled, structured_hex, tetrahedralise
from caselint.mesh.analysis import Mesh
from caselint.mesh.arrays import mesh_from_arrays, mesh_to_arrays
from caselint.mesh.build import mesh_from_elements
from caselint.mesh.pairing import ElementBlock
from caselint.mesh.ordering import _spread, morton_codes, spatial_order


def _interleave(x: int, y: int, z: int) -> int:
    return sum(((x >> b) & 1) << (3 * b) | ((y >> b) & 1) << (3 * b + 1)
               | ((z >> b) & 1) << (3 * b + 2) for b in range(21))


def test_bit_spreading_matches_interleaving_by_definition():
    rng = np.random.default_rng(3)
    q = rng.integers(0, 2**21, size=(200, 3), dtype=np.uint64)
    ours = _spread(q[:, 0]) | _spread(q[:, 1]) << np.uint64(1) | _spread(q[:, 2]) << np.uint64(2)
    expected = [_interleave(int(a), int(b), int(c)) for a, b, c in q]
    assert [int(v) for v in ours] == expected
    corners = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1], [1, 1, 1]], dtype=np.uint64)
    codes = _spread(corners[:, 0]) | _spread(corners[:, 1]) << np.uint64(1) \
        | _spread(corners[:, 2]) << np.uint64(2)
    assert codes.tolist() == [0, 1, 2, 4, 7]


def test_morton_codes_span_the_bounding_box():
    pts = np.array([[2.0, -1.0, 5.0], [4.0, 3.0, 5.0], [3.0, 1.0, 5.0]])   # flat in z
    codes = morton_codes(pts)
    top = 2**21 - 1
    assert int(codes[0]) == 0
    assert int(codes[1]) == _interleave(top, top, 0)
    assert int(codes[2]) == _interleave(top // 2, top // 2, 0)


def _mean_id_jump(mesh: Mesh) -> float:
    inner = mesh.neighbour >= 0
    return float(np.mean(np.abs(mesh.neighbour[inner] - mesh.owner[inner])))


def test_shuffled_block_gets_neighbours_close_in_memory():
    block = structured_hex(*(np.linspace(0.0, 1.0, 21),) * 3)          # 8000 cells
    mixed = shuffled(block, seed=2)
    ordered = mesh_from_meshio(mixed)
    # the file's own numbering, not renumbered: a Mesh built directly
    conn = np.asarray(mixed.cells[0].data, dtype=np.int32)
    as_read = Mesh(mesh_from_elements(path="mixed", points=np.asarray(mixed.points, float),
                                      dim=3, blocks=(ElementBlock("hexahedron", conn, 0),),
                                      renumber=False))
    # a random numbering puts a cell's neighbours a third of the mesh away on average;
    # the Morton order brings them within a few hundred ids (a 20^3 block: one layer is 400)
    assert _mean_id_jump(as_read) > 2000
    assert _mean_id_jump(ordered) < 250
    assert ordered.renumbered and not as_read.renumbered


def test_file_ids_name_the_same_cells_and_points():
    m = shuffled(tetrahedralise(structured_hex(*(np.linspace(0.0, 1.0, 5),) * 3)), seed=4)
    mesh = mesh_from_meshio(m)
    cells = mesh.file_cell_ids()
    points = mesh.file_point_ids()
    assert sorted(cells.tolist()) == list(range(mesh.n_cells))        # a permutation
    assert sorted(points.tolist()) == list(range(mesh.n_points))
    # caselint's cell i is the file's cell cells[i]: same corners, renamed
    conn = mesh.data.shapes[0].connectivity
    assert np.array_equal(points[conn], m.cells[0].data[cells])
    assert np.array_equal(mesh.points, m.points[points])
    # per-cell values back in the file's order
    volumes = mesh.in_file_order(mesh.cell_volumes)
    corner = m.points[m.cells[0].data]
    expected = np.abs(np.einsum("ij,ij->i", corner[:, 1] - corner[:, 0],
                                np.cross(corner[:, 2] - corner[:, 0], corner[:, 3] - corner[:, 0]))) / 6
    assert np.allclose(np.abs(volumes), expected, rtol=1e-12)


def test_renumbering_an_ordered_block_keeps_its_order():
    m = shuffled(structured_hex(*(np.linspace(0.0, 1.0, 4),) * 3), seed=1)
    once = mesh_from_meshio(m)
    conn = once.data.shapes[0].connectivity
    again = spatial_order(once.points, [ElementBlock("hexahedron", conn, 0)])
    assert np.array_equal(again.cell_order, np.arange(once.n_cells))      # already in order
    assert np.array_equal(again.point_order, np.arange(once.n_points))


def test_fields_move_with_their_cells_and_points():
    m = shuffled(structured_hex(*(np.linspace(0.0, 1.0, 4),) * 3), seed=6)
    m.point_data = {"x": np.asarray(m.points[:, 0]).copy()}
    m.cell_data = {"c": [np.arange(len(m.cells[0].data), dtype=float)]}
    mesh = mesh_from_meshio(m)
    assert np.array_equal(mesh.point_data["x"], mesh.points[:, 0])
    assert np.array_equal(mesh.cell_data["c"], mesh.file_cell_ids().astype(float))


def test_file_ids_survive_the_plain_array_form():
    mesh = mesh_from_meshio(shuffled(structured_hex(*(np.linspace(0.0, 1.0, 4),) * 3), seed=8))
    back = mesh_from_arrays(mesh_to_arrays(mesh))
    assert np.array_equal(back.file_cell_ids(), mesh.file_cell_ids())
    assert np.array_equal(back.file_point_ids(), mesh.file_point_ids())


def test_a_single_cell_mesh_is_left_alone():
    pts = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], float)
    mesh = mesh_from_meshio(meshio.Mesh(pts, [("tetra", np.array([[0, 1, 2, 3]]))]))
    assert mesh.file_cell_ids().tolist() == [0]
    assert mesh.in_file_order(mesh.cell_volumes) == mesh.cell_volumes


def test_point_order_is_the_stable_sort_of_the_codes():
    # Reference: numpy's stable argsort; coincident points (equal codes) keep file order.
    from caselint.mesh.ordering import _sorted_order

    rng = np.random.default_rng(11)
    codes = rng.integers(0, 50, size=5000).astype(np.uint64)       # many ties
    np.testing.assert_array_equal(_sorted_order(codes), np.argsort(codes, kind="stable"))
    unique = rng.permutation(10_000).astype(np.uint64)
    np.testing.assert_array_equal(_sorted_order(unique), np.argsort(unique, kind="stable"))
