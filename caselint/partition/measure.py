"""The per-cell and per-face quantities of a mesh, computed partition by partition and put
back together.

Each partition's piece (:mod:`caselint.partition.piece`) is analysed as a mesh of its own
with the kernels the whole mesh would get (:func:`caselint.mesh.kernels.decided_for`); its
owned cells and faces are written into whole-mesh arrays. The result equals, to the bit,
what the whole mesh computes (``tests/test_partition.py`` compares every array on gmsh
meshes, 2:1 octree polyhedra and decomposed mesh folders, with the numpy and the compiled
kernels).

Pieces are independent: :func:`measure_pieces` takes a ``run`` that maps a function over
the partitions (:mod:`caselint.partition.runners`), so they can run one after the other
(the default; each piece is cut when its turn comes and dropped after) or as tasks of a Dask
cluster.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from typing import Callable, Iterable

import numpy as np

from caselint.mesh import kernels, quality
from caselint.mesh.analysis import Mesh
from caselint.mesh.geometry import Geometry
from caselint.mesh.model import MeshData
from caselint.mesh.topology import CellFaces, cell_faces
from caselint.partition.exchange import Walker
from caselint.partition.piece import Piece, Pieces, cut_here
from caselint.partition.plan import Plan
from caselint.partition.runners import serial
from caselint.partition.scratch import Scratch
from caselint.partition.walks import PartitionWalks


@dataclass(frozen=True)
class Quantity:
    """A per-entity quantity: its name, what it is per (``cell``, ``face`` or ``internal``
    face) and how a mesh computes it."""

    name: str
    per: str
    compute: Callable[[Mesh], np.ndarray]


#: What a partition computes for the cells and faces it owns.
QUANTITIES = (
    Quantity("face_area_vectors", "face", lambda m: m.face_area_vectors),
    Quantity("face_centroids", "face", lambda m: m.face_centroids),
    # from the area vectors of the piece in memory, where the whole mesh's would be read
    # back from disk (19 s of a 100M-cell check's rules, sampled)
    Quantity("face_areas", "face", lambda m: m.face_areas),
    Quantity("cell_volumes", "cell", lambda m: m.cell_volumes),
    Quantity("cell_centroids", "cell", lambda m: m.cell_centroids),
    Quantity("cell_apex", "cell", lambda m: m.geometry.apex),
    Quantity("non_orthogonality_deg", "face", quality.non_orthogonality_deg),
    Quantity("skewness", "face", quality.skewness),
    Quantity("growth_ratio", "face", quality.growth_ratio),
    Quantity("volume_ratio", "face", quality.volume_ratio),
    Quantity("face_warp_deg", "face", quality.face_warp_deg),
    Quantity("mean_sizes", "internal", quality.mean_sizes),
    Quantity("scaled_jacobian", "cell", quality.scaled_jacobian),
    Quantity("min_corner_jacobian", "cell", quality.min_corner_jacobian),
    Quantity("edge_ratio", "cell", quality.edge_ratio),
    Quantity("folded_polyhedra", "cell", quality.folded_polyhedra),
)
BY_NAME = {q.name: q for q in QUANTITIES}


@dataclass(frozen=True, eq=False)
class PieceResult:
    """The quantities of one partition: ``values[name]`` for its owned cells (global ids
    ``cells``), owned faces (``faces``) or owned internal faces (``internal``). Where
    ``segments`` has the runs of a kind of entity (``cell``, ``face``, ``internal``;
    :func:`runs_of` of its global ids and of its rows in the piece), its values are the
    piece's own arrays, all its entities: the owned ones are copied from them run by run
    when assembled, not gathered first."""

    index: int
    cells: np.ndarray
    faces: np.ndarray
    internal: np.ndarray
    values: dict[str, np.ndarray]
    segments: dict[str, np.ndarray | None] = field(default_factory=dict)


def measure_piece(piece: Piece, names: Iterable[str] | None = None,
                  mesh: Mesh | None = None) -> PieceResult:
    """The quantities ``names`` (default: all of :data:`QUANTITIES`) of the cells and faces
    ``piece`` owns; ``mesh`` the piece's mesh when its geometry is known (its memo is left
    as it was: the metrics are computed in a mesh of their own)."""
    chosen = [BY_NAME[n] for n in names] if names is not None else list(QUANTITIES)
    with kernels.decided_for(piece.whole_cells):
        mesh = Mesh(piece.data) if mesh is None else Mesh(
            piece.data, geometry=mesh.geometry, known={"topology.cell_faces": mesh.cell_faces})
        inner = piece.owned_faces[piece.owned_faces < piece.data.n_internal]
        local = {"cell": piece.owned_cells, "face": piece.owned_faces, "internal": inner}
        owned = {"cell": piece.cells[piece.owned_cells], "face": piece.faces[piece.owned_faces],
                 "internal": piece.faces[inner]}
        # a partition of consecutive cells owns a run of its piece's cells and a few runs
        # of its faces, runs of the whole mesh's ids too: copied from the piece's arrays
        # into the whole-mesh ones run by run when assembled (no gathered copy)
        runs = {per: runs_of(owned[per], rows=local[per]) for per in local}
        values = {}
        for q in chosen:
            whole = q.compute(mesh)
            values[q.name] = whole if runs[q.per] is not None else \
                np.ascontiguousarray(whole[local[q.per]])
    return PieceResult(piece.index, owned["cell"], owned["face"], owned["internal"], values,
                       runs)


def measure_walker(names: tuple[str, ...] | None, walker: Walker) -> PieceResult:
    """:func:`measure_piece` of a walker's piece, with the geometry the walker keeps for
    its walks (a partition's task)."""
    return measure_piece(walker.piece, names, walker.mesh)


def measure_made(make: Callable[[object], Piece], names: tuple[str, ...] | None,
                 item) -> PieceResult:
    """:func:`measure_piece` of the piece ``make(item)`` (a partition's task)."""
    return measure_piece(make(item), names)


def assemble(results: Iterable[PieceResult], n_cells: int, n_faces: int, n_internal: int,
             out: dict[str, np.ndarray] | None = None,
             empty: Callable[[str, tuple, np.dtype], np.ndarray] | None = None
             ) -> dict[str, np.ndarray]:
    """Whole-mesh arrays from the partitions' results (each entity written once, by the
    partition owning it); ``out`` may supply the arrays to fill, ``empty(name, shape,
    dtype)`` makes the others (default :func:`numpy.empty`; a
    :meth:`~caselint.partition.scratch.Scratch.empty` keeps them on disk)."""
    out = {} if out is None else out
    if empty is None:
        empty = lambda name, shape, dtype: np.empty(shape, dtype=dtype)  # noqa: E731
    size = {"cell": n_cells, "face": n_faces, "internal": n_internal}
    seen: dict[str, int] = {}
    for result in results:
        ids = {"cell": result.cells, "face": result.faces, "internal": result.internal}
        # once for all quantities: from the piece's rows where it sent its whole arrays
        runs = {per: result.segments.get(per) if result.segments.get(per) is not None
                else runs_of(i) for per, i in ids.items()}
        for name, values in result.values.items():
            per = BY_NAME[name].per
            if name not in out:
                out[name] = empty(name, (size[per],) + values.shape[1:], values.dtype)
            put(out[name], ids[per], values, runs[per])
            seen[name] = seen.get(name, 0) + len(ids[per])
        del result, ids, values     # not held while the next partition is analysed
    for name, count in seen.items():
        expected = size[BY_NAME[name].per]
        if count != expected:
            raise ValueError(f"partitions wrote {count} of {expected} rows of {name}: the plan "
                             "does not cover every cell exactly once")
    return out


#: :func:`put` copies runs of consecutive ids as slices when there are fewer than this.
MAX_RUNS = 256


def runs_of(ids: np.ndarray, rows: np.ndarray | None = None) -> np.ndarray | None:
    """(r, 3) runs along which ``ids`` (where values go) and ``rows`` (where they are;
    default: their positions, ``0 .. len(ids) - 1``) both step by one: the first row, the
    first id and the length of each; None when there are :data:`MAX_RUNS` or more (or no
    ids)."""
    if not len(ids):
        return None
    steps = np.diff(ids) != 1
    if rows is not None:
        steps |= np.diff(rows) != 1
    breaks = np.flatnonzero(steps) + 1
    if len(breaks) >= MAX_RUNS:
        return None
    starts = np.r_[0, breaks]
    first = starts if rows is None else np.asarray(rows)[starts]
    return np.column_stack([first, np.asarray(ids)[starts], np.diff(np.r_[starts, len(ids)])])


def put(array: np.ndarray, ids: np.ndarray, values: np.ndarray,
        runs: np.ndarray | None) -> None:
    """``array[ids] = values[rows]``, ``runs`` (:func:`runs_of` of ``ids`` and ``rows``)
    copied as slices; ``runs`` None: ``array[ids] = values``, an entry at a time. A
    partition of consecutive cells owns consecutive cells and, in a mesh folder's
    numbering, its internal faces and its faces in each boundary group are runs too. A
    slice is copied in one go into an array on disk, where an index array goes element
    by element (a third of the time of assembling a streamed 4M-cell mesh)."""
    if runs is None:
        array[ids] = values
        return
    for row, first, n in runs:
        array[first:first + n] = values[row:row + n]


def measure_pieces(data: MeshData, plan: Plan, names: Iterable[str] | None = None,
                   run: Callable[[Callable, Iterable], Iterable] = serial,
                   cf: CellFaces | None = None, pieces: Pieces | None = None,
                   scratch: Scratch | None = None) -> dict[str, np.ndarray]:
    """Every quantity ``names`` (default all) of ``data``, computed partition by partition
    as ``plan`` splits the cells; ``run(function, items)`` maps the work over the
    partitions; ``cf`` the mesh's cell-face lists when already known; ``pieces`` how the
    tasks get their pieces (default: cut here, :func:`~caselint.partition.piece.cut_here`);
    with ``scratch`` the whole-mesh arrays are made there (on disk)."""
    if plan.n_cells != data.n_cells:
        raise ValueError(f"a plan for {plan.n_cells} cells given for a mesh of {data.n_cells}")
    names = None if names is None else tuple(names)
    if cf is None:
        with kernels.decided_for(data.n_cells):
            cf = cell_faces(data)
    # cut as the runner asks for them, results written into the whole-mesh arrays as they
    # come: one piece and one piece's results at a time in memory when run here
    pieces = cut_here(data, cf, plan) if pieces is None else pieces
    results = run(functools.partial(measure_made, pieces.make, names), pieces.items())
    return assemble(results, data.n_cells, data.n_faces, data.n_internal,
                    empty=None if scratch is None else scratch.empty)


def analysed_in_partitions(data: MeshData, plan: Plan,
                           run: Callable[[Callable, Iterable], Iterable] = serial,
                           pieces: Pieces | None = None,
                           cf: CellFaces | None = None,
                           scratch: Scratch | None = None) -> Mesh:
    """The :class:`~caselint.mesh.analysis.Mesh` of ``data`` with its geometry and quality
    metrics computed partition by partition (equal to the bit to what it would compute
    itself), given to it under the keys its own functions use, and its walks (gap rays,
    wall-layer stacks) made partition by partition too
    (:class:`~caselint.partition.walks.PartitionWalks`); ``pieces`` and ``cf`` as for
    :func:`measure_pieces`. With ``scratch`` (a streamed check) every whole-mesh array is
    kept on disk there, also what the mesh computes later, one piece at a time is in
    memory, and the walks run over the whole mesh's arrays on disk (keeping every piece for
    walks across partitions would not fit)."""
    if cf is None:
        with kernels.decided_for(data.n_cells):
            cf = cell_faces(data)
    walks = None
    if scratch is not None:
        cf = scratch.keep_large("cell_faces", cf)
        v = measure_pieces(data, plan, run=run, cf=cf, pieces=pieces, scratch=scratch)
    else:
        pieces = cut_here(data, cf, plan) if pieces is None else pieces
        walks = PartitionWalks(data, plan, run, pieces)
        # a check walks (gap rays at least): each piece is made once, its geometry computed
        # once, and kept where the tasks run for the walks that follow
        results = run(functools.partial(measure_walker, None), walks.team())
        v = assemble(results, data.n_cells, data.n_faces, data.n_internal)
    known = {
        "topology.cell_faces": cf,
        "geometry": geometry_of(v),
        "geometry.face_areas": v["face_areas"],
        "quality.face_metrics": (v["non_orthogonality_deg"], v["skewness"]),
        "quality.face_warp": v["face_warp_deg"],
        "quality.cell_metrics": (v["scaled_jacobian"], v["min_corner_jacobian"],
                                 v["edge_ratio"]),
        "quality.folded_polyhedra": v["folded_polyhedra"],
        "size_ratio.ratios": (v["growth_ratio"], v["mean_sizes"]),
        "size_ratio.volume_ratio": v["volume_ratio"],
    }
    return Mesh(data, known=known, walks=walks,
                keep=None if scratch is None else scratch.keep_large)


def geometry_of(values: dict[str, np.ndarray]) -> Geometry:
    """The :class:`~caselint.mesh.geometry.Geometry` in assembled ``values``."""
    return Geometry(values["face_area_vectors"], values["face_centroids"],
                    values["cell_volumes"], values["cell_centroids"], values["cell_apex"])


__all__ = ["BY_NAME", "PieceResult", "QUANTITIES", "Quantity", "analysed_in_partitions",
           "assemble", "geometry_of", "measure_made", "measure_piece",
           "measure_pieces", "measure_walker", "put", "runs_of"]
