"""Walks across partitions: gap rays and wall-layer stacks marched partition by partition,
handed from one to the next in exchange rounds.

A partition marches the walks it holds through the cells it owns. A walk that enters a cell
it does not own (one of ring 1 of its piece, :mod:`caselint.partition.piece`) stops there
with its whole state (:class:`caselint.mesh.rays.RayState`,
:class:`caselint.mesh.stack_walk.StackState`: the cell it enters, the face it came in
through, what it has measured so far) and goes, in the next round, to the partition owning
that cell, which resumes it with the same code and arithmetic as the whole-mesh march.
Rounds repeat until every walk has ended. A partition only ever steps through cells it
owns, whose faces and geometry its piece holds unchanged, so every step is the step the
whole mesh takes, to the bit.

What moves between rounds is a *batch*: a dataclass of arrays with one row per walk (the
walk's number and its state, cells and faces by their ids in the whole mesh, the cell it
enters next as ``cell``). :func:`in_rounds` routes batches to partitions and runs each
round's tasks with a runner (:mod:`caselint.partition.runners`; results in any order);
the drivers
(:mod:`caselint.partition.rays`, :mod:`caselint.partition.stacks`) say what a task does.
"""

from __future__ import annotations

import dataclasses
import functools
from typing import Callable, Iterable

import numpy as np

from caselint.mesh import kernels
from caselint.mesh.analysis import Mesh
from caselint.mesh.model import MeshData
from caselint.mesh.topology import cell_faces
from caselint.partition.piece import Piece, cut_piece
from caselint.partition.plan import Plan


class Walker:
    """One partition's piece, analysed on first use (kept for the following rounds and
    walks)."""

    def __init__(self, piece: Piece) -> None:
        self.piece = piece

    @functools.cached_property
    def mesh(self) -> Mesh:
        """The piece as a mesh (its geometry computed when first asked for)."""
        return Mesh(self.piece.data)

    @functools.cached_property
    def foreign(self) -> np.ndarray:
        """(c,) bool over the piece's cells: the ones another partition owns."""
        out = np.ones(self.piece.data.n_cells, dtype=bool)
        out[self.piece.owned_cells] = False
        return out

    def same_kernels(self):
        """A block in which the piece gets the kernels the whole mesh gets."""
        return kernels.decided_for(self.piece.whole_cells)

    def local_cells(self, cells: np.ndarray) -> np.ndarray:
        """Piece ids of cells of the piece given by their whole-mesh ids."""
        return np.searchsorted(self.piece.cells, cells)

    def local_faces(self, faces: np.ndarray) -> np.ndarray:
        """Piece ids of faces of the piece given by their whole-mesh ids."""
        return np.searchsorted(self.piece.faces, faces)

    def flagged(self, faces: np.ndarray | None) -> np.ndarray | None:
        """(f,) bool over the piece's faces, True on ``faces`` (whole-mesh ids, from
        :func:`face_flags`); None for None."""
        if faces is None:
            return None
        out = np.zeros(self.piece.data.n_faces, dtype=bool)
        out[self.local_faces(faces)] = True
        return out


def walkers(data: MeshData, plan: Plan) -> list[Walker]:
    """One :class:`Walker` per partition of ``plan`` (pieces cut from ``data``)."""
    if plan.n_cells != data.n_cells:
        raise ValueError(f"a plan for {plan.n_cells} cells given for a mesh of {data.n_cells}")
    with kernels.decided_for(data.n_cells):
        cf = cell_faces(data)
    return [Walker(cut_piece(data, cf, plan.cells(k), k)) for k in range(plan.n_parts)]


def face_flags(data: MeshData, labels: np.ndarray, n_parts: int,
               flags: np.ndarray | None) -> list:
    """Per partition, the whole-mesh ids (ascending) of the faces flagged in ``flags``
    (F,) bool (the walls a walk ends on or stops at) whose owner cell it owns, or None
    each: the only flags its walks meet, as they step through owned cells only; small
    enough to travel with every task (a partition's share of the walls)."""
    if flags is None:
        return [None] * n_parts
    ids = np.flatnonzero(flags)
    part = labels[data.owner[ids]]
    order = np.argsort(part, kind="stable")
    bounds = np.searchsorted(part[order], np.arange(n_parts + 1))
    return [ids[order[a:b]] for a, b in zip(bounds, bounds[1:])]


def take(batch, rows):
    """The rows ``rows`` (indices or a mask) of a batch (a dataclass of per-row arrays,
    possibly nested)."""
    if dataclasses.is_dataclass(batch):
        return type(batch)(*(take(getattr(batch, f.name), rows)
                             for f in dataclasses.fields(batch)))
    return batch[rows]


def joined(batches: list):
    """The batches one after the other, as one."""
    first = batches[0]
    if dataclasses.is_dataclass(first):
        return type(first)(*(joined([getattr(b, f.name) for b in batches])
                             for f in dataclasses.fields(first)))
    return np.concatenate(batches)


def by_partition(batch, part: np.ndarray) -> list[tuple[int, object]]:
    """``batch`` split by the partition ``part`` of each row: (partition, rows) pairs."""
    order = np.argsort(part, kind="stable")
    parts, starts = np.unique(part[order], return_index=True)
    bounds = np.append(starts, len(order))
    return [(int(k), take(batch, order[a:b])) for k, a, b in zip(parts, bounds, bounds[1:])]


def in_rounds(start: Callable, first: list, resume: Callable, team: list[Walker],
              flags: list, labels: np.ndarray,
              run: Callable[[Callable, Iterable], Iterable]) -> tuple[list, int]:
    """Walk until every walk has ended: ``run(start, ...)`` on the ``first`` (partition,
    batch) pairs, then ``run(resume, ...)`` on the walks handed over, each to the partition
    owning the cell it enters (``labels``, :meth:`Plan.labels`), round after round. A task
    gets ``(walker, flags, batch)`` (``flags`` the partition's :func:`face_flags`; a
    walker, or what :func:`caselint.partition.runners.hold` returned for it).

    Each task returns ``(ended, onward)``: what ended in it, and the batch of walks it
    hands over. Returns the ``ended`` of every task and the number of rounds.
    """
    ended, rounds = [], 0
    task, pairs = start, first
    while pairs:
        # in any order: every batch carries the numbers of its walks
        results = list(run(task, [(team[k], flags[k], batch) for k, batch in pairs]))
        rounds += 1
        ended.extend(done for done, _ in results)
        onward = [batch for _, batch in results if len(batch.cell)]
        if not onward:
            break
        moving = joined(onward)
        pairs = by_partition(moving, labels[moving.cell])
        task = resume
    return ended, rounds


def in_row_order(ended: list, n: int, what: str):
    """The ended rows of every task (batches with row numbers ``row``) as one batch in row
    order, checked to hold each of ``n`` rows once."""
    if not ended:
        if n:
            raise ValueError(f"no {what} ended")
        return None
    every = joined(ended)
    order = np.argsort(every.row, kind="stable")
    if len(order) != n or not np.array_equal(every.row[order], np.arange(n)):
        raise ValueError(f"{len(order)} {what} ended for {n} started: the plan does not cover "
                         "every cell exactly once")
    return take(every, order)


__all__ = ["Walker", "by_partition", "face_flags", "in_row_order", "in_rounds", "joined",
           "take", "walkers"]
