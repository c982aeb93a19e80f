"""Gap rays cast partition by partition: the same :class:`~caselint.mesh.rays.RayHits` and
:class:`~caselint.mesh.rays.Crossing` as :func:`caselint.mesh.rays.march` and
:func:`caselint.mesh.rays.cells_within` on the whole mesh, to the bit.

A ray starts in the partition owning the cell behind its start face (its origin and
direction come from that face, whose geometry the piece holds unchanged), marches through
the cells that partition owns and is handed over, with its state, where it enters another
partition's cell (:mod:`caselint.partition.exchange`). A ray ends where it would on the
whole mesh: on a boundary face, lost, or at the step limit, counted across every partition
it crossed.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Callable, Iterable

import numpy as np

from caselint.mesh import rays
from caselint.mesh.model import MeshData
from caselint.partition.exchange import (
    Walker,
    by_partition,
    face_flags,
    in_row_order,
    in_rounds,
    walkers,
)
from caselint.partition.plan import Plan
from caselint.partition.runners import serial


@dataclass(frozen=True, eq=False)
class Starts:
    """Rays to start: their numbers and start faces (whole-mesh ids), and their limits
    (m; :func:`cells_within` only)."""

    row: np.ndarray
    face: np.ndarray
    limit: np.ndarray


@dataclass(frozen=True, eq=False)
class Rays:
    """Rays on their way: numbers, origins, directions, limits and their
    :class:`~caselint.mesh.rays.RayState` with whole-mesh cell and face ids."""

    row: np.ndarray
    origin: np.ndarray
    direction: np.ndarray
    limit: np.ndarray
    state: rays.RayState

    @property
    def cell(self) -> np.ndarray:
        """The cell each ray enters next (whole-mesh id)."""
        return self.state.cell


@dataclass(frozen=True, eq=False)
class GapEnds:
    """Rays that ended, as :class:`~caselint.mesh.rays.RayHits` reports them."""

    row: np.ndarray
    hit_face: np.ndarray
    status: np.ndarray
    width: np.ndarray
    cells: np.ndarray
    origin: np.ndarray
    direction: np.ndarray


@dataclass(frozen=True, eq=False)
class CountEnds:
    """Rays that ended, as :class:`~caselint.mesh.rays.Crossing` reports them."""

    row: np.ndarray
    cells: np.ndarray
    reached: np.ndarray
    short: np.ndarray


def march(data: MeshData, plan: Plan, start_faces: np.ndarray, wall_face: np.ndarray,
          max_steps: int = rays.MAX_STEPS, run: Callable[[Callable, Iterable], Iterable] = serial,
          team: list[Walker] | None = None) -> tuple[rays.RayHits, int]:
    """:func:`caselint.mesh.rays.march` of ``data``, partition by partition as ``plan``
    splits the cells; ``run`` maps each round's tasks; ``team`` the partitions' walkers
    when already made (:func:`~caselint.partition.exchange.walkers`). Returns the hits and
    the number of rounds."""
    if max_steps < 1:
        raise ValueError(f"max_steps must be at least 1, got {max_steps}")
    wall = np.asarray(wall_face, dtype=bool)
    if wall.shape != data.owner.shape:
        raise ValueError(f"wall_face must have one entry per face ({data.n_faces}), "
                         f"got shape {wall.shape}")
    start_faces = np.asarray(start_faces, dtype=np.int64)
    ends, rounds = _cast(data, plan, start_faces, np.zeros(len(start_faces)), wall,
                         functools.partial(_leg, max_steps, True), run, team)
    if ends is None:                                   # no rays
        return rays.RayHits(start_faces, np.zeros(0, np.int64), np.zeros(0, np.int8),
                            np.zeros(0), np.zeros(0, np.int64), np.zeros((0, 3)),
                            np.zeros((0, 3))), 0
    return rays.RayHits(start_faces, ends.hit_face, ends.status, ends.width, ends.cells,
                        ends.origin, ends.direction), rounds


def cells_within(data: MeshData, plan: Plan, start_faces: np.ndarray, limit_m,
                 max_steps: int = rays.MAX_STEPS,
                 run: Callable[[Callable, Iterable], Iterable] = serial,
                 team: list[Walker] | None = None) -> tuple[rays.Crossing, int]:
    """:func:`caselint.mesh.rays.cells_within` of ``data``, partition by partition as
    ``plan`` splits the cells (``run`` and ``team`` as for :func:`march`). Returns the
    crossing and the number of rounds."""
    start_faces = np.asarray(start_faces, dtype=np.int64)
    n = start_faces.size
    limit = np.array(np.broadcast_to(np.asarray(limit_m, dtype=np.float64), (n,)))
    if not np.all(limit >= 0):
        raise ValueError("limit_m must be at least 0 (and not NaN)")
    ends, rounds = _cast(data, plan, start_faces, limit, None,
                         functools.partial(_leg, max_steps, False), run, team)
    if ends is None:                                   # no rays
        return rays.Crossing(start_faces, limit, np.zeros(0), np.zeros(0),
                             np.zeros(0, dtype=bool)), 0
    return rays.Crossing(start_faces, limit, ends.cells, ends.reached, ends.short), rounds


def _cast(data, plan, start_faces, limit, wall, leg, run, team):
    """Start every ray in the partition owning its first cell, walk the rounds, and put
    the ended rays in order."""
    if start_faces.size and np.any(data.neighbour[start_faces] >= 0):
        raise ValueError("rays start from boundary faces only")
    team = walkers(data, plan) if team is None else team
    labels = plan.labels()
    starts = Starts(np.arange(len(start_faces)), start_faces, limit)
    first = by_partition(starts, labels[data.owner[start_faces]])
    flags = face_flags(data, labels, plan.n_parts, wall)
    ended, rounds = in_rounds(leg, first, leg, team, flags, labels, run)
    return in_row_order(ended, len(start_faces), "rays"), rounds


def _leg(max_steps: int, gaps: bool, item: tuple):
    """One partition's task: march its rays (starting ones or handed-over ones) through the
    cells it owns, ending on its ``wall`` faces; the rays that ended, and the ones handed
    on."""
    walker, wall, batch = item
    piece, mesh = walker.piece, walker.mesh
    wall = walker.flagged(wall)
    with walker.same_kernels():
        if isinstance(batch, Starts):
            local = walker.local_faces(batch.face)
            origin, direction, active = rays.inward(mesh, local)
            state = rays.RayState.at_start(mesh.owner, local, 1 if gaps else 0.0)
        else:
            origin, direction = batch.origin, batch.direction
            active = np.ones(len(batch.row), dtype=bool)
            s = batch.state
            state = rays.RayState(walker.local_cells(s.cell), walker.local_faces(s.entry),
                                  s.t_now.copy(), s.counted.copy(), s.stuck.copy(),
                                  s.steps.copy())
        if gaps:
            hit, status, width, cells, moved = rays.march_on(
                mesh, origin, direction, active, state, wall, max_steps, walker.foreign)
        else:
            reached, short, moved = rays.within_on(mesh, origin, direction, active,
                                                   batch.limit, state, max_steps,
                                                   walker.foreign)
    end = ~moved
    if gaps:
        hit = np.where(hit >= 0, piece.faces[np.maximum(hit, 0)], -1)
        ended = GapEnds(batch.row[end], hit[end], status[end], width[end], cells[end],
                        origin[end], direction[end])
    else:
        ended = CountEnds(batch.row[end], state.counted[end], reached[end], short[end])
    on = rays.RayState(piece.cells[state.cell[moved]], piece.faces[state.entry[moved]],
                       state.t_now[moved], state.counted[moved], state.stuck[moved],
                       state.steps[moved])
    return ended, Rays(batch.row[moved], origin[moved], direction[moved], batch.limit[moved], on)


__all__ = ["CountEnds", "GapEnds", "Rays", "Starts", "cells_within", "march"]
