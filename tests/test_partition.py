"""A mesh analysed partition by partition gives, to the bit, the whole mesh's per-cell and
per-face quantities (caselint.partition).

The reference is the whole-mesh computation of the same code; what is tested is that a
partition with its two rings of neighbours sees exactly the faces, points and order the
whole mesh sees. Meshes: a gmsh prism-layer plate (tetrahedra and wedges, made by gmsh,
not designed for this test), a 2:1 octree block (polyhedra with hanging faces), a 2-D gmsh
strut mesh (quads and triangles), and a decomposed mesh folder split by processor.
Partitions are contiguous ranges, or cells dealt at random so that nearly every face
crosses a partition boundary.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

import calibration
from mesh_writers import write_decomposed
from partition_checks import check_report
from caselint.mesh import kernels
from caselint.mesh.analysis import Mesh
from caselint.mesh.model import ShapeBlock
from caselint.mesh.reader import read_mesh
from caselint.mesh.refined import refined_block
from caselint.mesh.topology import cell_faces
from caselint.partition import measure, plan
from caselint.partition.piece import Positions, block_rows, cut_piece, piece_ids


@pytest.fixture(scope="module")
def prism_plate(tmp_path_factory):
    sample = calibration.prism_tet(tmp_path_factory.mktemp("prism"))
    return read_mesh(sample.case.with_suffix(".msh")).data


@pytest.fixture(scope="module")
def strut(tmp_path_factory):
    sample = calibration.strut_2d(tmp_path_factory.mktemp("strut"))
    return read_mesh(sample.case.with_suffix(".msh")).data


@pytest.fixture(scope="module")
def octree():
    axis = np.linspace(0.0, 1.0, 7)
    return refined_block(axis, axis[:5], axis[:4], ((0.2, 0.7), (0.1, 0.6), (0.2, 0.9)))


def _assert_same(data, split: plan.Plan) -> None:
    whole = Mesh(data)
    parts = measure.measure_pieces(data, split)
    for q in measure.QUANTITIES:
        ref = np.asarray(q.compute(whole))
        got = parts[q.name]
        assert got.shape == ref.shape and got.dtype == ref.dtype, q.name
        # equal to the bit (NaN where the whole mesh has NaN: cells of no known shape)
        assert np.array_equal(got, ref, equal_nan=ref.dtype.kind == "f"), q.name


def _dealt(n_cells: int, n_parts: int, seed: int = 3) -> plan.Plan:
    return plan.by_labels(np.random.default_rng(seed).integers(0, n_parts, n_cells))


@pytest.mark.parametrize("kind", ["numpy", "numba"])
def test_prism_plate_in_ranges_and_dealt_cells(prism_plate, kind, monkeypatch):
    monkeypatch.setenv(kernels.ENV_KERNELS, kind)
    _assert_same(prism_plate, plan.by_ranges(prism_plate.n_cells, 5))
    _assert_same(prism_plate, _dealt(prism_plate.n_cells, 4))


@pytest.mark.parametrize("kind", ["numpy", "numba"])
def test_octree_polyhedra(octree, kind, monkeypatch):
    monkeypatch.setenv(kernels.ENV_KERNELS, kind)
    assert (Mesh(octree).cell_shape < 0).any()          # polyhedra with hanging faces
    _assert_same(octree, plan.by_ranges(octree.n_cells, 3))
    _assert_same(octree, _dealt(octree.n_cells, 6))


def test_two_dimensional_mesh(strut):
    assert strut.dim == 2
    _assert_same(strut, plan.by_ranges(strut.n_cells, 4))
    _assert_same(strut, _dealt(strut.n_cells, 3))


def test_one_partition_and_one_cell_per_partition(octree):
    _assert_same(octree, plan.by_ranges(octree.n_cells, 1))
    _assert_same(octree, plan.by_ranges(octree.n_cells, octree.n_cells))


def test_decomposed_case_split_by_processor(octree, tmp_path):
    mesh = Mesh(octree)
    c = mesh.cell_centroids
    part = (c[:, 0] > 0.5).astype(int) + 2 * (c[:, 2] > 0.4).astype(int)
    write_decomposed(tmp_path, octree, part)
    data = read_mesh(tmp_path).data
    split = plan.by_processors(tmp_path)
    assert split.n_parts == 4
    assert sorted(split.sizes()) == sorted(np.bincount(part))
    _assert_same(data, split)


def test_decomposed_without_addressing_numbers_part_after_part(octree, tmp_path):
    part = (Mesh(octree).cell_centroids[:, 1] > 0.3).astype(int)
    write_decomposed(tmp_path, octree, part, addressing=False)
    split = plan.by_processors(tmp_path)
    assert split.order.tolist() == list(range(octree.n_cells))
    assert split.sizes().tolist() == np.bincount(part).tolist()


def test_piece_holds_two_rings_and_owns_each_face_once(prism_plate):
    cf = cell_faces(prism_plate)
    split = plan.by_ranges(prism_plate.n_cells, 3)
    owned_faces = []
    for k in range(split.n_parts):
        piece = cut_piece(prism_plate, cf, split.cells(k), k)
        owned = piece.cells[piece.owned_cells]
        assert np.array_equal(owned, split.cells(k))
        # every face of an owned cell is in the piece, with both its cells
        assert np.isin(cf.of(owned), piece.faces).all()
        assert np.all(np.diff(piece.cells) > 0) and np.all(np.diff(piece.faces) > 0)
        owned_faces.append(piece.faces[piece.owned_faces])
        # local faces keep their orientation: same owner, same points
        g = piece.faces
        assert np.array_equal(piece.cells[piece.data.owner], prism_plate.owner[g])
    every = np.sort(np.concatenate(owned_faces))
    assert np.array_equal(every, np.arange(prism_plate.n_faces))


@pytest.mark.parametrize("mesh", ["prism_plate", "octree", "strut"])
def test_compiled_piece_ids_equal_the_numpy_reference(mesh, request, monkeypatch):
    # the compiled cut (caselint.mesh.kernels.piece_cut) against piece_ids' numpy path,
    # field for field and dtype for dtype: runs of cells, cells dealt at random (nearly
    # every face on a partition boundary), one cell, and every cell
    data = request.getfixturevalue(mesh)
    cf = cell_faces(data)
    rng = np.random.default_rng(11)
    owned_sets = [plan.by_ranges(data.n_cells, 3).cells(1), _dealt(data.n_cells, 4).cells(2),
                  np.array([data.n_cells // 2]), np.arange(data.n_cells),
                  np.sort(rng.choice(data.n_cells, 7, replace=False))]
    for owned in owned_sets:
        got = {}
        for kind in ("numpy", "numba"):
            monkeypatch.setenv(kernels.ENV_KERNELS, kind)
            got[kind] = piece_ids(data, cf, owned)
        for name, ref in got["numpy"]._asdict().items():
            value = getattr(got["numba"], name)
            if isinstance(ref, Positions):
                ref, value = ref(ref_ids := getattr(got["numpy"], name[3:])), value(ref_ids)
            assert value.dtype == ref.dtype and np.array_equal(value, ref), (mesh, name)
        assert len(got["numba"].cells) > len(owned) or len(owned) == data.n_cells


def test_positions_equal_a_binary_search():
    rng = np.random.default_rng(5)
    ids = np.unique(rng.integers(1000, 90_000, 5000))
    values = rng.choice(ids, 20_000)
    assert np.array_equal(Positions(ids)(values), np.searchsorted(ids, values))
    # values not among the ids get a position in range, which a check of ids rejects
    stray = np.array([0, 999, 1001, 10**6])
    got = Positions(ids)(stray)
    assert got.min() >= 0 and got.max() < len(ids) and not np.any(ids[got] == stray)
    assert Positions(np.zeros(0, np.int64))(stray).tolist() == [0, 0, 0, 0]


def test_block_rows_found_by_search_or_by_mark(prism_plate):
    kept = np.zeros(prism_plate.n_cells, dtype=bool)
    kept[np.random.default_rng(2).integers(0, prism_plate.n_cells, 300)] = True
    cells = np.flatnonzero(kept)
    for block in prism_plate.shapes:                   # two blocks: neither holds every cell
        assert block.cells_ascend and len(block.cells) < prism_plate.n_cells
        expected = np.flatnonzero(kept[block.cells])
        assert len(expected) and np.array_equal(block_rows(block, cells, kept), expected)
        turned = ShapeBlock(block.type, block.cells[::-1].copy(), block.connectivity[::-1])
        assert not turned.cells_ascend
        assert np.array_equal(block_rows(turned, cells, kept), np.flatnonzero(kept[turned.cells]))


def test_blocks_whose_cells_do_not_ascend(prism_plate):
    shuffled = [ShapeBlock(b.type, b.cells[order], b.connectivity[order])
                for b in prism_plate.shapes
                for order in [np.random.default_rng(4).permutation(len(b.cells))]]
    data = dataclasses.replace(prism_plate, shapes=tuple(shuffled))
    _assert_same(data, plan.by_ranges(data.n_cells, 3))


def test_put_writes_runs_as_slices_and_the_rest_by_index():
    rng = np.random.default_rng(9)
    runs = np.r_[np.arange(10, 500), np.arange(700, 900), [950, 3], np.arange(4, 9)]
    scattered = rng.permutation(1000)[:600]
    for ids in (runs, scattered, np.arange(0), np.arange(1000)):
        values = rng.random((len(ids), 3))
        got, expected = np.zeros((1000, 3)), np.zeros((1000, 3))
        measure.put(got, ids, values, measure.runs_of(ids))
        expected[ids] = values
        assert np.array_equal(got, expected)
        # by index, as for ids in no useful order
        got[:] = 0
        measure.put(got, ids, values, None)
        assert np.array_equal(got, expected)
        # from rows of a larger array where both rows and ids run (assembly from a
        # piece's own arrays): the runs break where either does
        rows = ids + 7
        source = rng.random((3000, 3))
        seg = measure.runs_of(ids, rows=rows)
        assert (seg is None) == (ids is scattered or not len(ids))
        if seg is not None:
            got[:] = 0
            measure.put(got, ids, source, seg)
            expected[:] = 0
            expected[ids] = source[rows]
            assert np.array_equal(got, expected)
    assert measure.runs_of(np.r_[0:3, 7:10], rows=np.arange(5, 11)).tolist() == [[5, 0, 3],
                                                                                [8, 7, 3]]
    assert measure.runs_of(np.arange(6), rows=np.r_[0:2, 4:8]).tolist() == [[0, 0, 2],
                                                                           [4, 2, 4]]
    # runs as (start in ids, first id, length); none past MAX_RUNS
    assert measure.runs_of(runs).tolist() == [[0, 10, 490], [490, 700, 200], [690, 950, 1],
                                              [691, 3, 6]]
    assert measure.runs_of(scattered) is None and measure.runs_of(np.arange(0)) is None


def test_plans_are_checked():
    with pytest.raises(ValueError, match="at least 1"):
        plan.by_ranges(10, 0)
    with pytest.raises(ValueError, match="rise from 0 to 10"):
        plan.Plan(10, np.array([0, 4, 9]))
    assert plan.by_cell_budget(10, 4).sizes().tolist() == [3, 4, 3]
    assert plan.by_ranges(2, 5).n_parts == 2


def test_assembly_refuses_a_plan_that_misses_cells(octree):
    cf = cell_faces(octree)
    piece = cut_piece(octree, cf, np.arange(5), 0)
    result = measure.measure_piece(piece, ["cell_volumes"])
    with pytest.raises(ValueError, match=f"wrote 5 of {octree.n_cells} rows of cell_volumes"):
        measure.assemble([result], octree.n_cells, octree.n_faces, octree.n_internal)


# -- a check in partitions: the same report ----------------------------------------------


def _report(case, *options) -> dict:
    code, report, err = check_report(case, *options)
    assert code in (0, 1), err
    return report


@pytest.fixture(scope="module")
def plate_case(tmp_path_factory):
    return calibration.layer_growth(tmp_path_factory.mktemp("plate")).case


def test_check_in_partitions_gives_the_same_report(plate_case):
    whole = _report(plate_case)
    assert whole["cases"][0]["findings"]                  # a mesh with findings to compare
    assert _report(plate_case, "--partitions", "7") == whole
    assert _report(plate_case, "--partitions", "auto") == whole


def test_partitions_on_a_dask_cluster_give_the_same_report(plate_case):
    import distributed  # a test dependency: the cluster path must really run

    whole = _report(plate_case)
    with distributed.LocalCluster(processes=True, n_workers=2, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        got = _report(plate_case, "--partitions", "4", "--scheduler", cluster.scheduler_address)
    assert got == whole


def test_partitions_option_is_checked(plate_case):
    import subprocess
    import sys

    done = subprocess.run([sys.executable, "-m", "caselint", "check", str(plate_case),
                           "--partitions", "none"], capture_output=True, text=True, timeout=120)
    assert done.returncode == 2
    assert "--partitions takes a whole number of at least 1 or 'auto', got 'none'" in done.stderr
    assert "Traceback" not in done.stderr
