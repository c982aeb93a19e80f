"""Sizes across faces, the growth (size) ratio and the volume ratio, and the skewness that
uses the sizes, on meshes whose answers are known by hand [computed].

- a graded block: every cell's thickness across an x-face is its x spacing, so the growth
  ratio is the grading ratio on x-faces and 1 on the others (the volume ratio equals it
  too, a block graded in one direction being the one case where the two agree);
- a prism stack under Kuhn tetrahedra (tests/near_wall_meshes.py): the layer heights'
  ratios, and at the top the tetrahedra's root-mean-square edge, computed here from the
  points with numpy over the prism's height;
- a hexahedron beside a right-angled wedge of its width, through the wedge's square side:
  ratio 1 (twice the centroid's distance would read the wedge at two thirds of its width);
- 2-D: a graded quadrilateral strip, and two triangles;
- the 2:1 refinement is in tests/test_mesh_polyhedra.py (ratio exactly 2, volume 8).
"""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest

from caselint.mesh import mesh_from_meshio, quality
from caselint.mesh.blocks import graded, structured_hex, structured_quad
from caselint.mesh.celltypes import EDGES
from caselint.mesh.size_ratio import rms_edge_lengths, sizes_across_faces
from near_wall_meshes import geometric, prism_block, with_sides


def _normal_axis(mesh, faces) -> np.ndarray:
    """The coordinate axis each (axis-aligned) face is normal to."""
    return np.argmax(np.abs(mesh.face_area_vectors[faces]), axis=1)


@pytest.mark.parametrize("ratio", [1.15, 1.6, 4.0])
def test_graded_block_growth_is_the_grading_ratio_on_x_faces_and_1_elsewhere(ratio):
    mesh = mesh_from_meshio(structured_hex(graded(0.0, 1.0, 6, ratio), np.linspace(0, 0.2, 3),
                                           np.linspace(0, 0.3, 3)))
    n = mesh.n_internal
    growth, volume = quality.growth_ratio(mesh)[:n], quality.volume_ratio(mesh)[:n]
    across_x = _normal_axis(mesh, np.arange(n)) == 0
    np.testing.assert_allclose(growth[across_x], ratio, rtol=1e-12)
    np.testing.assert_allclose(growth[~across_x], 1.0, rtol=1e-12)
    np.testing.assert_allclose(volume, growth, rtol=1e-12)      # graded in one direction only
    assert np.all(quality.growth_ratio(mesh)[n:] == 1.0)          # boundary faces


def test_prism_layers_read_their_growth_and_the_tetrahedra_their_edges():
    heights = geometric(0.002, 1.25, 4)
    core = [0.02, 0.03]
    m = prism_block(heights, core, nx=3, ny=3, dx=0.05)
    mesh = mesh_from_meshio(m)
    n = mesh.n_internal
    own, nbr = sizes_across_faces(mesh)
    z = mesh.face_centroids[:n, 2]
    flat = _normal_axis(mesh, np.arange(n)) == 2
    tops = np.cumsum(heights)
    for k in range(3):                                  # between layers k and k + 1
        at = flat & np.isclose(z, tops[k])
        assert at.sum() == 2 * 9
        np.testing.assert_allclose(np.sort(np.c_[own[at], nbr[at]], axis=1),
                                   [[heights[k], heights[k + 1]]] * at.sum(), rtol=1e-12)
    np.testing.assert_allclose(quality.growth_ratio(mesh)[:n][flat & (z < tops[-2] * 1.0001)],
                               1.25, rtol=1e-12)
    # the layer top: the last prism (its height) against the tetrahedron above it, whose
    # root-mean-square edge is computed here from its four points
    top = np.flatnonzero(flat & np.isclose(z, tops[-1]))
    tets = m.cells_dict["tetra"]
    rms = np.sqrt(np.mean([np.sum((m.points[tets[:, b]] - m.points[tets[:, a]]) ** 2, axis=1)
                           for a, b in EDGES["tetra"]], axis=0))
    sizes = rms_edge_lengths(mesh)
    assert np.allclose(np.sort(sizes[np.isfinite(sizes)]), np.sort(rms), rtol=1e-13)
    # every top face joins a prism and a tetrahedron
    assert np.all(mesh.cell_shape[mesh.owner[top]] != mesh.cell_shape[mesh.neighbour[top]])
    wedge_side = np.where(np.isnan(sizes[mesh.owner[top]]), own[top], nbr[top])
    tet_side = np.where(np.isnan(sizes[mesh.owner[top]]), nbr[top], own[top])
    np.testing.assert_allclose(wedge_side, heights[-1], rtol=1e-12)
    assert set(np.round(tet_side, 12)) <= set(np.round(rms, 12))


