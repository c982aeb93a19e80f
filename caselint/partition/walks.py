"""The walks of a mesh analysed in partitions, made partition by partition: what a
:class:`~caselint.mesh.analysis.Mesh` made by
:func:`caselint.partition.measure.analysed_in_partitions` calls for its gap rays
(:func:`caselint.mesh.rays.march`, :func:`caselint.mesh.rays.cells_within`) and wall-layer
stacks (:func:`caselint.mesh.wall_layers.wall_layers`, and the cells in them,
:func:`caselint.rulekit.stacks.layer_cells`) instead of walking the whole mesh.

The mesh's functions check their input, keep their results in the mesh's memo and call
the provider in place of the whole-mesh walk, so every rule and rule kit that casts rays
or walks stacks gets the partitioned walks without knowing of them; the results are the
whole-mesh walks' to the bit (:mod:`caselint.partition.rays`,
:mod:`caselint.partition.stacks`).

The partitions' walkers (a piece each, with its geometry once computed) are made once,
when :func:`~caselint.partition.measure.analysed_in_partitions` measures them, and kept
for every walk where the runner runs its tasks (:func:`caselint.partition.runners.hold`:
in this process, or on the cluster's workers, the client holding futures); each round of
a walk sends a task the walks it takes on, the ids of the walls its walks can meet and
that future.
"""

from __future__ import annotations

import functools
import math
from typing import Callable, Iterable

import numpy as np

from caselint.mesh.model import MeshData
from caselint.mesh.rays import Crossing, RayHits
from caselint.mesh.wall_layers import WallLayers
from caselint.partition import rays as partition_rays
from caselint.partition import stacks as partition_stacks
from caselint.partition.exchange import Walker
from caselint.partition.piece import Piece, Pieces
from caselint.partition.plan import Plan
from caselint.partition.runners import hold


def walker_of(make: Callable[[object], Piece], item) -> Walker:
    """The walker of the piece ``make(item)`` (made where the tasks run)."""
    return Walker(make(item))


class PartitionWalks:
    """Rays and stacks of ``data`` walked in the partitions of ``plan``, each round's tasks
    run by ``run``, the pieces got as ``pieces`` says (see the module docstring)."""

    def __init__(self, data: MeshData, plan: Plan,
                 run: Callable[[Callable, Iterable], Iterable], pieces: Pieces) -> None:
        self.data, self.plan, self.run, self.pieces = data, plan, run, pieces
        self._team: list | None = None
        self.rounds = 0                 # exchange rounds run so far (all walks)

    def team(self) -> list:
        """The partitions' walkers (or futures of them), made on first use."""
        if self._team is None:
            self._team = hold(self.run, functools.partial(walker_of, self.pieces.make),
                              self.pieces.items())
        return self._team

    def march(self, start_faces: np.ndarray, wall: np.ndarray, max_steps: int) -> RayHits:
        """:func:`caselint.mesh.rays.march` (arguments checked there)."""
        hits, rounds = partition_rays.march(self.data, self.plan, start_faces, wall, max_steps,
                                            run=self.run, team=self.team())
        self.rounds += rounds
        return hits

    def cells_within(self, start_faces: np.ndarray, limit_m: np.ndarray,
                     max_steps: int) -> Crossing:
        """:func:`caselint.mesh.rays.cells_within` (arguments checked there)."""
        crossing, rounds = partition_rays.cells_within(
            self.data, self.plan, start_faces, limit_m, max_steps, run=self.run,
            team=self.team())
        self.rounds += rounds
        return crossing

    def wall_layers(self, faces: np.ndarray, shape: tuple[float, float, float],
                    turn_deg: float, max_cells: int, reach_m: float = math.inf) -> WallLayers:
        """The walk of :func:`caselint.mesh.wall_layers.wall_layers`; ``shape`` is
        (max_aspect, min_ratio, jump_ratio)."""
        max_aspect, min_ratio, jump_ratio = shape
        layers, rounds = partition_stacks.wall_layers(
            self.data, self.plan, faces, max_aspect=max_aspect, min_ratio=min_ratio,
            jump_ratio=jump_ratio, turn_deg=turn_deg, max_cells=max_cells, reach_m=reach_m,
            run=self.run, team=self.team())
        self.rounds += rounds
        return layers

    def layer_cells(self, faces: np.ndarray, cells: np.ndarray,
                    n_layers: np.ndarray) -> np.ndarray:
        """:func:`caselint.rulekit.stacks.layer_cells`: the cells of the stacks."""
        marked, rounds = partition_stacks.layer_cells(self.data, self.plan, faces, cells,
                                                      n_layers, run=self.run,
                                                      team=self.team())
        self.rounds += rounds
        return marked


__all__ = ["PartitionWalks", "walker_of"]
