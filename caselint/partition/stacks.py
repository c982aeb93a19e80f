"""Wall-layer stacks walked partition by partition: the same
:class:`~caselint.mesh.wall_layers.WallLayers` as :func:`caselint.mesh.wall_layers.wall_layers`
on the whole mesh, to the bit.

A stack starts in the partition owning its wall cell and is handed over, with its state
(:class:`~caselint.mesh.stack_walk.StackState`: where it is, its layers and ends so far,
its last jump), where its walk enters another partition's cell
(:mod:`caselint.partition.exchange`). Each task also returns the heights of the cells it
walked. Once every walk has ended, the client puts the heights together and applies the
whole-mesh end rules to them (:func:`caselint.mesh.wall_layers.stacks_from`: the cut
before a block of one height, the cut at the middle of a passage, growth, thickness); the
core jump needs the height of each core cell, asked of the partition owning it in one more
round of tasks.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import Callable, Iterable

import numpy as np

from caselint.mesh import wall_layers as layers
from caselint.mesh.model import MeshData
from caselint.mesh.stack_walk import StackState
from caselint.partition.exchange import (
    Walker,
    by_partition,
    face_flags,
    in_row_order,
    in_rounds,
    joined,
    walkers,
)
from caselint.partition.plan import Plan
from caselint.partition.runners import serial
from caselint.rulekit.stacks import mark_on


@dataclass(frozen=True, eq=False)
class Walls:
    """Stacks to start: their numbers and wall faces (whole-mesh ids)."""

    row: np.ndarray
    face: np.ndarray


@dataclass(frozen=True, eq=False)
class Walks:
    """Walks on their way, or ended: numbers and :class:`StackState` (whole-mesh ids)."""

    row: np.ndarray
    state: StackState

    @property
    def cell(self) -> np.ndarray:
        """The cell each walk enters next (whole-mesh id)."""
        return self.state.cell


@dataclass(frozen=True, eq=False)
class Heights:
    """Heights of walked cells: walk number, cell number along the walk (0 at the wall),
    height (m)."""

    row: np.ndarray
    at: np.ndarray
    h: np.ndarray


@dataclass(frozen=True)
class Settings:
    """What shapes a walk, as :func:`caselint.mesh.wall_layers.wall_layers` takes it."""

    shape: tuple[float, float, float]     # max_aspect, min_ratio, jump_ratio
    turn_deg: float
    max_cells: int
    reach_m: float


def wall_layers(data: MeshData, plan: Plan, faces, *, max_aspect: float = 1.0,
                min_ratio: float = 0.9, jump_ratio: float = 1.3, turn_deg: float = 45.0,
                max_cells: int = 200, reach_m: float = math.inf,
                run: Callable[[Callable, Iterable], Iterable] = serial,
                team: list[Walker] | None = None) -> tuple[layers.WallLayers, int]:
    """:func:`caselint.mesh.wall_layers.wall_layers` of ``data`` (same settings), partition
    by partition as ``plan`` splits the cells; ``run`` maps each round's tasks; ``team``
    the partitions' walkers when already made (:func:`~caselint.partition.exchange.walkers`).
    Returns the stacks and the number of exchange rounds."""
    faces = layers.checked_walls(data, faces, min_ratio, jump_ratio, reach_m)
    settings = Settings((float(max_aspect), float(min_ratio), float(jump_ratio)),
                        float(turn_deg), int(max_cells), float(reach_m))
    walled = np.zeros(data.n_faces, dtype=bool)
    walled[faces] = True
    team = walkers(data, plan) if team is None else team
    labels = plan.labels()
    cells0 = data.owner[faces]
    first = by_partition(Walls(np.arange(len(faces)), faces), labels[cells0])
    leg = functools.partial(_leg, settings)
    flags = face_flags(data, labels, plan.n_parts, walled)
    ended, rounds = in_rounds(leg, first, leg, team, flags, labels, run)
    walks = in_row_order([w for w, _ in ended], len(faces), "stack walks")
    if walks is None:                                  # no faces: the whole-mesh answer
        return _no_stacks(faces, cells0, settings.reach_m), 0
    walked = [h for _, h in ended]
    heights = np.zeros((len(faces), int(walks.state.n_walked.max(initial=0))))
    if walked:
        every = joined(walked)
        heights[every.row, every.at] = every.h
    extent = functools.partial(_extents, team, labels, run)
    return layers.stacks_from(faces, cells0, walks.state, heights, extent,
                              settings.reach_m), rounds


def _leg(settings: Settings, item: tuple):
    """One partition's task: walk its stacks (starting ones or handed-over ones) through
    the cells it owns (``walled``: the piece's wall faces walked from); the walks that
    ended with the heights walked here, and the ones handed on."""
    walker, walled, batch = item
    piece, mesh = walker.piece, walker.mesh
    walled = walker.flagged(walled)
    with walker.same_kernels():
        if isinstance(batch, Walls):
            local = walker.local_faces(batch.face)
            state = StackState.at_walls(mesh, local, functools.partial(layers.extents, mesh))
        else:
            state = batch.state.copy()
            state.cell[:] = walker.local_cells(state.cell)
            state.entry[:] = walker.local_faces(state.entry)
        before = state.n_walked.copy()
        table, moved = layers.walk_on(mesh, state, walled, settings.shape,
                                      settings.turn_deg, settings.max_cells, settings.reach_m,
                                      walker.foreign, piece.cells)
    state.cell[:] = piece.cells[state.cell]
    state.entry[:] = piece.faces[state.entry]
    depth = np.arange(table.shape[1])[None, :]
    new = (depth >= before[:, None]) & (depth < state.n_walked[:, None])
    rows, at = np.nonzero(new)
    walked = Heights(batch.row[rows], at, table[rows, at])
    end = ~moved
    return ((Walks(batch.row[end], state.take(end)), walked),
            Walks(batch.row[moved], state.take(moved)))


def _extents(team: list[Walker], labels: np.ndarray, run, cells: np.ndarray,
             origin: np.ndarray, normal: np.ndarray) -> np.ndarray:
    """:func:`caselint.mesh.wall_layers.extents` of whole-mesh ``cells``, each computed by
    the partition owning it."""
    out = np.zeros(len(cells))
    asked = _Asked(np.arange(len(cells)), np.asarray(cells, dtype=np.int64), origin, normal)
    split = by_partition(asked, labels[asked.cell])
    for rows, values in run(_extent_task, [(team[k], a) for k, a in split]):
        out[rows] = values
    return out


@dataclass(frozen=True, eq=False)
class _Asked:
    """Cells whose extent is asked for (whole-mesh ids), each from its origin along its
    normal; ``row``: where the answer goes."""

    row: np.ndarray
    cell: np.ndarray
    origin: np.ndarray
    normal: np.ndarray


def _extent_task(item: tuple[Walker, _Asked]) -> tuple[np.ndarray, np.ndarray]:
    """One partition's task: the extents of the cells asked of it, and where they go."""
    walker, asked = item
    with walker.same_kernels():
        return asked.row, layers.extents(walker.mesh, walker.local_cells(asked.cell),
                                         asked.origin, asked.normal)


@dataclass(frozen=True, eq=False)
class Marking:
    """Stacks whose cells are being marked: the cell each enters next and its entry face
    (whole-mesh ids), and the cells still to mark."""

    cell: np.ndarray
    entry: np.ndarray
    left: np.ndarray


def layer_cells(data: MeshData, plan: Plan, faces: np.ndarray, cells: np.ndarray,
                n_layers: np.ndarray, run: Callable[[Callable, Iterable], Iterable] = serial,
                team: list[Walker] | None = None) -> tuple[np.ndarray, int]:
    """:func:`caselint.rulekit.stacks.layer_cells` of ``data``, partition by partition as
    ``plan`` splits the cells (``run`` and ``team`` as for :func:`wall_layers`). Returns
    the marked cells and the number of exchange rounds."""
    team = walkers(data, plan) if team is None else team
    labels = plan.labels()
    rows = np.flatnonzero(np.asarray(n_layers) >= 1)
    start = Marking(np.asarray(cells, dtype=np.int64)[rows],
                    np.asarray(faces, dtype=np.int64)[rows],
                    np.asarray(n_layers, dtype=np.int64)[rows])
    first = by_partition(start, labels[start.cell])
    ended, rounds = in_rounds(_mark_leg, first, _mark_leg, team, [None] * plan.n_parts,
                              labels, run)
    marked = np.zeros(data.n_cells, dtype=bool)
    for done in ended:
        marked[done] = True
    return marked, rounds


def _mark_leg(item: tuple) -> tuple[np.ndarray, Marking]:
    """One partition's task: mark the cells of its stacks it owns; the cells marked (whole
    ids) and the walks handed on."""
    walker, _, batch = item
    piece = walker.piece
    marked = np.zeros(piece.data.n_cells, dtype=bool)
    with walker.same_kernels():
        at, cell, entry, left = mark_on(walker.mesh, walker.local_cells(batch.cell),
                                        walker.local_faces(batch.entry), batch.left, marked,
                                        walker.foreign)
    return (piece.cells[np.flatnonzero(marked)],
            Marking(piece.cells[cell], piece.faces[entry], left))


def _no_stacks(faces: np.ndarray, cells0: np.ndarray, reach_m: float) -> layers.WallLayers:
    empty = np.zeros(0)
    none = np.zeros(0, dtype=np.int64)
    return layers.WallLayers(faces, cells0, np.zeros((0, 3)), empty, empty, np.zeros(0, bool),
                             none, none, np.zeros((0, 0)), empty, empty, none,
                             np.zeros(0, np.int8), none, empty, empty, reach=reach_m)


__all__ = ["Heights", "Marking", "Settings", "Walks", "Walls", "layer_cells", "wall_layers"]
