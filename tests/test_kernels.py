"""Compiled kernels (numba) against the numpy reference, and how the kernels are chosen.

Every kernel result is computed twice on the same input, once with ``CASELINT_KERNELS=numpy``
and once with ``CASELINT_KERNELS=numba``, on meshes not designed for the kernels: shuffled
perturbed hexahedra, tetrahedra, prism layers under tetrahedra, 2:1 refined polyhedra,
2-D quadrilaterals and triangles, and a damaged mesh (a duplicated cell, an inverted cell,
a collapsed hexahedron). Integer results and geometry must be equal to the bit; angles go
through ``arctan2``, which numpy may evaluate with vector instructions, so they get 1e-12 deg.
The timing targets are in benchmarks/, not here.
"""

from __future__ import annotations

import dataclasses
import functools
import math
import os
import subprocess
import sys
import textwrap

import meshio
import numpy as np
import pytest

from caselint.mesh import kernels, rays, wall_layers
from caselint.mesh.analysis import Mesh
from caselint.mesh.blocks import graded, shuffled, structured_hex, structured_quad, tetrahedralise
from caselint.mesh.formats.meshio_files import meshio_data
from caselint.mesh.orientation import volume_signs
from caselint.mesh.pairing import ElementBlock
from caselint.mesh.quality import (
    edge_ratio,
    face_warp_deg,
    growth_ratio,
    min_corner_jacobian,
    non_orthogonality_deg,
    scaled_jacobian,
    skewness,
)
from caselint.mesh.refined import refined_block
from caselint.mesh.stack_walk import StackState
from caselint.mesh.topology import point_set_keys
from caselint.mesh.size_ratio import mean_sizes, volume_ratio
from caselint.rulekit.stacks import layer_cells, mark_on
from caselint.rules.mesh_integrity import (
    cell_closure,
    cell_pieces,
    coincident_points,
    short_faces,
)
from near_wall_meshes import prism_block, stack
from regression_meshes import MESHES, _perturbed

numba = pytest.importorskip("numba")


def _hexes() -> meshio.Mesh:
    m = structured_hex(graded(0, 1, 9, 1.2), np.linspace(0, 2, 8), graded(0, 0.5, 7, 0.85))
    return shuffled(_perturbed(m, 0.02, 11), seed=12)


def _damaged() -> meshio.Mesh:
    """Hexahedra with one cell listed twice (non-manifold faces), one inverted (clashing
    faces) and one collapsed onto a wedge shape (quadrilaterals with a repeated point), and
    a second block against x = 1 with points of its own there (a seam of coincident points,
    a second piece)."""
    m = structured_hex(*(np.linspace(0, 1, 5),) * 3)
    hexes = m.cells_dict["hexahedron"].copy()
    hexes[5] = hexes[5][[4, 5, 6, 7, 0, 1, 2, 3]]          # inverted
    hexes[9][[2, 6]] = hexes[9][[1, 5]]                    # collapsed edge
    hexes = np.vstack([hexes, hexes[20:21]])               # duplicated
    other = structured_hex(np.linspace(1, 1.5, 3), np.linspace(0, 1, 5), np.linspace(0, 1, 3))
    hexes = np.vstack([hexes, other.cells_dict["hexahedron"] + len(m.points)])
    return meshio.Mesh(np.vstack([m.points, other.points]), [("hexahedron", hexes)])


def _polyhedra():
    xs = np.linspace(0, 1, 9)
    data = refined_block(xs, graded(0, 1, 8, 1.15), np.linspace(0, 0.6, 7),
                         ((0.3, 0.8), (0.2, 0.7), (0.1, 0.5)))
    rng = np.random.default_rng(5)
    lo, hi = data.points.min(axis=0), data.points.max(axis=0)
    inner = np.all((data.points > lo + 1e-9) & (data.points < hi - 1e-9), axis=1)
    jitter = np.where(inner[:, None], rng.uniform(-0.004, 0.004, data.points.shape), 0.0)
    return dataclasses.replace(data, points=data.points + jitter)


