"""Unique faces, owner/neighbour orientation, non-manifold faces and boundary groups.

References: face counts of a structured block (closed form); hybrid meshes built by hand
whose shared faces are known; boundary element counts per side of a block.
"""

from __future__ import annotations

import meshio
import numpy as np
import pytest

from caselint.mesh import mesh_from_meshio
from caselint.mesh import quality
from caselint.mesh.blocks import shuffled, structured_hex, structured_quad

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")


def block(nx=3, ny=4, nz=2):
    return structured_hex(np.linspace(0, nx, nx + 1), np.linspace(0, ny, ny + 1),
                          np.linspace(0, nz, nz + 1))


def test_block_face_counts_and_orientation():
    # Closed form for an nx x ny x nz block: internal (nx-1) ny nz + nx (ny-1) nz + nx ny (nz-1),
    # boundary 2 (ny nz + nx nz + nx ny).
    nx, ny, nz = 3, 4, 2
    mesh = mesh_from_meshio(block(nx, ny, nz))
    internal = (nx - 1) * ny * nz + nx * (ny - 1) * nz + nx * ny * (nz - 1)
    assert mesh.n_faces == internal + 2 * (ny * nz + nx * nz + nx * ny)
    inner = mesh.neighbour >= 0
    assert inner.sum() == internal
    assert np.all(mesh.owner[inner] < mesh.neighbour[inner])
    assert np.all(inner[:internal])                      # internal faces first,
    n = mesh.n_internal                                  # each part sorted by owner
    assert np.all(np.diff(mesh.owner[:n]) >= 0) and np.all(np.diff(mesh.owner[n:]) >= 0)
    d = mesh.cell_centroids[mesh.neighbour[inner]] - mesh.cell_centroids[mesh.owner[inner]]
    assert np.all(np.einsum("ij,ij->i", d, mesh.face_area_vectors[inner]) > 0)
    assert np.all(np.diff(mesh.face_offsets) == 4)
    assert len(mesh.nonmanifold_faces) == 0 and len(mesh.clashing_faces) == 0


def test_boundary_groups_face_counts():
    mesh = mesh_from_meshio(block(3, 4, 2))
    counts = {g: len(mesh.group_faces(g)) for g in mesh.group_names}
    assert counts == {"xmin": 8, "xmax": 8, "ymin": 6, "ymax": 6, "zmin": 12, "zmax": 12}
    assert np.all(mesh.face_group[mesh.neighbour >= 0] == -1)
    assert np.all(mesh.face_group[mesh.boundary_faces] >= 0)
    xmin = mesh.group_faces("xmin")
    assert np.allclose(mesh.face_centroids[xmin, 0], 0)
    assert np.all(mesh.face_area_vectors[xmin, 0] < 0)  # outward on the x = 0 side
    assert mesh.unmatched_group_elements == {} and mesh.multi_group_faces == 0
    with pytest.raises(KeyError, match="no boundary group 'inlet'"):
        mesh.group_faces("inlet")


def test_exposed_faces_in_no_group_unmatched_and_internal_elements():
    m = block(3, 4, 2)
    sets = dict(m.cell_sets)
    del sets["zmax"]                                     # 12 exposed faces in no group
    quads = m.cells[1].data
    extra = np.array([[0, 1, 2, 3],                      # no such face: unmatched
                      [1, 5, 25, 21]])                   # the x = 1 face of cell 0: internal
    hexes = m.cells[0].data
    assert set(extra[1]) == set(hexes[0][[1, 2, 6, 5]])
    cells = [("hexahedron", hexes), ("quad", np.vstack([quads, extra]))]
    n = len(quads)
    sets = {k: [v[0], v[1]] for k, v in sets.items()}
    sets["baffle"] = [np.zeros(0, int), np.array([n, n + 1])]
    mesh = mesh_from_meshio(meshio.Mesh(m.points, cells, cell_sets=sets))
    exposed_ungrouped = mesh.boundary_faces[mesh.face_group[mesh.boundary_faces] < 0]
    assert len(exposed_ungrouped) == 12
    assert np.allclose(mesh.face_centroids[exposed_ungrouped, 2], 2)
    assert mesh.unmatched_group_elements == {"baffle": 1}
    assert mesh.internal_group_elements == {"baffle": 1}
    assert len(mesh.group_faces("baffle")) == 0


def test_overlapping_groups_first_name_wins():
    m = block(2, 2, 1)
    m.cell_sets["all_x"] = [np.zeros(0, int), np.concatenate(
        [m.cell_sets["xmin"][1], m.cell_sets["xmax"][1]])]
    mesh = mesh_from_meshio(m)
    assert mesh.multi_group_faces == 4
    assert len(mesh.group_faces("all_x")) == 4           # 'all_x' sorts before 'xmax'/'xmin'
    assert len(mesh.group_faces("xmin")) == 0


