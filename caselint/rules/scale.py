"""Built-in rule ``mesh-scale``: does the mesh's size agree with the declared flow length?

A mesh exported in millimetres and read as metres is 1000 times too large; every Reynolds
number, y+ and Courant estimate made from it is then wrong. The declared flow length
(``physics.flow.length``: a body length, a channel height, a hydraulic diameter) should lie
within the range of lengths the mesh shows:

- the upper end is the mesh's largest bounding-box extent;
- the lower end is the smallest of: the mesh's smallest bounding-box extent, the median
  width of the gaps between walls (the gap rays of :mod:`caselint.rules.gaps`), the size of the
  smallest inlet, outlet or opening (square root of its area; its length in 2-D), the largest
  extent of the declared body (``domain.body``) and that of the walls away from the mesh's
  bounding box (an obstacle inside the domain).

The measured value is the mismatch factor: 1 when the flow length lies in that range,
otherwise how many times it falls short of the lower end or exceeds the upper end.
Defaults: a warning above 3, an error above 5 (caselint defaults). A unit mix-up shows as a
factor of 10, 25.4, 100, 304.8 or 1000 between the mesh and the flow length; the rule finds
the mesh unit (m, cm, mm, um, in, ft) that would put the flow length in range and names it
in the fix. A mesh that looks too large (the usual slip: millimetres read as metres) is
caught when its lower length is at least 5/factor of the flow length, so a factor of 10
needs a lower length of at least half the flow length; smaller features (a tiny inlet)
widen the range and make the rule more lenient. A mesh that looks too small is caught
when the flow length exceeds the mesh's largest extent by more than the limit: always for
a factor of 1000, for 25.4 only on a compact mesh.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.manifest.case import LENGTH_UNITS
from caselint.mesh.rays import MAX_STEPS
from caselint.model import Limits, Measurement, Rule, RuleResult, Where
from caselint.rulekit import RuleContext, first_limit
from caselint.rulekit.meshview import face_points
from caselint.rulekit.rays import FACING_ANGLE_DEG, gap_rays, shared_wall_rays
from caselint.rulekit.walls import solid_groups

if TYPE_CHECKING:
    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh

#: Mesh units the fix may suggest (those of the case schema's ``mesh.units``).
UNITS: tuple[str, ...] = ("m", "cm", "mm", "um", "in", "ft")
_OPEN_ROLES = ("inlet", "outlet", "open")
# A face lies on the bounding box when within this fraction of the box diagonal of a side.
_ON_BOX = 1e-6


@dataclass(frozen=True)
class MeshLengths:
    """Characteristic lengths of a mesh (m), each with what it is."""

    largest: tuple[float, str]
    candidates: tuple[tuple[float, str], ...]

    @property
    def lowest(self) -> tuple[float, str]:
        """The smallest candidate: the lower end of the plausible flow lengths."""
        return min(self.candidates)


def _extent(points: np.ndarray, dim: int) -> np.ndarray:
    """Extent of ``points`` along x, y (and z in 3-D), m."""
    return points[:, :dim].max(axis=0) - points[:, :dim].min(axis=0)


def mesh_lengths(case: "Case", mesh: "Mesh", max_steps: int) -> MeshLengths:
    """The largest extent of the mesh and the candidates for its smallest typical length."""
    lo, hi = mesh.bounds
    dim = mesh.dim
    extent = (hi - lo)[:dim]
    candidates = [(float(extent.min()), "smallest extent of the mesh")]
    walls = solid_groups(case, mesh)
    if walls:
        hits = shared_wall_rays(mesh, walls, max_steps)
        widths = hits.width[gap_rays(mesh, hits, FACING_ANGLE_DEG)]
        if widths.size:
            candidates.append((float(np.median(widths)), "median gap between walls"))
        wall_faces = np.flatnonzero(np.isin(mesh.face_group,
                                            [mesh.group_names.index(g) for g in walls]))
        centres = mesh.face_centroids[wall_faces][:, :dim]
        tol = _ON_BOX * float(np.sqrt(extent @ extent))
        off_box = ~np.any((np.abs(centres - lo[:dim]) <= tol) | (np.abs(centres - hi[:dim]) <= tol),
                          axis=1)
        if off_box.any():
            size = float(_extent(face_points(mesh, wall_faces[off_box]), dim).max())
            candidates.append((size, "size of the walls inside the domain"))
    body = [g for g in case.domain.body if g in mesh.group_names]
    if body:
        faces = np.flatnonzero(np.isin(mesh.face_group, [mesh.group_names.index(g) for g in body]))
        if faces.size:
            candidates.append((float(_extent(face_points(mesh, faces), dim).max()),
                               "size of the body (domain.body)"))
    openings = sorted(g for g, role in case.mesh.boundaries.items()
                      if role in _OPEN_ROLES and g in mesh.group_names)
    if openings:
        grouped = mesh.boundary_faces[mesh.face_group[mesh.boundary_faces] >= 0]
        areas = np.bincount(mesh.face_group[grouped], weights=mesh.face_areas[grouped],
                            minlength=len(mesh.group_names))
        sizes = [(float(areas[mesh.group_names.index(g)]), g) for g in openings]
        area, name = min(sizes)
        if area > 0:
            size = math.sqrt(area) if dim == 3 else area
            candidates.append((size, f"size of the smallest opening '{name}'"))
    candidates = [(v, w) for v, w in candidates if v > 0]
    return MeshLengths((float(extent.max()), "largest extent of the mesh"), tuple(candidates))


def mismatch(length: float, low: float, high: float) -> float:
    """How many times ``length`` lies outside [low, high]; 1 inside."""
    return max(low / length, length / high, 1.0)


def likely_unit(length: float, low: float, high: float, declared: str) -> str | None:
    """The mesh unit that puts ``length`` inside the mesh's range, if not the declared one."""
    declared_scale = LENGTH_UNITS[declared]
    best: tuple[float, float, str] | None = None
    for unit in UNITS:
        k = LENGTH_UNITS[unit] / declared_scale
        score = (mismatch(length, k * low, k * high),
                 abs(math.log(length / (k * low))),   # flow lengths sit near the lower end
                 unit)
        if unit == declared:
            score = (score[0], -1.0, unit)              # a tie goes to what the case says
        best = score if best is None or score < best else best
    assert best is not None
    return None if best[2] == declared or best[0] > 1.0 else best[2]


