"""Gap rays and wall-layer stacks walked partition by partition, handed from one partition
to the next with their state, equal to the bit the whole-mesh walks (caselint.partition.rays,
caselint.partition.stacks).

The reference is the whole-mesh march and walk of the same code (caselint.mesh.rays,
caselint.mesh.wall_layers); what is tested is that a walk stopped where it enters another
partition's cell and resumed there goes on exactly as the walk that never stopped. Meshes
not designed for these tests: a 10 mm slot between fins in gmsh tetrahedra (rays cross the
slot and the channel), gmsh pipe O-grids of hexahedra whose stacks shrink into a fine core
or end before a coarse core block, a gmsh prism-layer plate; and, built here, a 2:1 octree
of polyhedra with its inner points jittered (non-convex cells, where rays get lost) and a
channel of layer-shaped hexahedra walked from both walls (stacks cut at the middle).
Partitions: ranges of cell ids (compact blocks of space), and cells dealt at random, so
that nearly every step of a walk crosses into another partition.
"""

from __future__ import annotations

import dataclasses
import math
import pickle

import numpy as np
import pytest

import calibration
from caselint.mesh import mesh_from_meshio, rays, wall_layers
from caselint.mesh.analysis import Mesh
from caselint.mesh.blocks import graded, structured_hex
from caselint.mesh.reader import read_mesh
from caselint.mesh.refined import refined_block
from caselint.partition import exchange, plan
from caselint.partition import rays as part_rays
from caselint.partition import stacks as part_stacks
from near_wall_meshes import geometric, stack
from partition_checks import assert_same_fields
from wall_meshes import pipe_o_grid

# every test here runs with the numpy kernels and with the compiled ones
pytestmark = pytest.mark.usefixtures("kernel_mode")


@pytest.fixture(scope="module")
def slot(tmp_path_factory):
    sample = calibration.narrow_gap(tmp_path_factory.mktemp("slot"))
    return read_mesh(sample.case.with_suffix(".msh")).data


@pytest.fixture(scope="module")
def pipes(tmp_path_factory):
    folder = tmp_path_factory.mktemp("pipes")
    fine = read_mesh(pipe_o_grid(folder / "fine-core.msh", n_axial=3)).data
    coarse = read_mesh(pipe_o_grid(folder / "coarse-core.msh", n_radial=20, progression=1.0,
                                   n_axial=3)).data
    return fine, coarse


@pytest.fixture(scope="module")
def prism_plate(tmp_path_factory):
    sample = calibration.prism_tet(tmp_path_factory.mktemp("prism"))
    return read_mesh(sample.case.with_suffix(".msh")).data


@pytest.fixture(scope="module")
def jittered_octree():
    axis = np.linspace(0.0, 1.0, 9)
    data = refined_block(axis, graded(0, 1, 8, 1.15), np.linspace(0, 0.6, 7),
                         ((0.3, 0.8), (0.2, 0.7), (0.1, 0.5)))
    lo, hi = data.points.min(axis=0), data.points.max(axis=0)
    inner = np.all((data.points > lo + 1e-9) & (data.points < hi - 1e-9), axis=1)
    jitter = np.random.default_rng(5).uniform(-0.004, 0.004, data.points.shape)
    return dataclasses.replace(data, points=data.points + np.where(inner[:, None], jitter, 0))


def _dealt(n_cells: int, n_parts: int, seed: int = 3) -> plan.Plan:
    return plan.by_labels(np.random.default_rng(seed).integers(0, n_parts, n_cells))


def _splits(data) -> list[plan.Plan]:
    return [plan.by_ranges(data.n_cells, 5), _dealt(data.n_cells, 4)]


def _group(data, name: str) -> np.ndarray:
    faces = np.flatnonzero(data.face_group == data.group_names.index(name))
    return faces[data.neighbour[faces] < 0]


# -- gap rays ------------------------------------------------------------------------------


def test_gap_rays_across_partitions(slot):
    mesh = Mesh(slot)
    start = mesh.boundary_faces
    wall = np.zeros(slot.n_faces, dtype=bool)
    wall[_group(slot, "walls")] = True
    ref = rays.march(mesh, start, wall)
    assert {rays.WALL, rays.OPEN} <= set(ref.status.tolist())
    # from no distance to past the far side: counts that end inside cells and on the boundary
    limits = np.concatenate([[0.0, np.inf], np.linspace(0.002, 0.25, start.size - 2)])
    within = rays.cells_within(mesh, start, limits)
    for split in _splits(slot):
        got, rounds = part_rays.march(slot, split, start, wall)
        assert_same_fields(got, ref)
        assert rounds > 2                            # rays handed over again and again
        counted, rounds = part_rays.cells_within(slot, split, start, limits)
        assert_same_fields(counted, within)
        assert rounds > 2


