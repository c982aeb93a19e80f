"""Choosing walls: the no-slip wall boundaries of a case, their layer stacks, and locating
the worst of their faces.

A wall here is a boundary group whose role in ``mesh.boundaries`` is ``wall`` (a no-slip
wall) in a viscous case; ``slip-wall`` boundaries (inviscid or slip walls), and every wall
of an inviscid case (``physics.turbulence.model: inviscid``), are not walls for the
near-wall rules. For geometry (passages between walls) both kinds are solid: see
:func:`solid_groups`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.wall_layers import WallLayers, wall_layers
from caselint.model import MAX_LISTED_IDS, Where
from caselint.rulekit.locate import cell_names, finite_point, worst_ids

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh

#: The boundary role of a no-slip wall.
WALL_ROLE = "wall"
#: Roles of solid boundaries: no flow through them, with or without slip.
SOLID_ROLES = ("wall", "slip-wall")


def inviscid(case: "Case") -> bool:
    """Whether the case solves inviscid flow (no boundary layer anywhere)."""
    turbulence = getattr(getattr(case, "physics", None), "turbulence", None)
    return getattr(turbulence, "model", None) == "inviscid"


def wall_groups(case: "Case", mesh: "Mesh") -> tuple[str, ...]:
    """Groups of the mesh that the case file gives the role ``wall`` (no-slip), sorted;
    none in an inviscid case."""
    if inviscid(case):
        return ()
    return tuple(sorted(g for g, role in case.mesh.boundaries.items()
                        if role == WALL_ROLE and g in mesh.group_names))


def solid_groups(case: "Case", mesh: "Mesh") -> tuple[str, ...]:
    """Groups the case file gives a solid role (``wall`` or ``slip-wall``), sorted."""
    return tuple(sorted(g for g, role in case.mesh.boundaries.items()
                        if role in SOLID_ROLES and g in mesh.group_names))


def wall_faces(case: "Case", mesh: "Mesh") -> np.ndarray:
    """Ids of the boundary faces in the case's no-slip wall groups, sorted."""
    walls = wall_groups(case, mesh)
    if not walls:
        return np.zeros(0, dtype=np.int64)
    index = np.asarray([mesh.group_names.index(g) for g in walls], dtype=np.int64)
    faces = mesh.boundary_faces
    return np.sort(faces[np.isin(mesh.face_group[faces], index)]).astype(np.int64)


def wall_cell_count(case: "Case", mesh: "Mesh", cells: np.ndarray) -> int | None:
    """How many of ``cells`` touch a no-slip wall; None when no wall group is named."""
    if not wall_groups(case, mesh):
        return None
    at_wall = np.zeros(mesh.n_cells, dtype=bool)
    at_wall[mesh.owner[wall_faces(case, mesh)]] = True
    return int(at_wall[cells].sum())


@dataclass(frozen=True)
class Walls:
    """The case's wall boundaries (sorted by name) and the stacks above their faces."""

    names: tuple[str, ...]
    rows: tuple[np.ndarray, ...]      # per boundary, rows of ``layers`` (its faces)
    layers: WallLayers

    def items(self):
        """(boundary name, rows) pairs."""
        return zip(self.names, self.rows)


def walls(ctx: "RuleContext", reach_m: float = 0.0) -> Walls | str:
    """The wall boundaries with faces in the mesh and their stacks, or a skip reason.

    The walks go past each stack up to ``reach_m`` from the wall (none further by default).
    """
    if inviscid(ctx.case):
        return ("the case is inviscid (physics.turbulence.model: inviscid): its walls slip "
                "and no boundary layer forms")
    named = sorted(n for n, role in ctx.case.mesh.boundaries.items() if role == WALL_ROLE)
    if not named:
        slip = sorted(n for n, role in ctx.case.mesh.boundaries.items() if role == "slip-wall")
        if slip:
            return (f"no no-slip wall: the solid boundaries ({', '.join(slip)}) are slip walls, "
                    "where no boundary layer forms")
        return "no boundary has role wall in mesh.boundaries"
    mesh = ctx.mesh
    groups = [(n, mesh.group_faces(n)) for n in named if n in mesh.group_names]
    groups = [(n, f) for n, f in groups if f.size]
    if not groups:
        return f"the wall boundaries ({', '.join(named)}) have no faces in the mesh"
    layers = wall_layers(mesh, np.concatenate([f for _, f in groups]), reach_m=reach_m)
    rows = tuple(layers.rows_of(np.sort(f)) for _, f in groups)
    return Walls(tuple(n for n, _ in groups), rows, layers)


def locate(mesh: "Mesh", faces: np.ndarray, values: np.ndarray, threshold: float | None,
           worse: str, boundary: str) -> tuple[Where, int, int]:
    """Where of the faces past ``threshold`` (worst first), the worst's index and the count."""
    local, count = worst_ids(values, threshold, worse)
    worst = int(local[0])
    if count:
        bad = values > threshold if worse == "higher" else values < threshold
        cells = np.unique(mesh.owner[faces[bad]])
        listed_cells = mesh.owner[faces[local]]
        _, first = np.unique(listed_cells, return_index=True)
        listed_cells = listed_cells[np.sort(first)][:MAX_LISTED_IDS]
    else:
        cells = listed_cells = np.zeros(0, dtype=np.int64)
    where = Where(
        boundary=boundary,
        faces=tuple(int(f) for f in faces[local]) if count else (),
        face_count=count,
        cells=cell_names(mesh, listed_cells),
        cell_count=int(cells.size),
        point=finite_point(mesh.face_centroids[faces[worst]]),
    )
    return where, worst, count