def check_mesh_scale(ctx: RuleContext) -> RuleResult:
    """Mismatch factor between the declared flow length and the lengths of the mesh."""
    case = ctx.case
    length = case.physics.flow.length
    mesh = ctx.mesh
    lengths = mesh_lengths(case, mesh, MAX_STEPS)
    (low, low_what), (high, high_what) = lengths.lowest, lengths.largest
    value = mismatch(length, low, high)
    detail = (f"physics.flow.length {length:.4g} m; the mesh's lengths run from {low:.4g} m "
              f"({low_what}) to {high:.4g} m ({high_what}), with mesh.units: {case.mesh.units}")
    fix = ""
    threshold = first_limit(ctx.limits)
    if value > 1.0:
        side = "larger" if low > length else "smaller"
        detail += f"; the mesh is at least {value:.4g} times {side} than the flow length says"
    if threshold is not None and value > threshold:
        # only a clear mismatch earns a unit guess: within the limits, m and ft both fit
        unit = likely_unit(length, low, high, case.mesh.units)
        if unit is not None:
            fix = (f"The mesh looks like it is in {unit}, not {case.mesh.units}: set "
                   f"mesh.units: {unit} (or, if the mesh is right, correct "
                   "physics.flow.length).")
        else:
            fix = (f"No mesh unit explains the factor {value:.4g}: check physics.flow.length "
                   "(it should be a length of the geometry: body length, channel height, "
                   "hydraulic diameter) and mesh.units.")
    where = Where(key="physics.flow.length")
    return RuleResult(measurements=(Measurement(value=value, where=where, detail=detail,
                                                fix=fix),))


MESH_SCALE = Rule(
    id="mesh-scale",
    title="Mesh size against the declared flow length",
    rationale=(
        "A mesh written in one length unit and read in another (millimetres read as metres, "
        "inches as millimetres) is off by a factor of 10, 25.4, 100, 304.8 or 1000, and every "
        "Reynolds number, y+ and time step set from the declared physics is then wrong. "
        "caselint compares physics.flow.length with the range of lengths the mesh shows: its "
        "largest extent above, and below the smallest of its smallest extent, the median gap "
        "between walls, the smallest opening and the size of the body or obstacles. The "
        "measured value is how many times the flow length lies outside that range (1 inside); "
        "a warning above 3 and an error above 5 are caselint defaults. The fix names the mesh "
        "unit that would bring the two into agreement."
    ),
    source="caselint default (a unit mix-up is a factor of 10 or more)",
    unit="x",
    limits=Limits(warn=3.0, error=5.0),
    hint=("Check mesh.units against the unit the mesh was exported in, and physics.flow.length "
          "against the geometry."),
    check=check_mesh_scale,
    needs=("physics.flow.length", "mesh"),
    measures="mismatch factor between the declared flow length and the mesh's lengths",
)

RULES: tuple[Rule, ...] = (MESH_SCALE,)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in mesh-scale rule."""
    return list(RULES)