SOURCES = {
    "hex": _hexes,
    "tet": lambda: shuffled(tetrahedralise(structured_hex(*(np.linspace(0, 1, 6),) * 3)),
                            seed=3),
    "prism-tet": lambda: shuffled(prism_block([0.002, 0.003, 0.0045], [0.02, 0.03, 0.05],
                                              nx=5, ny=4), seed=8),
    "polyhedra": _polyhedra,
    "quad-2d": lambda: shuffled(structured_quad(graded(0, 2, 9, 1.2), np.linspace(0, 1, 6)),
                                seed=6),
    "triangle-2d": lambda: MESHES()["triangle"],
    "damaged": _damaged,
    # layers growing by 1.2, a jump into a block of one height, then shrinking layers
    "layer-block": lambda: shuffled(_perturbed(structured_hex(
        np.linspace(0, 0.4, 5), np.linspace(0, 0.3, 4),
        stack([0.01, 0.012, 0.0144, 0.03, 0.03, 0.03, 0.0144, 0.012, 0.01])), 0.0005, 5), seed=9),
    "mixed": lambda: MESHES()["mixed"],
}


def _analyse(name: str, mode: str, monkeypatch: pytest.MonkeyPatch) -> dict:
    """Every kernel's result on the mesh ``name`` with the kernels of ``mode``."""
    monkeypatch.setenv(kernels.ENV_KERNELS, mode)
    source = SOURCES[name]()
    data = source if not isinstance(source, meshio.Mesh) else meshio_data(source, path=name)
    mesh = Mesh(data)
    out = {f"data.{f}": getattr(data, f) for f in ("face_offsets", "face_points", "owner",
                                                    "neighbour", "face_group")}
    for block in data.shapes:          # the vote of the read, on the cells as read
        element = ElementBlock(block.type, block.connectivity, 0)
        kernel = kernels.compiled("volume_signs", 1)
        out[f"signs.{block.type}"] = volume_signs(data.points, element, data.dim, kernel)
    out["data.nonmanifold"] = data.report.nonmanifold
    out["data.clashing"] = data.report.clashing
    cf = mesh.cell_faces
    out.update({"cell_faces.offsets": cf.offsets, "cell_faces.faces": cf.faces,
                "cell_faces.owned": cf.owned})
    for f in dataclasses.fields(mesh.geometry):
        out[f"geometry.{f.name}"] = getattr(mesh.geometry, f.name)
    out["angle:non_orthogonality"] = non_orthogonality_deg(mesh)
    out["skewness"] = skewness(mesh)
    out["angle:face_warp"] = face_warp_deg(mesh)
    out["closure"] = cell_closure(mesh)
    out["growth"] = growth_ratio(mesh)
    out["mean_sizes"] = mean_sizes(mesh)
    out["volume_ratio"] = volume_ratio(mesh)
    out["scaled_jacobian"] = scaled_jacobian(mesh)
    out["min_corner_jacobian"] = min_corner_jacobian(mesh)
    out["edge_ratio"] = edge_ratio(mesh)
    out["pieces"] = cell_pieces(mesh)
    out["used_points"] = mesh.used_points()
    out["bounds"] = np.concatenate(mesh.bounds)
    points, copies = coincident_points(mesh)
    out["coincident"], out["copies"] = points, copies
    out["short_faces"] = short_faces(mesh)
    out["point_set_keys"] = point_set_keys(data)
    if mesh.dim == 3:
        boundary = mesh.boundary_faces
        wall = np.zeros(mesh.n_faces, dtype=bool)
        wall[boundary[::2]] = True                   # half the boundary ends rays as walls
        hits = rays.march(mesh, boundary, wall)
        for f in ("hit_face", "status", "width", "cells"):
            out[f"rays.{f}"] = getattr(hits, f)
        # distances from none to past the far side, so that rays stop inside cells, on
        # faces and on the boundary
        limits = np.concatenate([[0.0, np.inf], np.linspace(0.01, 1.5, boundary.size - 2)])
        within = rays.cells_within(mesh, boundary, limits)
        for f in ("cells", "reached", "short"):
            out[f"within.{f}"] = getattr(within, f)
        for reach in (0.0, math.inf):
            layers = wall_layers.wall_layers(mesh, boundary, reach_m=reach)
            for f in dataclasses.fields(layers):
                out[f"layers{reach}.{f.name}"] = getattr(layers, f.name)
        out.update(_stopped_at_foreign_cells(mesh, boundary, wall, limits))
        # the cells of the stacks as walked, and walked on for up to 7 cells (through the
        # split far sides of the polyhedra, into tetrahedra, out at the far boundary)
        cells0 = mesh.owner[boundary]
        out["layer_cells"] = layer_cells(mesh, boundary, cells0, layers.n_layers)
        deeper = np.arange(boundary.size) % 8
        out["layer_cells.deeper"] = layer_cells(mesh, boundary, cells0, deeper)
    return out