def test_nonmanifold_face_is_recorded_not_fatal():
    # Three hexahedra on one face: two stacked on the same side overlap.
    pts = np.array([(x, y, z) for z in (0, 1, 2) for y in (0, 1) for x in (0, 1)], float)
    lower = [0, 1, 3, 2, 4, 5, 7, 6]
    upper = [4, 5, 7, 6, 8, 9, 11, 10]
    mesh = mesh_from_meshio(meshio.Mesh(pts, [("hexahedron", np.array([lower, upper, upper]))]))
    assert len(mesh.nonmanifold_faces) == 3
    assert np.all(mesh.neighbour[mesh.nonmanifold_faces] == -1)
    # Lower cell: 5 boundary faces. The two copies of the upper cell pair up on their
    # other 5 faces (internal faces between coincident centroids: 90 degrees).
    assert mesh.n_faces == 5 + 3 + 5
    assert np.all(quality.non_orthogonality_deg(mesh)[mesh.neighbour >= 0] == 90.0)
    for metric in (quality.non_orthogonality_deg, quality.skewness, quality.growth_ratio):
        assert np.all(np.isfinite(metric(mesh)))


def _positive(cell_pts, conn):
    """Swap two nodes of a tetrahedron given in the wrong order."""
    p = cell_pts[conn]
    if np.linalg.det(np.array([p[1] - p[0], p[2] - p[0], p[3] - p[0]])) < 0:
        conn = [conn[0], conn[2], conn[1], conn[3]]
    return conn


