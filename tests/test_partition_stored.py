"""Pieces read by the tasks themselves from the processor folders of a decomposed case equal
the pieces the client cuts from the whole mesh, array for array (caselint.partition.stored);
on a Dask cluster the client then sends only their descriptions.

The reference is :func:`caselint.partition.piece.cut_piece` on the whole mesh read from the
same folders (itself tested against the whole-mesh quantities in tests/test_partition.py).
Meshes: a gmsh prism-layer plate (tetrahedra and wedges, not designed for this test)
decomposed in slabs, and the same with every cell dealt to one of five processors at
random (every piece then needs every folder); a 2:1 octree of polyhedra.
"""

from __future__ import annotations

import dataclasses
import pickle
from pathlib import Path

import numpy as np
import pytest

import calibration
from caselint.errors import MeshReadError
from caselint.mesh.analysis import Mesh
from caselint.mesh.reader import read_mesh
from caselint.mesh.refined import refined_block
from caselint.mesh.topology import cell_faces
from caselint.partition import plan, stored
from caselint.partition.piece import cut_piece
from mesh_writers import write_decomposed
from partition_checks import check_report


@pytest.fixture(scope="module")
def plate(tmp_path_factory):
    """The prism-layer plate's sample and mesh data."""
    sample = calibration.layer_growth(tmp_path_factory.mktemp("plate"))
    return sample, read_mesh(sample.case.with_suffix(".msh")).data


def _slabs(data, n: int) -> np.ndarray:
    x = Mesh(data).cell_centroids[:, 0]
    return np.minimum(((x - x.min()) / np.ptp(x) * n).astype(int), n - 1)


def _assert_same_piece(got, ref) -> None:
    for name in ("index", "whole_cells"):
        assert getattr(got, name) == getattr(ref, name), name
    for name in ("cells", "faces", "points", "owned_cells", "owned_faces"):
        assert np.array_equal(getattr(got, name), getattr(ref, name)), name
    for f in dataclasses.fields(ref.data):
        a, b = getattr(got.data, f.name), getattr(ref.data, f.name)
        if isinstance(b, np.ndarray):
            assert a.dtype == b.dtype and np.array_equal(a, b), f.name
        elif f.name == "shapes":
            assert [s.type for s in a] == [s.type for s in b]
            for x, y in zip(a, b):
                for part in ("cells", "connectivity"):
                    u, v = getattr(x, part), getattr(y, part)
                    assert u.dtype == v.dtype and np.array_equal(u, v), (x.type, part)
        elif f.name == "report":
            assert np.array_equal(a.clashing, b.clashing)
        else:
            assert a == b, f.name


def _check_pieces(case: Path, splits) -> list[stored.Stored]:
    whole = read_mesh(case).data
    cf = cell_faces(whole)
    items = []
    for split in splits:
        pieces = stored.stored_pieces(case, whole, split, cf)
        assert pieces is not None
        for item in pieces.items():
            _assert_same_piece(pieces.make(item),
                               cut_piece(whole, cf, split.cells(item.index), item.index))
            items.append(item)
    return items


def test_pieces_read_from_slabs_equal_the_cut_pieces(plate, tmp_path):
    _, data = plate
    write_decomposed(tmp_path / "plate", data, _slabs(data, 5), binary=True)
    case = tmp_path / "plate"
    items = _check_pieces(case, [plan.by_processors(case), plan.by_ranges(data.n_cells, 3)])
    by_proc = [i for i in items if i.owned[0] == "processor"]
    # a slab needs itself and the slabs beside it, not the whole case
    assert [[n for n, _ in i.folders] for i in by_proc] == [[0, 1], [0, 1, 2], [1, 2, 3],
                                                            [2, 3, 4], [3, 4]]
    assert all(Path(folder).is_absolute() for i in items for _, folder in i.folders)


def test_pieces_read_from_cells_dealt_at_random(plate, tmp_path):
    _, data = plate
    dealt = np.random.default_rng(4).integers(0, 5, data.n_cells)
    write_decomposed(tmp_path / "dealt", data, dealt)
    _check_pieces(tmp_path / "dealt", [plan.by_processors(tmp_path / "dealt")])


