"""Rays from the walls, cast once per mesh and shared by the rules that use them.

``gap-cells`` counts the cells across each passage between walls and ``mesh-scale`` takes
the median gap width as one of the mesh's lengths: both read the rays of
:mod:`caselint.mesh.rays` from every no-slip wall face, the most expensive stage of a check.
The march is cast once per mesh and set of walls. What a smaller step limit would give is
derived from a cast with a larger one exactly (a ray that crossed more cells than the
limit is lost, having crossed the limit's number of cells), so a cast covers every rule's
``max_steps`` up to its own; casts use at least :data:`~caselint.mesh.rays.MAX_STEPS`.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.rays import LOST, MAX_STEPS, WALL, RayHits, hit_angles_deg, wall_rays

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: Default of ``gap-cells``' ``facing_angle_deg``: the walls of a gap face each other
#: within this angle.
FACING_ANGLE_DEG = 45.0


def _limited(hits: RayHits, max_steps: int) -> RayHits:
    """The hits a cast with ``max_steps`` gives, from a cast with at least as many steps."""
    over = hits.cells > max_steps
    if not over.any():
        return hits
    return dataclasses.replace(
        hits,
        status=np.where(over, LOST, hits.status).astype(hits.status.dtype),
        hit_face=np.where(over, -1, hits.hit_face),
        width=np.where(over, 0.0, hits.width),
        cells=np.minimum(hits.cells, max_steps))


def shared_wall_rays(mesh: "Mesh", walls: tuple[str, ...],
                     max_steps: int = MAX_STEPS) -> RayHits:
    """The rays from every face of the wall groups ``walls``, marched at most ``max_steps``
    cells: cast once per mesh and walls (see the module docstring)."""
    names = tuple(sorted(set(walls)))
    casts: dict[int, RayHits] = mesh.cached(f"rulekit.rays:{'|'.join(names)}", dict)
    usable = [steps for steps in casts if steps >= max_steps]
    if not usable:
        steps = max(max_steps, MAX_STEPS)
        casts[steps] = wall_rays(mesh, names, steps)
        usable = [steps]
    return _limited(casts[min(usable)], max_steps)


def gap_rays(mesh: "Mesh", hits: RayHits, facing_deg: float) -> np.ndarray:
    """Ids of the rays that cross a gap: they end on a wall that faces their start."""
    return np.flatnonzero((hits.status == WALL) & (hit_angles_deg(mesh, hits) <= facing_deg))