def test_lost_rays_and_rays_at_the_step_limit(jittered_octree, slot):
    octree = Mesh(jittered_octree)
    start = octree.boundary_faces
    wall = np.zeros(octree.n_faces, dtype=bool)
    wall[start[::2]] = True
    ref = rays.march(octree, start, wall)
    lost = ref.status == rays.LOST
    assert lost.any() and np.all(ref.cells[lost] > 1)   # lost on the way, not at the start
    within = rays.cells_within(octree, start, 0.3)
    for split in _splits(jittered_octree):
        assert_same_fields(part_rays.march(jittered_octree, split, start, wall)[0], ref)
        assert_same_fields(part_rays.cells_within(jittered_octree, split, start, 0.3)[0], within)

    mesh = Mesh(slot)
    start = mesh.boundary_faces
    wall = np.zeros(slot.n_faces, dtype=bool)
    limited = rays.march(mesh, start, wall, max_steps=3)
    at_limit = (limited.status == rays.LOST) & (limited.cells == 3)
    assert at_limit.sum() > start.size // 2
    within = rays.cells_within(mesh, start, 0.5, max_steps=3)
    split = _dealt(slot.n_cells, 3)
    got, rounds = part_rays.march(slot, split, start, wall, max_steps=3)
    assert_same_fields(got, limited)
    assert rounds == 4                               # at random, nearly every step moves
    assert_same_fields(part_rays.cells_within(slot, split, start, 0.5, max_steps=3)[0], within)


# -- wall-layer stacks ---------------------------------------------------------------------


def _check_stacks(data, faces, split, **settings):
    ref = wall_layers.wall_layers(Mesh(data), faces, **settings)
    got, rounds = part_stacks.wall_layers(data, split, faces, **settings)
    assert_same_fields(got, ref)
    return ref, rounds


def test_pipe_stacks_across_partitions(pipes):
    """The fine core: stacks of 15 layers that shrink into the core; the coarse core: 20
    layers before a block of one height, cut before its jump, whose first cell (the core
    cell, whose height the core jump needs) often belongs to another partition than the
    wall cell."""
    fine, coarse = pipes
    for data, ends in ((fine, {wall_layers.END_SHRINK}), (coarse, {wall_layers.END_CORE})):
        faces = _group(data, "wall")
        labels = None
        for split in _splits(data):
            for reach in (0.0, math.inf):
                ref, rounds = _check_stacks(data, faces, split, reach_m=reach)
                assert set(ref.end.tolist()) == ends and rounds > 2
            labels = split.labels()
        if ends == {wall_layers.END_CORE}:
            elsewhere = labels[ref.core_cell] != labels[ref.cells]
            assert elsewhere.mean() > 0.5
            # the core cells' heights asked of their partitions, answered in any order
            got, _ = part_stacks.wall_layers(data, split, faces, run=_through_pickles)
            assert_same_fields(got, ref)
        # a walk limit inside the stack
        ref, _ = _check_stacks(data, faces, _dealt(data.n_cells, 3), max_cells=6)
        assert set(ref.end.tolist()) == {wall_layers.END_LIMIT}


def test_prism_plate_and_octree_stacks(prism_plate, jittered_octree):
    faces = _group(prism_plate, "floor")
    for split in _splits(prism_plate):
        ref, rounds = _check_stacks(prism_plate, faces, split, reach_m=0.05)
        assert ref.n_layers.max() >= 5 and rounds > 2
    # every boundary face of the octree: hanging faces, turns at edges, thick cells
    faces = Mesh(jittered_octree).boundary_faces
    for split in _splits(jittered_octree):
        ref, _ = _check_stacks(jittered_octree, faces, split)
        assert len(set(ref.end.tolist())) >= 3


def test_stacks_across_a_channel_are_cut_at_the_middle():
    """Layers growing by 1.05 from both walls of a channel, meeting in the middle: each
    stack reaches the facing wall (the layers beyond the middle shrink by less than a
    tenth), is cut at the middle and names the passage; and a stack that grows by 1.2,
    jumps into a block of one height and shrinks beyond it."""
    half = list(geometric(1e-3, 1.05, 9))
    channel = structured_hex(np.linspace(0, 0.06, 4), np.linspace(0, 0.04, 3),
                             stack(half + half[::-1]))
    data = mesh_from_meshio(channel).data
    faces = np.concatenate([_group(data, "zmin"), _group(data, "zmax")])
    for split in _splits(data) + [plan.by_ranges(data.n_cells, data.n_cells)]:
        ref, rounds = _check_stacks(data, faces, split)
        np.testing.assert_array_equal(ref.end, wall_layers.END_MIDDLE)
        assert rounds > 2
    half = list(geometric(1e-3, 1.2, 5))
    block = structured_hex(np.linspace(0, 0.06, 4), np.linspace(0, 0.04, 3),
                           stack(half + [3 * half[4]] * 3 + half[:4][::-1]))
    data = mesh_from_meshio(block).data
    ref, _ = _check_stacks(data, _group(data, "zmin"), _dealt(data.n_cells, 4))
    np.testing.assert_array_equal(ref.end, wall_layers.END_CORE)
    np.testing.assert_array_equal(ref.n_layers, 5)