def test_octree_polyhedra_and_a_relative_path(tmp_path, monkeypatch):
    axis = np.linspace(0.0, 1.0, 7)
    octree = refined_block(axis, axis[:5], axis[:4], ((0.2, 0.7), (0.1, 0.6), (0.2, 0.9)))
    c = Mesh(octree).cell_centroids
    write_decomposed(tmp_path / "octree", octree,
                     (c[:, 0] > 0.5).astype(int) + 2 * (c[:, 2] > 0.4).astype(int))
    monkeypatch.chdir(tmp_path)
    items = _check_pieces(Path("octree"), [plan.by_processors(Path("octree"))])
    monkeypatch.chdir(tmp_path.parent)             # the tasks do not read the client's cwd
    for item in items:
        assert stored.read_stored(item).faces.size


def test_where_the_tasks_cannot_read_their_pieces(plate, tmp_path):
    sample, data = plate
    cf = cell_faces(data)
    split = plan.by_ranges(data.n_cells, 2)
    assert stored.stored_pieces(sample.case.with_suffix(".msh"), data, split, cf) is None
    write_decomposed(tmp_path / "bare", data, _slabs(data, 2), addressing=False)
    bare = read_mesh(tmp_path / "bare").data
    assert stored.stored_pieces(tmp_path / "bare", bare, split, cell_faces(bare)) is None
    # a plan that is neither the processors nor ranges
    write_decomposed(tmp_path / "slabs", data, _slabs(data, 2))
    dealt = plan.by_labels(np.random.default_rng(1).integers(0, 2, data.n_cells))
    assert stored.stored_pieces(tmp_path / "slabs", data, dealt, cf) is None


def test_a_folder_the_task_cannot_read_is_named(plate, tmp_path):
    _, data = plate
    case = tmp_path / "moved"
    write_decomposed(case, data, _slabs(data, 2))
    pieces = stored.stored_pieces(case, data, plan.by_processors(case), cell_faces(data))
    item = next(pieces.items())
    case.rename(tmp_path / "elsewhere")
    with pytest.raises(MeshReadError) as caught:
        pieces.make(item)
    text = str(caught.value)
    assert str(case / "processor0" / "constant" / "polyMesh") in text
    assert "the Dask workers must see the case at the same path as the client" in text
    again = pickle.loads(pickle.dumps(caught.value))       # as it comes back from a worker
    assert str(again) == text and again.file == caught.value.file


# -- on a cluster ------------------------------------------------------------------------


def _plate_case(plate, folder: Path) -> Path:
    """The plate decomposed in 4 slabs along x and 2 layers in z, with its case file."""
    sample, data = plate
    z = Mesh(data).cell_centroids[:, 2]
    write_decomposed(folder / "plate", data, _slabs(data, 4) + 4 * (z > np.median(z)),
                     binary=True)
    case = folder / "plate.caselint.yaml"
    case.write_text(sample.case.read_text().replace(f"file: {sample.name}.msh", "file: plate"))
    return case


def _sent(args) -> int:
    """Pickled size of a task's arguments, the futures in them counted as nothing (they
    stay on the workers)."""
    import distributed

    def strip(value):
        if isinstance(value, distributed.Future):
            return None
        if isinstance(value, (tuple, list)):
            return type(value)(strip(v) for v in value)
        return value

    return len(pickle.dumps(strip(args)))