def _stopped_at_foreign_cells(mesh: Mesh, boundary: np.ndarray, wall: np.ndarray,
                              limits: np.ndarray) -> dict:
    """Marches and walks that stop where they enter a cell marked foreign (a third of the
    cells, at random), with the state they stop in: what a partition hands to the next."""
    foreign = np.random.default_rng(7).random(mesh.n_cells) < 0.3
    out = {}
    origin, direction, ok = rays.inward(mesh, boundary)
    state = rays.RayState.at_start(mesh.owner, boundary, 1)
    ends = rays.march_on(mesh, origin, direction, ok, state, wall, rays.MAX_STEPS, foreign)
    out.update({f"handed.rays.{k}": v for k, v in enumerate(ends + state.arrays())})
    state = rays.RayState.at_start(mesh.owner, boundary, 0.0)
    ends = rays.within_on(mesh, origin, direction, ok, limits, state, rays.MAX_STEPS, foreign)
    out.update({f"handed.within.{k}": v for k, v in enumerate(ends + state.arrays())})
    walls = np.zeros(mesh.n_faces, dtype=bool)
    walls[boundary] = True
    stacks = StackState.at_walls(mesh, boundary, functools.partial(wall_layers.extents, mesh))
    ids = np.arange(mesh.n_cells, dtype=np.int64) + 1000      # recorded as other ids
    heights, moved = wall_layers.walk_on(mesh, stacks, walls, (1.0, 0.9, 1.3), 45.0, 200,
                                         math.inf, foreign, ids)
    out["handed.stacks.heights"], out["handed.stacks.moved"] = heights, moved
    for f in dataclasses.fields(stacks):
        # where a walk is is kept for the walks handed over only
        rows = moved if f.name in _WHERE else slice(None)
        out[f"handed.stacks.{f.name}"] = getattr(stacks, f.name)[rows]
    marked = np.zeros(mesh.n_cells, dtype=bool)
    stopped = mark_on(mesh, mesh.owner[boundary], boundary, np.arange(boundary.size) % 8 + 1,
                      marked, foreign)
    order = np.argsort(stopped[0])                     # the stopped stacks in one order
    out["handed.marks"] = marked
    out.update({f"handed.marks.{k}": v[order] for k, v in enumerate(stopped)})
    assert out["handed.within.2"].any()               # some rays were stopped
    return out


_WHERE = ("cell", "entry", "x_in", "nin", "a_in", "top", "h_last", "in_stack")


@pytest.mark.parametrize("name", sorted(SOURCES))
def test_compiled_kernels_equal_the_numpy_reference(name, monkeypatch):
    reference = _analyse(name, "numpy", monkeypatch)
    # split the marches and walks into parts on threads even on these small meshes
    monkeypatch.setattr(kernels, "THREADED_ITEMS", 1)
    compiled = _analyse(name, "numba", monkeypatch)
    assert reference.keys() == compiled.keys()
    for key, expected in reference.items():
        got = compiled[key]
        if key.startswith("angle:"):
            np.testing.assert_allclose(got, expected, rtol=0, atol=1e-12, err_msg=key)
        elif isinstance(expected, np.ndarray):
            assert got.dtype == expected.dtype, key
            np.testing.assert_array_equal(got, expected, err_msg=key)
        else:
            assert got == expected, key