def test_a_hexahedron_beside_a_wedge_of_its_width_is_no_size_change():
    # two unit cubes along x; the second split into two right-angled wedges by the diagonal
    # of its bottom face, the one touching x = 1 through its square side (0,2,3 of the cube)
    m = structured_hex([0.0, 1.0, 2.0], [0.0, 1.0], [0.0, 1.0])
    hexes = m.cells_dict["hexahedron"]
    h = hexes[1]                       # corners 0..3 at z = 0, 4..7 at z = 1 (meshio order)
    wedges = np.array([h[[0, 1, 2, 4, 5, 6]], h[[0, 2, 3, 4, 6, 7]]])
    mesh = mesh_from_meshio(with_sides(m.points, [("hexahedron", hexes[:1]),
                                                  ("wedge", wedges)]))
    n = mesh.n_internal
    x = mesh.face_centroids[:n, 0]
    interface = np.flatnonzero(np.isclose(x, 1.0))
    assert interface.size == 1
    own, nbr = sizes_across_faces(mesh)
    assert (own[interface[0]], nbr[interface[0]]) == (pytest.approx(1.0), pytest.approx(1.0))
    assert quality.growth_ratio(mesh)[interface[0]] == pytest.approx(1.0, rel=1e-12)
    # twice the wedge centroid's distance from that face would be 2/3: a false 1.5
    wedge = mesh.neighbour[interface[0]] if mesh.cell_shape[mesh.owner[interface[0]]] == 1 \
        else mesh.owner[interface[0]]
    assert 2 * (mesh.cell_centroids[wedge, 0] - 1.0) == pytest.approx(2.0 / 3.0)


def test_2d_quadrilaterals_and_triangles():
    quads = mesh_from_meshio(structured_quad(graded(0.0, 1.0, 5, 1.5), [0.0, 0.1]))
    n = quads.n_internal
    np.testing.assert_allclose(quality.growth_ratio(quads)[:n], 1.5, rtol=1e-12)
    # two triangles sharing the edge (0,0)-(1,0): edges 1, 1, sqrt(2) and 1, 2, sqrt(5)
    points = np.array([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [1.0, -2.0, 0.0]])
    tris = mesh_from_meshio(meshio.Mesh(points, [("triangle", np.array([[0, 1, 2], [0, 3, 1]]))]))
    small, big = math.sqrt((1 + 1 + 2) / 3), math.sqrt((1 + 4 + 5) / 3)
    assert quality.growth_ratio(tris)[: tris.n_internal] == pytest.approx([big / small])


def test_skewness_is_over_the_larger_of_the_centre_distance_and_the_cells_size():
    # two tetrahedra on the triangle (0,0,0), (1,0,0), (0,1,0); apexes above and below, the
    # lower one shifted: centroids (vertex means), the crossing of their line with z = 0 and
    # the face centroid computed here by hand
    points = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0.3, 0.3, 0.8], [0.6, 0.1, -0.5]],
                      dtype=float)
    mesh = mesh_from_meshio(meshio.Mesh(points, [("tetra", np.array([[0, 1, 2, 3],
                                                                     [0, 2, 1, 4]]))]))
    cp, cn = points[[0, 1, 2, 3]].mean(axis=0), points[[0, 1, 2, 4]].mean(axis=0)
    face = points[:3].mean(axis=0)
    t = cp[2] / (cp[2] - cn[2])
    crossing = cp + t * (cn - cp)
    offset, d = np.linalg.norm(crossing - face), np.linalg.norm(cn - cp)
    rms = [math.sqrt(np.mean([np.sum((points[b] - points[a]) ** 2) for a, b in
                              ((i, j) for i in tet for j in tet if i < j)])) for tet in
           ((0, 1, 2, 3), (0, 1, 2, 4))]
    spacing = 0.5 * sum(rms)
    assert spacing > d                                  # tetrahedra: the size is the larger
    (value,) = quality.skewness(mesh)[: mesh.n_internal]
    assert value == pytest.approx(offset / spacing, rel=1e-12)
    assert offset / d / value == pytest.approx(spacing / d)   # the textbook value: 3.2 x
    assert spacing / d == pytest.approx(3.17, abs=0.01)


def test_a_mesh_with_no_isotropic_cells_keeps_no_array_of_their_sizes():
    """Hexahedra only: every cell's size is its thickness across the face, so the
    root-mean-square edges are NaN everywhere, one NaN seen through every index (8 bytes,
    not 8 a cell); the growth ratio is the grading ratio all the same."""
    mesh = mesh_from_meshio(structured_hex([0.0, 1.0, 2.2], [0.0, 1.0], [0.0, 1.0]))
    sizes = rms_edge_lengths(mesh)
    assert sizes.shape == (2,) and np.all(np.isnan(sizes)) and sizes.strides == (0,)
    assert not sizes.flags.writeable
    inner = quality.growth_ratio(mesh)[: mesh.n_internal]
    np.testing.assert_allclose(inner, [1.2], rtol=1e-12)