def test_workers_read_their_pieces_from_the_folders(plate, tmp_path, monkeypatch):
    import distributed

    from caselint.batch import lint_batch
    from caselint.partition.runners import PartitionRequest

    case = _plate_case(plate, tmp_path)
    whole = read_mesh(case.parent / "plate").data
    cf = cell_faces(whole)
    smallest = min(len(pickle.dumps(cut_piece(whole, cf, c, 0)))
                   for c in np.array_split(np.arange(whole.n_cells), 8))
    assert smallest > 300_000                          # what a piece would weigh
    sent = []
    submit = distributed.Client.submit

    def recording(self, function, *args, **kwargs):
        sent.append((getattr(function, "func", function).__name__, _sent(args), args))
        return submit(self, function, *args, **kwargs)

    code, reference, _ = check_report(case)
    assert code == 1 and reference["cases"][0]["findings"]
    with distributed.LocalCluster(processes=True, n_workers=2, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        code, got, err = check_report(case, "--partitions", "auto", "--scheduler",
                                 cluster.scheduler_address)
        assert code == 1, err
        assert got == reference
        monkeypatch.setattr(distributed.Client, "submit", recording)
        request = PartitionRequest.parse("auto", cluster.scheduler_address)
        [outcome] = lint_batch([case], partitions=request)
    assert outcome.error is None
    kinds = {name for name, _, _ in sent}
    # the walkers, read on the workers, measured and walked there
    assert {"walker_of", "measure_walker", "_leg", "_mark_leg"} <= kinds
    for name, size, args in sent:
        assert size < smallest / 10, (name, size)
        if name == "walker_of":
            assert isinstance(args[0], stored.Stored) and size < 4_000
        if name == "measure_walker":
            assert isinstance(args[0], distributed.Future) and size < 200


def test_a_streamed_check_on_a_cluster_scatters_its_pieces(plate, tmp_path, monkeypatch):
    """A case over the memory limit, streamed (arrays on disk here) with its partitions on
    a cluster: runs of consecutive cell ids cut here, each scattered to the workers on its
    own (not put into the task graph); the report equals the whole-mesh check's."""
    import distributed

    from caselint.batch import lint_batch
    from caselint.partition import streaming
    from caselint.partition import runners
    from caselint.partition.runners import PartitionRequest

    case = _plate_case(plate, tmp_path)
    way = streaming.mesh_way(case.parent / "plate", (10**15, "test"))
    between = way.streamed                            # streamed in parts of a folder's size
    assert between < way.need
    sent, scattered = [], []
    submit, scatter = distributed.Client.submit, distributed.Client.scatter

    def recording(self, function, *args, **kwargs):
        sent.append((getattr(function, "func", function).__name__, _sent(args), args))
        return submit(self, function, *args, **kwargs)

    def scattering(self, data, *args, **kwargs):
        scattered.append(data)
        return scatter(self, data, *args, **kwargs)

    code, reference, _ = check_report(case, "--memory-limit", "off")
    assert code == 1 and reference["cases"][0]["findings"]
    with distributed.LocalCluster(processes=True, n_workers=2, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        code, got, err = check_report(case, "--memory-limit", str(between), "--partitions",
                                      "auto", "--scheduler", cluster.scheduler_address)
        assert code == 1, err
        assert "checked partition by partition with its whole-mesh arrays on disk" in err
        assert "large graph" not in err
        assert got == reference
        monkeypatch.setattr(distributed.Client, "submit", recording)
        monkeypatch.setattr(distributed.Client, "scatter", scattering)
        monkeypatch.setattr(runners, "SCATTER_BYTES", 10_000)     # the plate's are small
        request = PartitionRequest.parse("auto", cluster.scheduler_address)
        [outcome] = lint_batch([case], partitions=request, memory_limit=(between, "test"))
    assert outcome.error is None
    measured = [args for name, _, args in sent if name == "measure_made"]
    n_cells = read_mesh(case.parent / "plate").n_cells
    assert len(measured) == -(-n_cells // way.piece_cells) == len(scattered)
    assert all(size < 4_000 for _, size, _ in sent)   # the pieces went by scatter
    cells = np.concatenate([piece.cells[piece.owned_cells] for piece in scattered])
    assert np.array_equal(cells, np.arange(n_cells))  # consecutive runs, each cell once
    assert all(piece.nbytes > 10_000 for piece in scattered)


def test_a_worker_that_cannot_read_the_folders(plate, tmp_path):
    import distributed

    case = _plate_case(plate, tmp_path)
    with distributed.LocalCluster(processes=True, n_workers=1, threads_per_worker=1,
                                  dashboard_address=None) as cluster:
        with distributed.Client(cluster.scheduler_address) as client:
            client.run(_storage_unseen)
        code, _, err = check_report(case, "--partitions", "auto", "--scheduler",
                               cluster.scheduler_address)
    assert code == 2
    assert "Traceback" not in err
    assert str(case.parent / "plate" / "processor0" / "constant" / "polyMesh") in err
    assert "the Dask workers must see the case at the same path as the client" in err


def _storage_unseen() -> None:
    """On a worker: every folder read fails as on a machine without the case's storage."""
    from caselint.partition import stored as on_worker

    def unseen(folder):
        raise FileNotFoundError(2, "No such file or directory", str(folder))

    on_worker.read_folder_mesh = unseen
