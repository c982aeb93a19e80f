"""Wall layer stacks on meshes whose layers are known by construction.

Every expected value below follows from the construction of the mesh [computed]: layer
heights are laid out exactly (tests/near_wall_meshes.py), the centroid of a right prism
sits at half its height, that of a tetrahedron at a quarter of its apex height, and that
of a trapezoid at h (a + 2b) / (3 (a + b)) from its side a (standard plane geometry).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import shuffled, structured_hex, structured_quad, tetrahedralise
from caselint.mesh.wall_layers import (
    END_BOUNDARY, END_CORE, END_MIDDLE, END_SHRINK, END_TURN, NO_STACK, wall_layers,
)
from near_wall_meshes import geometric, layer_block, prism_block, stack

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")


def _stacks(meshio_mesh, group="zmin", **kw):
    mesh = mesh_from_meshio(meshio_mesh)
    return mesh, wall_layers(mesh, mesh.group_faces(group), **kw)


def test_graded_hex_stack_heights_distances_and_growth():
    heights = geometric(1e-3, 1.2, 12)          # all thinner than the 0.05 m cells are wide
    mesh, layers = _stacks(layer_block(heights))
    n = 4 * 3
    assert len(layers.faces) == n
    np.testing.assert_array_equal(layers.n_layers, 12)
    np.testing.assert_array_equal(layers.n_walked, 12)
    np.testing.assert_array_equal(layers.end, END_BOUNDARY)   # the top of the block
    np.testing.assert_allclose(layers.heights, np.tile(heights, (n, 1)), rtol=1e-12)
    np.testing.assert_allclose(layers.first_height, 1e-3, rtol=1e-12)
    np.testing.assert_allclose(layers.centre_distance, 0.5e-3, rtol=1e-12)
    np.testing.assert_allclose(layers.thickness, heights.sum(), rtol=1e-12)
    np.testing.assert_allclose(layers.max_growth, 1.2, rtol=1e-12)
    assert np.all((layers.growth_layer >= 2) & (layers.growth_layer <= 12))
    np.testing.assert_array_equal(layers.core_cell, -1)
    np.testing.assert_allclose(layers.normals, [[0, 0, 1]] * n, atol=1e-15)
    assert layers.layered_first.all()


def test_stack_ends_at_the_first_cell_as_tall_as_it_is_wide():
    # 0.01 m wide cells, heights 1 mm x 1.3^k: 1e-3 * 1.3^9 = 0.0106 m is the first one
    # not thinner than its width, so nine layers; the walk goes on to the top
    heights = geometric(1e-3, 1.3, 14)
    mesh, layers = _stacks(layer_block(heights, nx=2, ny=2, dx=0.01))
    np.testing.assert_array_equal(layers.n_layers, 9)
    np.testing.assert_array_equal(layers.n_walked, 14)
    np.testing.assert_array_equal(layers.end, END_CORE)
    np.testing.assert_allclose(layers.core_jump, 1.3, rtol=1e-12)
    np.testing.assert_allclose(layers.thickness, heights[:9].sum(), rtol=1e-12)
    # cells wholly within a distance: the tops are the cumulative heights
    tops = np.cumsum(heights)
    assert np.all(layers.cells_within(tops[5] * (1 + 1e-9)) == 6)
    assert np.all(layers.cells_within(tops[5] * (1 - 1e-9)) == 5)
    assert np.all(layers.cells_within(1.0) == 14)


def test_wedge_layers_under_a_tetrahedral_core():
    heights = geometric(2e-4, 1.25, 6)
    mesh, layers = _stacks(prism_block(heights, [0.05, 0.05]))
    assert mesh.cell_counts == {"wedge": 6 * 9 * 2, "tetra": 2 * 9 * 6}
    n = 9 * 2                                   # two triangles per wall quad
    assert len(layers.faces) == n
    np.testing.assert_array_equal(layers.n_layers, 6)
    np.testing.assert_array_equal(layers.n_walked, 6)
    np.testing.assert_array_equal(layers.end, END_CORE)
    np.testing.assert_allclose(layers.heights, np.tile(heights, (n, 1)), rtol=1e-10)
    np.testing.assert_allclose(layers.centre_distance, 1e-4, rtol=1e-10)  # right prism
    np.testing.assert_allclose(layers.max_growth, 1.25, rtol=1e-10)
    # each core tetrahedron spans the whole 0.05 m hexahedron it was cut from
    np.testing.assert_allclose(layers.core_jump, 0.05 / heights[-1], rtol=1e-10)
    assert set(mesh.cell_shape[layers.core_cell].tolist()) == {0}      # tetra


def test_tetrahedral_wall_has_no_stack():
    mesh = mesh_from_meshio(tetrahedralise(structured_hex(*(np.linspace(0, 0.2, 3),) * 2,
                                                          [0.0, 0.04, 0.1])))
    layers = wall_layers(mesh, mesh.group_faces("zmin"))
    np.testing.assert_array_equal(layers.n_layers, 0)
    np.testing.assert_array_equal(layers.end, NO_STACK)
    assert not layers.layered_first.any()
    # Kuhn tetrahedra on the wall have their apex on the top of the 0.04 m hexahedron
    np.testing.assert_allclose(layers.first_height, 0.04, rtol=1e-12)
    np.testing.assert_allclose(layers.centre_distance, 0.01, rtol=1e-12)
    assert np.all(layers.max_growth == 0) and np.all(layers.thickness == 0)


def test_layers_stop_where_the_direction_turns():
    m = layer_block(geometric(1e-3, 1.1, 8), nx=3, ny=2, dx=0.05)
    z4 = stack(geometric(1e-3, 1.1, 8))[4]
    tilt = m.points[:, 2] >= z4 - 1e-12
    m.points[tilt, 2] += math.tan(math.radians(60)) * m.points[tilt, 0]   # tops tilt 60 deg
    mesh, layers = _stacks(m)
    np.testing.assert_array_equal(layers.end, END_TURN)
    np.testing.assert_array_equal(layers.n_layers, 3)
    np.testing.assert_array_equal(layers.n_walked, 3)


def test_curved_wall_layers_follow_the_local_normal():
    # quarter annulus, wall on the inner radius R = 1 m; 8 sectors of 11.25 deg
    radii = 1.0 + stack(geometric(1e-3, 1.2, 5))
    m = structured_hex(radii, np.linspace(0, math.pi / 2, 9), [0.0, 0.02])
    r, t = m.points[:, 0].copy(), m.points[:, 1].copy()
    m.points[:, 0], m.points[:, 1] = r * np.cos(t), r * np.sin(t)
    mesh, layers = _stacks(m, group="xmin")
    half = math.pi / 32
    dr = np.diff(radii)
    np.testing.assert_allclose(layers.heights, np.tile(dr * math.cos(half), (8, 1)), rtol=1e-10)
    r1, r2 = radii[0], radii[1]
    h = dr[0] * math.cos(half)
    np.testing.assert_allclose(layers.centre_distance, h * (r1 + 2 * r2) / (3 * (r1 + r2)),
                               rtol=1e-9)
    np.testing.assert_array_equal(layers.n_layers, 5)


def test_two_dimensional_quadrilateral_layers():
    heights = geometric(5e-4, 1.15, 6)
    mesh = mesh_from_meshio(structured_quad(np.linspace(0, 0.3, 7), stack(heights)))
    layers = wall_layers(mesh, mesh.group_faces("ymin"))
    np.testing.assert_array_equal(layers.n_layers, 6)
    np.testing.assert_allclose(layers.heights, np.tile(heights, (6, 1)), rtol=1e-12)
    np.testing.assert_allclose(layers.centre_distance, 2.5e-4, rtol=1e-12)


def test_stacks_do_not_depend_on_numbering():
    heights = geometric(1e-3, 1.3, 10)
    m = prism_block(heights[:4], [0.02, 0.03])
    plain, a = _stacks(m)
    mixed, b = _stacks(shuffled(m, seed=3))
    # match the faces by centroid
    ka = np.lexsort(plain.face_centroids[a.faces].T[::-1])
    kb = np.lexsort(mixed.face_centroids[b.faces].T[::-1])
    for name in ("n_layers", "first_height", "centre_distance", "thickness", "max_growth",
                 "core_jump", "end"):
        np.testing.assert_allclose(getattr(a, name)[ka], getattr(b, name)[kb], rtol=1e-12,
                                   err_msg=name)


def test_cell_faces_hold_each_templates_vertices():
    from caselint.mesh.celltypes import FACES

    m = prism_block(geometric(1e-3, 1.2, 2), [0.02])
    mesh = mesh_from_meshio(shuffled(m, seed=5))
    table = mesh.cell_face_table()
    for block in mesh.data.shapes:
        faces = table[block.cells]
        assert np.all((faces >= 0).sum(axis=1) == len(FACES[block.type]))
        for k, cell in enumerate(block.cells[:50]):
            got = {frozenset(mesh.face_point_table([f])[0].tolist()) for f in faces[k] if f >= 0}
            want = {frozenset(block.connectivity[k, list(t)].tolist()) for t in FACES[block.type]}
            assert got == want


def test_cached_per_face_set_and_refuses_internal_faces():
    mesh = mesh_from_meshio(layer_block(geometric(1e-3, 1.2, 4)))
    faces = mesh.group_faces("zmin")
    first = wall_layers(mesh, faces)
    assert wall_layers(mesh, faces[::-1]) is first          # same set, same object
    assert wall_layers(mesh, faces[:3]) is not first
    with pytest.raises(ValueError, match="boundary faces"):
        wall_layers(mesh, np.flatnonzero(mesh.neighbour >= 0)[:2])
    sub = first.subset(first.rows_of(faces[:2]))
    assert len(sub.faces) == 2 and sub.heights.shape == (2, 4)


def test_walk_past_the_stack_stops_at_its_reach():
    # Same block as above: nine layers, then core cells 1e-3 * 1.3^k thick up to k = 13.
    heights = geometric(1e-3, 1.3, 14)
    mesh = mesh_from_meshio(layer_block(heights, nx=2, ny=2, dx=0.01))
    wall = mesh.group_faces("zmin")
    tops = np.cumsum(heights)
    # shortest first: a walk that reached further would serve the shorter requests
    short = wall_layers(mesh, wall, reach_m=0.0)        # the stack and the core cell only
    mid = wall_layers(mesh, wall, reach_m=float(tops[11]) * (1 - 1e-9))
    full = wall_layers(mesh, wall)                     # no reach given: walks to the top
    np.testing.assert_array_equal(full.n_walked, 14)
    np.testing.assert_array_equal(short.n_walked, 10)
    np.testing.assert_array_equal(mid.n_walked, 12)    # the walk stops once a cell reaches it
    for walk in (short, mid):                           # the stack itself is the same
        for name in ("n_layers", "first_height", "thickness", "max_growth", "end", "core_jump"):
            np.testing.assert_array_equal(getattr(walk, name), getattr(full, name))
    np.testing.assert_array_equal(mid.cells_within(tops[10] * (1 + 1e-9)), 11)
    np.testing.assert_array_equal(mid.cells_within(mid.reach), full.cells_within(mid.reach))
    with pytest.raises(ValueError, match="reached"):
        mid.cells_within(tops[12])


def test_a_walk_that_reached_further_serves_a_shorter_request():
    heights = geometric(1e-3, 1.3, 14)
    mesh = mesh_from_meshio(layer_block(heights, nx=2, ny=2, dx=0.01))
    wall = mesh.group_faces("zmin")
    far = wall_layers(mesh, wall, reach_m=0.05)
    assert wall_layers(mesh, wall, reach_m=0.0) is far
    assert wall_layers(mesh, wall, reach_m=0.05) is far
    further = wall_layers(mesh, wall, reach_m=0.06)
    assert further is not far and further.reach == 0.06
    with pytest.raises(ValueError, match="reach_m"):
        wall_layers(mesh, wall, reach_m=-1.0)


# -- where a stack ends: shrinking layers, a block of one height, the middle of a passage ----


def test_a_stack_ends_where_the_layers_shrink():
    # three layers growing by 1.2, then cells thinner than 0.9 of the last layer
    heights = [1e-3, 1.2e-3, 1.44e-3, 1.2e-3, 1.0e-3]
    mesh, layers = _stacks(layer_block(heights, nx=2, ny=2, dx=0.05))
    np.testing.assert_array_equal(layers.end, END_SHRINK)
    np.testing.assert_array_equal(layers.n_layers, 3)
    np.testing.assert_allclose(layers.thickness, sum(heights[:3]), rtol=1e-12)
    np.testing.assert_array_equal(layers.core_cell, -1)         # no transition to judge
    # 1.35 / 1.44 = 0.9375 is within the default 10 %: the stack goes on
    _, kept = _stacks(layer_block(heights[:3] + [1.35e-3], nx=2, ny=2, dx=0.05))
    np.testing.assert_array_equal(kept.n_layers, 4)


def test_a_jump_into_a_block_of_one_height_ends_the_stack_before_the_jump():
    # layers growing by 1.2, then three cells 2.5 times the last layer: the block of a
    # multi-block grid, whose first cell is the core cell of the transition
    layers_h = list(geometric(1e-3, 1.2, 5))
    block = [2.5 * layers_h[-1]] * 3
    mesh, layers = _stacks(layer_block(layers_h + block, nx=2, ny=2, dx=0.05))
    np.testing.assert_array_equal(layers.end, END_CORE)
    np.testing.assert_array_equal(layers.n_layers, 5)
    np.testing.assert_allclose(layers.max_growth, 1.2, rtol=1e-12)
    np.testing.assert_allclose(layers.core_jump, 2.5, rtol=1e-12)
    rows = np.arange(len(layers.faces))
    assert set(mesh.cell_shape[layers.core_cell].tolist()) == {mesh.cell_shape[0]}  # hexahedra
    np.testing.assert_allclose(layers.heights[rows, 5], block[0], rtol=1e-12)
    # the same jump followed by layers that keep growing is a stack with a bad step
    grown = layers_h + list(geometric(block[0], 1.2, 3))
    _, bad = _stacks(layer_block(grown, nx=2, ny=2, dx=0.05))
    np.testing.assert_array_equal(bad.n_layers, 8)
    np.testing.assert_allclose(bad.max_growth, 2.5, rtol=1e-12)
    # one cell after the jump is not yet a block: it stays in the stack
    _, single = _stacks(layer_block(layers_h + block[:1], nx=2, ny=2, dx=0.05))
    np.testing.assert_array_equal(single.n_layers, 6)


@pytest.mark.parametrize("n_cells, kept", [(10, 5), (11, 6)])
def test_a_stack_across_to_a_facing_wall_is_cut_at_the_middle(n_cells, kept):
    # equal thin cells from wall to wall (both walls walked): no stack reaches past the
    # middle; with an odd count the middle cell belongs to both walls' stacks
    m = structured_hex(np.linspace(0, 0.4, 3), np.linspace(0, 0.4, 3),
                       np.linspace(0, 0.1, n_cells + 1))
    mesh = mesh_from_meshio(m)
    faces = np.concatenate([mesh.group_faces("zmin"), mesh.group_faces("zmax")])
    layers = wall_layers(mesh, faces)
    np.testing.assert_array_equal(layers.end, END_MIDDLE)
    np.testing.assert_array_equal(layers.n_layers, kept)
    np.testing.assert_allclose(layers.passage, 0.1, rtol=1e-12)
    np.testing.assert_allclose(layers.thickness, kept * 0.1 / n_cells, rtol=1e-12)
    # walked from one wall only, the other is just another boundary: the whole channel
    one = wall_layers(mesh, mesh.group_faces("zmin"))
    np.testing.assert_array_equal(one.end, END_BOUNDARY)
    np.testing.assert_array_equal(one.n_layers, n_cells)
    assert np.all(np.isinf(one.passage))


def test_pipe_o_grid_stacks_are_the_radial_block(tmp_path):
    """A gmsh pipe O-grid (tests/wall_meshes.py): 15 radial cells growing by 1 / 0.85
    towards a square core. Every wall stack is the radial block, and no stack reaches the
    axis. With a core of finer cells the layers shrink into it; with a coarser one the core
    is a block of one height entered with a jump: the transition, not layer growth."""
    from caselint.mesh import read_mesh
    from wall_meshes import pipe_o_grid

    radius = 0.05
    fine = read_mesh(pipe_o_grid(tmp_path / "fine-core.msh", radius=radius))
    layers = wall_layers(fine, fine.group_faces("wall"))
    np.testing.assert_array_equal(layers.n_layers, 15)
    np.testing.assert_array_equal(layers.end, END_SHRINK)
    assert layers.thickness.max() < (1 - 0.45 / math.sqrt(2)) * radius   # not past the core
    # transfinite spacing along each radial line: ratio 1 / 0.85 between successive cells,
    # measured between face centroids of a polygonal column (within 0.5 %)
    np.testing.assert_allclose(layers.max_growth, 1 / 0.85, rtol=5e-3)

    # a coarse core (2.65 mm cells) after a uniform radial block of 1.5 mm cells
    coarse = read_mesh(pipe_o_grid(tmp_path / "coarse-core.msh", radius=radius,
                                   n_radial=20, progression=1.0))
    layers = wall_layers(coarse, coarse.group_faces("wall"))
    np.testing.assert_array_equal(layers.n_layers, 20)
    np.testing.assert_array_equal(layers.end, END_CORE)
    assert layers.max_growth.max() < 1.01                     # the radial block is uniform
    side = 2 * 0.45 * radius / math.sqrt(2) / 12               # core cell, 2.65 mm
    last = layers.heights[np.arange(len(layers.faces)), 19]
    # the columns nearest the middles of the core's sides (3.75 deg off), 4 faces along z
    central = np.abs(layers.normals[:, :2]).max(axis=1) > 0.99
    assert np.count_nonzero(central) == 4 * 2 * 4
    np.testing.assert_allclose(layers.core_jump[central], side / last[central], rtol=1e-6)