def test_the_meshes_exercise_what_the_kernels_handle(monkeypatch):
    """The damaged mesh has non-manifold, clashing and collapsed faces; the polyhedra have
    faces of more than four points; rays reach walls and open boundaries; stacks end in
    several ways; rays and stacks stop at foreign cells. Otherwise the equality above
    would test less than it claims."""
    damaged = _analyse("damaged", "numpy", monkeypatch)
    assert damaged["data.nonmanifold"].size and damaged["data.clashing"].size
    assert damaged["copies"] == 15 and len(set(damaged["pieces"].tolist())) >= 2
    assert np.any(np.diff(damaged["data.face_offsets"]) == 3)     # a collapsed quadrilateral
    poly = _analyse("polyhedra", "numpy", monkeypatch)
    assert np.diff(poly["data.face_offsets"]).max() > 4
    assert {0, 1} <= set(poly["rays.status"].tolist())
    prism = _analyse("prism-tet", "numpy", monkeypatch)
    assert len(set(prism["layers0.0.end"].tolist())) >= 2
    assert prism["layers0.0.n_layers"].max() == 3
    block = _analyse("layer-block", "numpy", monkeypatch)
    ends = set(block["layers0.0.end"].tolist())
    ends |= set(_analyse("hex", "numpy", monkeypatch)["layers0.0.end"].tolist())
    assert {wall_layers.END_CORE, wall_layers.END_SHRINK, wall_layers.END_MIDDLE} <= ends
    # stacks stopped at foreign cells after some layers, with a jump recorded before
    moved = block["handed.stacks.moved"]
    assert moved.any() and (block["handed.stacks.n_walked"][moved] > 1).any()
    assert (block["handed.stacks.jump_cell"] >= 1000).any()
    # stack cells marked up to a foreign cell, and handed on with cells left to mark
    assert block["handed.marks.0"].size and (block["handed.marks.3"] >= 1).all()
    for name in ("hex", "tet", "polyhedra"):
        within = _analyse(name, "numpy", monkeypatch)
        short, cells = within["within.short"], within["within.cells"]
        assert short.any() and not short.all()          # some rays end on the far side
        assert np.any(cells % 1 > 0)                    # partial cells at the limit


def test_mode_comes_from_the_environment(monkeypatch):
    monkeypatch.setenv(kernels.ENV_KERNELS, "numpy")
    assert kernels.compiled("ray_march", 10**9) is None
    monkeypatch.setenv(kernels.ENV_KERNELS, "numba")
    assert kernels.compiled("ray_march", 10).__name__ == "caselint.mesh.kernels.ray_march"
    monkeypatch.setenv(kernels.ENV_KERNELS, "auto")
    assert kernels.compiled("ray_march", kernels.MIN_CELLS - 1) is None
    assert kernels.compiled("ray_march", kernels.MIN_CELLS) is not None
    monkeypatch.delenv(kernels.ENV_KERNELS)
    assert kernels.mode() == "auto"


def test_parts_that_wait_for_the_disk_run_on_more_threads(monkeypatch):
    # the same parts, covering every item once in order, on one thread a core, or on
    # WAITING_THREADS_PER_CORE a core for walks over arrays on disk
    import threading

    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    n = 40 * kernels.THREADED_ITEMS
    for waits, threads in ((False, 2), (True, 2 * kernels.WAITING_THREADS_PER_CORE)):
        seen, barrier = set(), threading.Barrier(threads, timeout=30)

        def run(part):
            seen.add(threading.get_ident())
            barrier.wait()          # holds only if `threads` parts run at once
            return (np.arange(part.start, part.stop),)

        parts = kernels.in_threads(run, n, waits=waits)
        assert np.array_equal(np.concatenate([p[0] for p in parts]), np.arange(n))
        assert len(parts) == 4 * threads and len(seen) == threads


def _run(code: str, env: dict) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-c", textwrap.dedent(code)], capture_output=True,
                          text=True, env={**os.environ, **env}, timeout=300)


def test_kernels_compile_uncached_when_no_cache_folder_is_writable(tmp_path):
    """A cache folder that cannot be made (a file is in the way, which binds root too):
    numba's ``cache=True`` would raise at import; the kernels compile in memory instead."""
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("")
    done = _run("""
        import numpy as np
        from caselint.mesh import kernels
        from caselint.mesh.analysis import Mesh
        from caselint.mesh.blocks import structured_hex
        from caselint.mesh.formats.meshio_files import meshio_data
        from caselint.mesh.kernels import ray_march
        assert kernels.kernel_cache_dir() is None
        mesh = Mesh(meshio_data(structured_hex(*(np.linspace(0, 1, 4),) * 3)))
        from caselint.mesh.rays import RayState
        start = mesh.boundary_faces
        hits = ray_march.march(mesh.cell_faces.offsets, mesh.cell_faces.faces, mesh.owner,
                               mesh.neighbour, mesh.face_area_vectors, mesh.face_centroids,
                               np.ones(mesh.n_faces, bool), np.zeros(0, bool),
                               mesh.face_centroids[start], -mesh.face_area_vectors[start] * 9.0,
                               np.ones(len(start), bool),
                               *RayState.at_start(mesh.owner, start, 1).arrays(), 100, 64, 1e-9)
        print(type(ray_march.march._cache).__name__, int(hits[3].max()))
        """, {"CASELINT_CACHE_DIR": str(blocker / "sub"), "CASELINT_KERNELS": "numba"})
    assert done.returncode == 0, done.stderr
    assert done.stdout.split() == ["NullCache", "3"]          # uncached; 3 cells across
    assert blocker.is_file()