def test_cells_of_the_stacks_marked_across_partitions(pipes, prism_plate):
    """The cells of the stacks (what the layer rules leave to themselves): the pipes' 15 and
    20 layers, walked from cell to cell through partitions, and the plate's prism layers."""
    from caselint.rulekit.stacks import layer_cells

    for data, wall in ((pipes[0], "wall"), (pipes[1], "wall"), (prism_plate, "floor")):
        mesh = Mesh(data)
        ref = wall_layers.wall_layers(mesh, _group(data, wall))
        marked = layer_cells(mesh, ref.faces, ref.cells, ref.n_layers)
        assert marked.sum() >= ref.n_layers.sum() // 2 and ref.n_layers.max() >= 5
        ranges, dealt = _splits(data)
        for split, least in ((ranges, 2), (dealt, ref.n_layers.max())):
            got, rounds = part_stacks.layer_cells(data, split, ref.faces, ref.cells,
                                                  ref.n_layers)
            # dealt at random, nearly every layer is a round of its own
            assert np.array_equal(got, marked) and rounds >= least


# -- how the rounds run --------------------------------------------------------------------


def _through_pickles(function, items):
    """Each task and its result through pickle, as to the processes of a cluster (nothing
    may rely on memory shared with the client), the results last task first, as a runner
    may yield them in any order."""
    done = [pickle.loads(pickle.dumps(function(pickle.loads(pickle.dumps(item)))))
            for item in items]
    yield from reversed(done)


def test_tasks_travel_through_pickles_and_walkers_serve_several_walks(slot):
    mesh = Mesh(slot)
    start = mesh.boundary_faces
    wall = np.zeros(slot.n_faces, dtype=bool)
    wall[_group(slot, "walls")] = True
    split = plan.by_ranges(slot.n_cells, 3)
    got, _ = part_rays.march(slot, split, start, wall, run=_through_pickles)
    assert_same_fields(got, rays.march(mesh, start, wall))
    team = exchange.walkers(slot, split)
    faces = _group(slot, "walls")
    layers, _ = part_stacks.wall_layers(slot, split, faces, run=_through_pickles, team=team)
    assert_same_fields(layers, wall_layers.wall_layers(mesh, faces))
    again, _ = part_rays.march(slot, split, start, wall, team=team)
    assert_same_fields(again, got)


def test_one_partition_walks_in_one_round_and_no_walks_in_none(slot):
    mesh = Mesh(slot)
    start = mesh.boundary_faces
    wall = np.ones(slot.n_faces, dtype=bool)
    whole = plan.by_ranges(slot.n_cells, 1)
    got, rounds = part_rays.march(slot, whole, start, wall)
    assert_same_fields(got, rays.march(mesh, start, wall))
    assert rounds == 1
    none = np.zeros(0, dtype=np.int64)
    got, rounds = part_rays.march(slot, whole, none, wall)
    assert_same_fields(got, rays.march(mesh, none, wall))
    assert rounds == 0
    counted, rounds = part_rays.cells_within(slot, whole, none, 0.1)
    assert_same_fields(counted, rays.cells_within(mesh, none, 0.1))
    layers, rounds = part_stacks.wall_layers(slot, whole, none)
    assert_same_fields(layers, wall_layers.wall_layers(mesh, none))
    assert rounds == 0


def test_bad_input_is_refused(slot):
    split = plan.by_ranges(slot.n_cells, 2)
    wall = np.zeros(slot.n_faces, dtype=bool)
    with pytest.raises(ValueError, match="boundary faces only"):
        part_rays.march(slot, split, np.array([0]), wall)
    with pytest.raises(ValueError, match="one entry per face"):
        part_rays.march(slot, split, np.array([slot.n_faces - 1]), wall[:-1])
    with pytest.raises(ValueError, match="boundary faces"):
        part_stacks.wall_layers(slot, split, np.array([0]))
    with pytest.raises(ValueError, match="a plan for 7 cells"):
        part_rays.march(slot, plan.by_ranges(7, 2), np.array([slot.n_faces - 1]), wall)
