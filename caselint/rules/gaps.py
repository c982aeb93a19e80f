"""Built-in rule ``gap-cells``: how many cells span each passage between walls.

Rays are cast from every wall face along its inward normal and marched through the mesh
(:mod:`caselint.mesh.rays`); a ray that ends on another wall face (or on the wall it
started from) crosses a gap, and the cells it passed through are the cells across that
gap. A ray that leaves through an inlet, outlet, symmetry plane or other open boundary
crosses no gap. Every wall-to-wall ray counts: a wide room gives many cells and passes.

The report is per pair of wall groups, the order of the two names not mattering: its
smallest cell count, where that narrowest spot is (the middle of the ray) and how wide
the gap is there. A pair's finding is scoped to the alphabetically first of the two group
names (``Where.boundary``), so a waiver for it names that boundary.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.mesh.rays import LOST, MAX_STEPS, WALL, RayHits
from caselint.model import (
    MAX_LISTED_IDS, Limits, Measurement, Note, Parameter, Rule, RuleResult, Where,
)
from caselint.rulekit import RuleContext, cell_names, finite_point, first_limit, plural, point_words
from caselint.rulekit.rays import FACING_ANGLE_DEG, gap_rays, shared_wall_rays
from caselint.rulekit.walls import solid_groups

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh


def _pair_measurement(mesh: "Mesh", hits: RayHits, rays: np.ndarray, pair: tuple[str, str],
                      limits: Limits) -> Measurement:
    """Measurement of one pair of wall groups from its rays, sorted worst first."""
    threshold = first_limit(limits)
    worst = int(rays[0])
    cells = int(hits.cells[worst])
    width = float(hits.width[worst])
    below = rays[hits.cells[rays] < threshold] if threshold is not None else rays[:0]
    listed = below[:MAX_LISTED_IDS]
    start_faces = hits.start_face[listed]
    first, second = pair
    point = finite_point(hits.midpoint(worst))
    across = f"across '{first}'" if first == second else f"between '{first}' and '{second}'"
    detail = (f"narrowest gap {across}: {plural(cells, 'cell')} across {width:.4g} m"
              f"{point_words(point)}; ")
    if threshold is None:
        detail += f"{plural(rays.size, 'ray')} cross this gap"
    elif below.size:
        detail += (f"{below.size} of {plural(rays.size, 'ray')} across it cross fewer than "
                   f"{threshold:g} cells")
    else:
        detail += f"all {plural(rays.size, 'ray')} across it cross at least {threshold:g} cells"
    target = first_limit(limits)
    fix = ""
    if target is not None and cells < target:
        fix = (f"Refine across the gap {across} ({width:.3g} m wide): at least {target:g} "
               f"cells across, i.e. cells about {width / target:.3g} m or smaller in that "
               "direction, or a local refinement zone over the gap.")
    where = Where(
        boundary=first,
        faces=tuple(int(f) for f in start_faces),
        face_count=int(below.size),
        cells=cell_names(mesh, mesh.owner[start_faces]),
        cell_count=int(np.unique(mesh.owner[hits.start_face[below]]).size),
        point=point,
    )
    return Measurement(value=float(cells), where=where, detail=detail, fix=fix)


def check_gap_cells(ctx: RuleContext) -> RuleResult:
    """Fewest cells across a wall-to-wall gap, per pair of wall groups."""
    mesh = ctx.mesh
    steps, facing = int(ctx.params["max_steps"]), float(ctx.params["facing_angle_deg"])
    walls = solid_groups(ctx.case, mesh)
    if not walls:
        return RuleResult.skip("no wall or slip-wall group of mesh.boundaries is in the mesh, "
                               "so there is no passage between walls to measure")
    hits = shared_wall_rays(mesh, walls, steps)
    notes = []
    lost = int(np.count_nonzero(hits.status == LOST))
    if lost:
        notes.append(Note(f"{plural(lost, 'ray')} from the walls stopped inside the mesh (a "
                          f"degenerate cell, or more than {steps} cells crossed) and "
                          "are not counted"))
    gap = gap_rays(mesh, hits, facing)
    if gap.size == 0:
        glancing = int(np.count_nonzero(hits.status == WALL))
        corner = (f", or meet another wall at more than {facing:g} deg from head-on (a corner, "
                  "not a passage)" if glancing else "")
        return RuleResult(skipped=(
            f"no passage between walls: the {plural(hits.n_rays, 'ray')} cast from the walls "
            f"leave through inlets, outlets, symmetry planes or other open boundaries{corner}"),
            notes=tuple(notes))
    g_start = mesh.face_group[hits.start_face[gap]].astype(np.int64)
    g_hit = mesh.face_group[hits.hit_face[gap]].astype(np.int64)
    n_groups = len(mesh.group_names)
    key = np.minimum(g_start, g_hit) * n_groups + np.maximum(g_start, g_hit)
    # per pair, worst first: fewest cells, then narrowest, then lowest start face id
    order = np.lexsort((hits.start_face[gap], hits.width[gap], hits.cells[gap], key))
    sorted_keys = key[order]
    starts = np.flatnonzero(np.r_[True, sorted_keys[1:] != sorted_keys[:-1]])
    ends = np.r_[starts[1:], sorted_keys.size]
    measurements = []
    for lo, hi in zip(starts, ends):                  # one pass per pair of groups
        pair_key = int(sorted_keys[lo])
        pair = (mesh.group_names[pair_key // n_groups], mesh.group_names[pair_key % n_groups])
        measurements.append(_pair_measurement(mesh, hits, gap[order[lo:hi]], pair, ctx.limits))
    measurements.sort(key=lambda m: (m.value, m.where.boundary or "", m.detail))
    return RuleResult(measurements=tuple(measurements), notes=tuple(notes))


GAP_CELLS = Rule(
    id="gap-cells",
    title="Cells across gaps between walls",
    rationale=(
        "A narrow passage between walls (a channel, a slot between fins, the clearance under "
        "a part) needs enough cells across it to resolve the velocity profile; with too few, "
        "the wall shear, the pressure drop and the flow split between passages are wrong. "
        "caselint casts a ray from every wall face along its inward normal and counts the "
        "cells it crosses until it reaches another wall; rays leaving through an inlet, "
        "outlet, symmetry plane or other open boundary are not gaps, and nor are rays meeting "
        "the far wall more than facing_angle_deg (45 deg) from head-on, which happens in a "
        "corner whose walls meet at an angle rather than across a passage. Reported per pair of "
        "wall groups: the fewest cells across, where, and the gap width. At least 5-10 cells "
        "across a gap or channel height is common practice: error below 5, warning below 10. "
        "On tetrahedral meshes a ray crosses more cells than there are cell layers (about "
        "two to three tetrahedra per layer), so the count flatters them."
    ),
    source="common practice (5-10 cells across a gap or channel height)",
    unit="cells",
    limits=Limits(warn=10, error=5),
    worse="lower",
    hint=("Refine across the narrow passage: more cells between the two walls (a local "
          "refinement zone, a finer surface size on both walls, or more layers in a swept "
          "block)."),
    check=check_gap_cells,
    needs=("solid-walls", "mesh"),
    parameters=(
        Parameter("max_steps", MAX_STEPS, "cells",
                  "Most cells one ray may cross before it is given up (guards against damaged "
                  "meshes)", kind="integer", minimum=1),
        Parameter("facing_angle_deg", FACING_ANGLE_DEG, "deg",
                  "Largest angle between a ray and the far wall's normal for the two walls to "
                  "face each other across a gap (caselint default)", exclusive_minimum=0,
                  maximum=90),
    ),
    measures="fewest cells across a gap between walls",
)

RULES: tuple[Rule, ...] = (GAP_CELLS,)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in gap rule."""
    return list(RULES)