def test_kernel_cache_is_kept_under_the_cache_folder_and_off_turns_it_off(tmp_path):
    code = """
        from caselint.mesh import kernels
        from caselint.mesh.kernels import ray_march
        print(type(ray_march.march._cache).__name__, kernels.status()["cache"])
        """
    on = _run(code, {"CASELINT_CACHE_DIR": str(tmp_path)})
    assert on.returncode == 0, on.stderr
    assert on.stdout.split() == ["FunctionCache", str(tmp_path / "kernels")]
    off = _run(code, {"CASELINT_CACHE_DIR": "off"})
    assert off.returncode == 0, off.stderr
    assert off.stdout.split() == ["NullCache", "None"]


def test_the_demo_check_does_not_import_numba(tmp_path):
    """Small cases keep the start-up they had: numba is imported for large meshes only."""
    done = _run("""
        import sys
        from caselint.cli import main
        code = main(["demo", "--format", "json"])
        print("NUMBA", "numba" in sys.modules, code)
        """, {"CASELINT_CACHE_DIR": str(tmp_path)})
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip().splitlines()[-1].startswith("NUMBA False")


# -- shape recognition of face-based meshes ------------------------------------------------


def _faces_of(name: str):
    """The mesh ``name`` of SOURCES as faces alone: the shapes the file gave forgotten."""
    source = SOURCES[name]()
    data = source if not isinstance(source, meshio.Mesh) else meshio_data(source, path=name)
    return data, dataclasses.replace(data, shapes=())


def _turned(data, seed: int):
    """``data`` described otherwise: internal and boundary faces each shuffled, about half
    the internal faces turned round (owner and neighbour swapped, points reversed), every
    face starting from a random point of its own. The cells are the same."""
    rng = np.random.default_rng(seed)
    n, n_int = data.n_faces, data.n_internal
    order = np.concatenate([rng.permutation(n_int), n_int + rng.permutation(n - n_int)])
    sizes = np.diff(data.face_offsets)[order]
    flip = np.zeros(n, dtype=bool)
    flip[:n_int] = rng.random(n_int) < 0.5
    shift = rng.integers(0, sizes)
    offsets = np.concatenate([[0], np.cumsum(sizes)])
    rank = np.arange(offsets[-1]) - np.repeat(offsets[:-1], sizes)
    each = np.repeat(sizes, sizes)
    turn = np.repeat(shift, sizes)
    slot = np.where(np.repeat(flip, sizes), (turn - rank) % each, (turn + rank) % each)
    owner, neighbour = data.owner[order], data.neighbour[order]
    return dataclasses.replace(
        data, face_offsets=offsets, face_points=data.face_points[
            np.repeat(data.face_offsets[:-1][order], sizes) + slot],
        owner=np.where(flip, neighbour, owner), neighbour=np.where(flip, owner, neighbour),
        face_group=data.face_group[order])