def test_hybrid_mesh_shares_triangles_and_quads():
    # Hand-built: hex; pyramid on its top; tet on a pyramid side; wedge on its x = 1 side.
    pts = np.array([(0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (1, 1, 1),
                    (0, 1, 1), (0.5, 0.5, 1.8), (0.5, -0.8, 1.5), (1.8, 0.5, 0), (1.8, 0.5, 1)],
                   float)
    cells = [("hexahedron", np.array([[0, 1, 2, 3, 4, 5, 6, 7]])),
             ("pyramid", np.array([[4, 5, 6, 7, 8]])),
             ("tetra", np.array([_positive(pts, [4, 5, 8, 9])])),
             ("wedge", np.array([[1, 10, 2, 5, 11, 6]]))]
    mesh = mesh_from_meshio(meshio.Mesh(pts, cells))
    assert np.all(mesh.cell_volumes > 0)
    inner = np.flatnonzero(mesh.neighbour >= 0)
    assert len(inner) == 3
    assert mesh.n_faces == 6 + 5 + 4 + 5 - 3
    d = mesh.cell_centroids[mesh.neighbour[inner]] - mesh.cell_centroids[mesh.owner[inner]]
    assert np.all(np.einsum("ij,ij->i", d, mesh.face_area_vectors[inner]) > 0)
    sizes = sorted(len(set(f)) for f in mesh.face_point_table()[inner])
    assert sizes == [3, 4, 4]
    assert len(mesh.clashing_faces) == 0


def test_collapsed_hex_pairs_with_a_real_wedge():
    # A hexahedron with nodes 2 = 3 and 6 = 7 is the unit right prism; its collapsed
    # bottom face (0, 3, 2, 1) -> triangle must pair with the wedge below it.
    pts = np.array([(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (0, 1, 1),
                    (0, 0, -1), (1, 0, -1), (0, 1, -1)], float)
    cells = [("hexahedron", np.array([[0, 1, 2, 2, 3, 4, 5, 5]])),
             ("wedge", np.array([[6, 7, 8, 0, 1, 2]]))]
    mesh = mesh_from_meshio(meshio.Mesh(pts, cells))
    assert np.allclose(mesh.cell_volumes, [0.5, 0.5], rtol=1e-14)
    inner = np.flatnonzero(mesh.neighbour >= 0)
    assert len(inner) == 1 and set(mesh.file_point_ids(mesh.face_point_table()[inner[0]])) == {0, 1, 2}
    assert len(mesh.clashing_faces) == 0
    zero = mesh.face_areas == 0                       # the collapsed side (2, 2, 5, 5)
    assert zero.sum() == 1
    assert quality.non_orthogonality_deg(mesh)[zero][0] == 0.0
    assert quality.scaled_jacobian(mesh)[0] == 0.0    # a zero-length edge counts as 0
    assert quality.edge_ratio(mesh)[0] == quality.DEGENERATE


def test_numbering_does_not_change_topology():
    m = block(3, 3, 3)
    a, b = mesh_from_meshio(m), mesh_from_meshio(shuffled(m, seed=11))
    assert a.n_faces == b.n_faces and len(a.boundary_faces) == len(b.boundary_faces)
    assert {g: len(a.group_faces(g)) for g in a.group_names} == \
        {g: len(b.group_faces(g)) for g in b.group_names}
    n = b.n_internal
    assert np.all(np.diff(b.owner[:n]) >= 0) and np.all(np.diff(b.owner[n:]) >= 0)


def test_2d_edges_owner_neighbour_and_groups():
    nx, ny = 4, 3
    mesh = mesh_from_meshio(structured_quad(np.linspace(0, 4, nx + 1), np.linspace(0, 3, ny + 1)))
    assert np.all(np.diff(mesh.face_offsets) == 2)
    assert mesh.n_faces == nx * (ny + 1) + ny * (nx + 1)
    assert len(mesh.boundary_faces) == 2 * (nx + ny)
    assert len(mesh.clashing_faces) == 0
    pts = np.array([(0, 0), (1, 0), (1, 1), (0, 1), (2, 0), (2, 1)], float)
    flipped = mesh_from_meshio(meshio.Mesh(pts, [("quad", np.array([[0, 1, 2, 3], [1, 2, 5, 4]]))]))
    assert flipped.cell_volumes.tolist() == [1.0, -1.0]     # the second quad runs clockwise
    assert len(flipped.clashing_faces) == 1
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        "xmin": 3, "xmax": 3, "ymin": 4, "ymax": 4}


def test_cell_of_each_half_face_matches_a_table_on_mixed_blocks():
    # Reference: the table of cells repeated once per face template, block by block.
    from caselint.mesh.celltypes import FACES
    from caselint.mesh.pairing import ElementBlock, HalfFaceCells
    from near_wall_meshes import geometric, prism_block

    mesh = mesh_from_meshio(prism_block(geometric(1e-3, 1.2, 3), [0.05]))
    assert len(mesh.data.shapes) == 2
    blocks = [ElementBlock(b.type, b.connectivity, int(b.cells[0])) for b in mesh.data.shapes]
    table = np.concatenate([np.repeat(np.arange(b.start, b.stop), len(FACES[b.type]))
                            for b in blocks])
    cells = HalfFaceCells(blocks)
    every = np.arange(table.size)
    np.testing.assert_array_equal(cells[every], table)
    np.testing.assert_array_equal(cells[every[::-7]], table[::-7])


def test_faces_sharing_a_diagonal_are_told_apart_by_the_other_one():
    # Quadrilateral (0, 1, 2, 3) of cell A and (0, 8, 2, 9) of cell B share the diagonal
    # 0-2, the key the pairing sorts on; the other diagonal (1-3 against 8-9) tells them
    # apart, so neither is paired. Cell C sits on A's top face (4, 5, 6, 7): one real pair.
    rng = np.random.default_rng(5)
    pts = rng.uniform(0.0, 1.0, (18, 3))
    cells = np.array([[0, 1, 2, 3, 4, 5, 6, 7],
                      [0, 8, 2, 9, 10, 11, 12, 13],
                      [4, 5, 6, 7, 14, 15, 16, 17]])
    mesh = mesh_from_meshio(meshio.Mesh(pts, [("hexahedron", cells)]))
    assert mesh.n_faces == 3 * 6 - 1
    inner = np.flatnonzero(mesh.neighbour >= 0)
    assert len(inner) == 1
    assert set(mesh.file_point_ids(mesh.face_point_table()[inner[0]]).tolist()) == {4, 5, 6, 7}
    pair = {int(mesh.file_cell_ids(mesh.owner[inner[0]])),
            int(mesh.file_cell_ids(mesh.neighbour[inner[0]]))}
    assert pair == {0, 2}
    diagonal = [f for f in mesh.file_point_ids(mesh.face_point_table()).tolist() if {0, 2} <= set(f)]
    assert sorted(map(sorted, diagonal)) == [[0, 1, 2, 3], [0, 2, 8, 9]]


def test_cell_face_table_pads_mixed_cells_and_is_the_lists_themselves_on_one_shape():
    """Row c of the table holds cell c's faces in list order, padded with -1 where a cell
    has fewer; on a mesh of one shape the lists are the table (a view, no copy)."""
    hexes = mesh_from_meshio(shuffled(structured_hex(*(np.linspace(0, 1, 3),) * 3), seed=2))
    table = hexes.cell_face_table()
    assert table.shape == (8, 6) and np.shares_memory(table, hexes.cell_faces.faces)
    np.testing.assert_array_equal(table.ravel(), hexes.cell_faces.faces)
    pts = np.array([(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (0, 1, 1),
                    (0, 0, 2)], float)
    mixed = mesh_from_meshio(meshio.Mesh(pts, [("wedge", np.array([[0, 1, 2, 3, 4, 5]])),
                                               ("tetra", np.array([[3, 4, 5, 6]]))]))
    cf, table = mixed.cell_faces, mixed.cell_face_table()
    assert table.shape == (2, 5) and not np.shares_memory(table, cf.faces)
    for c in range(2):
        row = cf.faces[cf.offsets[c]:cf.offsets[c + 1]]
        assert table[c, :len(row)].tolist() == row.tolist()
        assert np.all(table[c, len(row):] == -1)
    assert (table >= 0).sum(axis=1).tolist() == [5, 4]
    assert not table.flags.writeable and not hexes.cell_face_table().flags.writeable