def _scrambled(data, seed: int):
    """``data`` with a third of its faces damaged: the points of some put in a random
    order, one point of others replaced by a random point, so that edges repeat or go
    missing, apexes disagree, corners repeat and faces do not close as a shape."""
    rng = np.random.default_rng(seed)
    points = data.face_points.copy()
    sizes = np.diff(data.face_offsets)
    for f in rng.choice(data.n_faces, data.n_faces // 3, replace=False):
        lo, hi = data.face_offsets[f], data.face_offsets[f + 1]
        if rng.random() < 0.5:
            points[lo:hi] = rng.permutation(points[lo:hi])
        else:
            points[lo + rng.integers(sizes[f])] = rng.integers(data.n_points)
    return dataclasses.replace(data, face_points=points)


def _both_ways(data, monkeypatch) -> tuple:
    """The shape blocks of ``data`` from the numpy reference and from the kernel (split
    into parts on threads), checked equal block for block, array for array."""
    from caselint.mesh.shapes import recognise_shapes

    monkeypatch.setenv(kernels.ENV_KERNELS, "numpy")
    reference = recognise_shapes(data)
    monkeypatch.setenv(kernels.ENV_KERNELS, "numba")
    monkeypatch.setattr(kernels, "THREADED_ITEMS", 1)
    got = recognise_shapes(data)
    assert [b.type for b in got] == [b.type for b in reference]
    for a, b in zip(got, reference):
        for field in ("cells", "connectivity"):
            x, y = getattr(a, field), getattr(b, field)
            assert x.dtype == y.dtype, (a.type, field)
            np.testing.assert_array_equal(x, y, err_msg=f"{a.type} {field}")
    return reference


def _node_sets(blocks) -> dict:
    return {b.type: (b.cells, np.sort(b.connectivity, axis=1)) for b in blocks}


@pytest.mark.parametrize("name", ["hex", "tet", "prism-tet", "mixed", "polyhedra", "damaged",
                                  "quad-2d"])
def test_shape_recognition_kernel_equals_the_numpy_reference(name, monkeypatch):
    """The kernel finds the cells and corners the reference finds, in the faces as built,
    in the same faces shuffled and turned round and in faces damaged at random; on valid
    meshes the cells and corner sets do not depend on how the faces are described, and
    (element files) equal the file's own cells. (A face two cells list the same way round,
    on the damaged mesh, is wrong for one of them; turning it round moves the fault to the
    other.)"""
    given, bare = _faces_of(name)
    found = _both_ways(bare, monkeypatch)
    turned = _both_ways(_turned(bare, seed=len(name)), monkeypatch)
    scrambled = _both_ways(_scrambled(bare, seed=len(name)), monkeypatch)
    if bare.dim == 2:
        assert found == turned == scrambled == ()
        return
    # the damage is partial: some cells keep their shape, most lose it
    assert 0 < sum(len(b.cells) for b in scrambled) < sum(len(b.cells) for b in found) / 2
    if name == "damaged":
        return
    sets = _node_sets(found)
    assert sets.keys() == _node_sets(turned).keys()
    for shape, (cells, nodes) in _node_sets(turned).items():
        np.testing.assert_array_equal(cells, sets[shape][0])
        np.testing.assert_array_equal(nodes, sets[shape][1])
    if name in ("hex", "tet", "prism-tet", "mixed"):        # every cell as the file gave it
        assert sets.keys() == _node_sets(given.shapes).keys()
        for block in given.shapes:
            cells, nodes = sets[block.type]
            np.testing.assert_array_equal(cells, np.sort(block.cells))
            np.testing.assert_array_equal(nodes, np.sort(block.connectivity, axis=1)[
                np.argsort(block.cells)])


def test_shape_recognition_keeps_the_shapes_given_and_skips_damaged_cells(monkeypatch):
    given, bare = _faces_of("prism-tet")
    wedges = next(b for b in given.shapes if b.type == "wedge")
    blocks = _both_ways(dataclasses.replace(bare, shapes=(wedges,)), monkeypatch)
    assert blocks[0] is wedges and [b.type for b in blocks] == ["wedge", "tetra"]
    # every cell away from the faults is a hexahedron; the collapsed one (a triangle and a
    # two-point face among its faces) is none of the four shapes
    given, bare = _faces_of("damaged")
    (hexes,) = _both_ways(bare, monkeypatch)
    faults = np.concatenate([given.report.clashing, given.report.nonmanifold])
    near = np.concatenate([given.owner[faults], given.neighbour[faults]])
    collapsed = int(np.flatnonzero(given.file_cell_ids == 9)[0])
    clean = np.setdiff1d(np.arange(given.n_cells), np.append(near, collapsed))
    assert hexes.type == "hexahedron" and len(clean) > 60
    assert np.isin(clean, hexes.cells).all() and collapsed not in hexes.cells


def test_point_set_keys_of_long_and_empty_faces():
    """Faces longer than the kernel's first buffer (100 points), a face of no points and a
    face with a repeated point, against the numpy reference."""
    from types import SimpleNamespace

    from caselint.mesh.kernels import face_checks
    from caselint.mesh.topology import _point_set_keys

    rng = np.random.default_rng(4)
    sizes = np.array([100, 4, 0, 3, 130, 4])
    points = rng.integers(0, 10_000, sizes.sum())
    points[104:106] = points[103]                 # the triangle repeats a point
    mesh = SimpleNamespace(face_offsets=np.r_[0, np.cumsum(sizes)], face_points=points)
    got = np.zeros(len(sizes), dtype=np.uint64)
    face_checks.point_set_keys(mesh.face_offsets, mesh.face_points, 0, len(sizes), got)
    np.testing.assert_array_equal(got, _point_set_keys(mesh, np.arange(len(sizes))))
    assert len(set(got.tolist())) == len(sizes)
