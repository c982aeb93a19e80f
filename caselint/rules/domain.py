"""Built-in rule ``domain-extent``: is the domain around a body large enough?

For an external flow the case file names the body (``domain.body``: boundary groups), the
flow direction (``physics.flow.direction``) and which way is up (``domain.up``, default +z;
+y on a 2-D mesh). With e the flow direction, u the up direction made normal to e, and
l = u x e the lateral direction, the body and the mesh are projected on each axis:

- body height H: the body's extent along u;
- inflow and outflow distance: from the body's upstream (downstream) end to the mesh's, along e;
- lateral distance: the smaller of the two sides along l (3-D only); a side the body touches
  (a half model on a mirror plane) is left out;
- top distance: from the body's top to the mesh's, along u;
- blockage ratio: the body's frontal area over the domain's cross-section. The frontal area
  is the sum of the body faces' area vectors facing the flow, projected on e: exact for a
  body that any line along the flow crosses once (a cube, a convex body), larger than the
  true shadow for overlapping parts (on the safe side). The cross-section is the mesh's
  extent along l times that along u (per unit depth in 2-D).

Distances are in H. Projections measure a box-shaped domain aligned with the flow exactly,
and a round domain along its centre lines. Each quantity is graded against its guideline
value (parameters, defaults from the building-wind guidelines, REFERENCES.md section 6)
times the rule's limits, which are fractions of the guideline: a warning below 1x, an
error below 0.5x (blockage: above 1x and 2x its guideline).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.errors import CaseFileError
from caselint.model import Limits, Measurement, Note, Parameter, Rule, RuleResult, Where
from caselint.rulekit import RuleContext, finite_point
from caselint.rulekit.meshview import face_points, used_points

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

_COST = "COST Action 732 best practice guideline (Franke et al., 2007)"
_AIJ = "AIJ guidelines (Tominaga et al., J. Wind Eng. Ind. Aerodyn. 96, 2008)"
#: Guideline parameters: name -> (default, unit, what it is, the boundary it concerns).
GUIDELINES: dict[str, tuple[float, str, str, str]] = {
    "inflow_h": (5.0, "H", "distance from the body to the inflow boundary", "inflow boundary"),
    "outflow_h": (15.0, "H", "distance from the body to the outflow boundary",
                  "outflow boundary"),
    "lateral_h": (5.0, "H", "distance from the body to the nearer side boundary",
                  "side boundaries"),
    "top_h": (5.0, "H", "distance from the body's top to the top boundary", "top boundary"),
    "blockage_percent": (3.0, "%", "blockage ratio", "side and top boundaries"),
}
_WIND_CAUTION = ("Wind loads computed on this domain need review under the local building "
                 "code's wind provisions by a licensed engineer before any structural use.")
# A side closer than this fraction of H is one the body touches (a mirror plane or the ground).
_TOUCH = 1e-6


def _fail(ctx: RuleContext, key: str, message: str) -> CaseFileError:
    return CaseFileError(str(ctx.case.path), message, line=ctx.case.line_of(key), key=key)


def _axes(ctx: RuleContext, dim: int) -> tuple[np.ndarray, np.ndarray, np.ndarray | None]:
    """Unit flow, up and lateral directions; raises CaseFileError for unusable ones."""
    e = np.asarray(ctx.case.physics.flow.direction, dtype=float)
    given_up = ctx.case.domain.up
    up = np.asarray(given_up if given_up is not None else
                    ((0.0, 0.0, 1.0) if dim == 3 else (0.0, 1.0, 0.0)), dtype=float)
    if dim == 2:
        for vec, key in ((e, "physics.flow.direction"), (up, "domain.up")):
            if abs(vec[2]) > 0.01:
                raise _fail(ctx, key, f"the mesh is 2-D (x-y plane): {key} must lie in that "
                                      f"plane, got {[round(float(v), 6) for v in vec]}")
    u = up - (up @ e) * e
    norm = float(np.sqrt(u @ u))
    if norm < 0.01:                 # within about 0.6 deg of the flow: no height axis
        key = "domain.up" if given_up is not None else "physics.flow.direction"
        raise _fail(ctx, key, "the up direction lies along the flow direction; set domain.up "
                              "to the vertical of the model, e.g. [0, 0, 1]")
    u = u / norm
    lateral = np.cross(u, e) if dim == 3 else None
    return e, u, lateral


def _used_points(mesh: "Mesh") -> np.ndarray:
    return mesh.cached("domain.used_points", lambda: mesh.points[used_points(mesh)])


def _limits(guide: float, limits: Limits, worse: str) -> Limits:
    """Absolute limits of one quantity from its guideline and the rule's fractions."""
    def scale(frac: float | None) -> float | None:
        if frac is None:
            return None
        if worse == "lower":
            return guide * frac
        return guide / frac if frac > 0 else None

    return Limits(warn=scale(limits.warn), error=scale(limits.error))


def check_domain_extent(ctx: RuleContext) -> RuleResult:
    """Body-to-boundary distances in body heights, and the blockage ratio."""
    case = ctx.case
    if case.physics.flow.kind == "internal":
        return RuleResult.skip("physics.flow.kind is internal: domain extent applies to "
                               "external flows around a body")
    guides = {name: float(ctx.params[name]) for name in GUIDELINES}
    mesh = ctx.mesh
    missing = [g for g in case.domain.body if g not in mesh.group_names]
    if missing:
        raise _fail(ctx, "domain.body", f"domain.body names {', '.join(map(repr, missing))}, not "
                    f"a boundary group of the mesh; the mesh has: "
                    f"{', '.join(mesh.group_names) or 'none'}")
    e, u, lat = _axes(ctx, mesh.dim)
    index = [mesh.group_names.index(g) for g in case.domain.body]
    faces = mesh.boundary_faces[np.isin(mesh.face_group[mesh.boundary_faces], index)]
    if faces.size == 0:
        return RuleResult.skip("the body groups of domain.body hold no boundary face of the mesh")
    body = face_points(mesh, faces)
    domain = _used_points(mesh)
    be, bu, de, du = body @ e, body @ u, domain @ e, domain @ u
    height = float(bu.max() - bu.min())
    if not height > 0:
        return RuleResult.skip("the body has no height along the up direction (domain.up)")

    def at(along: np.ndarray, end: float) -> tuple[float, float, float] | None:
        """Middle of the body's points where ``along`` is ``end`` (an end face's centre)."""
        return finite_point(body[np.abs(along - end) <= 1e-6 * height].mean(axis=0))

    found = [  # (parameter, value in H or %, point)
        ("inflow_h", (be.min() - de.min()) / height, at(be, be.min())),
        ("outflow_h", (de.max() - be.max()) / height, at(be, be.max())),
        ("top_h", (du.max() - bu.max()) / height, at(bu, bu.max())),
    ]
    notes = []
    width = 1.0
    if lat is not None:
        bl, dl = body @ lat, domain @ lat
        sides = [((bl.min() - dl.min()) / height, at(bl, bl.min())),
                 ((dl.max() - bl.max()) / height, at(bl, bl.max()))]
        open_sides = [s for s in sides if s[0] > _TOUCH]
        if len(open_sides) < len(sides):
            notes.append(Note("the body touches a side boundary (a half model on a mirror "
                              "plane?); that side is not measured", where=Where(key="domain.body")))
        if open_sides:
            found.append(("lateral_h", *min(open_sides, key=lambda s: s[0])))
        width = float(dl.max() - dl.min())
    frontal = float(np.clip(mesh.face_area_vectors[faces] @ e, 0.0, None).sum())
    section = width * float(du.max() - du.min())
    if not section > 0:
        return RuleResult.skip("the mesh has no cross-section normal to the flow direction")
    blockage = 100.0 * frontal / section
    found.append(("blockage_percent", blockage, finite_point(body.mean(axis=0))))

    caution = _WIND_CAUTION if case.info.safety == "structural-wind" else ""
    measurements = []
    for name, value, point in found:
        guide = guides[name]
        _, unit, label, boundary = GUIDELINES[name]
        worse = "higher" if unit == "%" else "lower"
        margin = (value / guide) if worse == "lower" else (guide / value if value > 0 else math.inf)
        shown = (f"H = {height:.4g} m, body frontal area {frontal:.4g} "
                 f"{'m^2' if mesh.dim == 3 else 'm (per unit depth)'}, domain cross-section "
                 f"{section:.4g} {'m^2' if mesh.dim == 3 else 'm'}") if unit == "%" else \
            f"{value * height:.4g} m with body height H = {height:.4g} m"
        detail = f"{shown}; guideline {'at most' if unit == '%' else 'at least'} {guide:g} {unit}"
        fix = (f"Move the {boundary} further from the body, to at least {guide:g} H"
               if unit == "H" else f"Move the {boundary} outwards so the body blocks at most "
                                   f"{guide:g} % of the cross-section")
        fix += f". {caution}".rstrip()
        measurements.append((margin, Measurement(
            value=float(value), where=Where(key="domain.body", point=point), detail=detail,
            fix=fix, label=label, unit=unit, worse=worse,
            limits=_limits(guide, ctx.limits, worse))))
    # tightest first: for a pass the check shows the quantity nearest its guideline
    measurements.sort(key=lambda pair: pair[0])
    return RuleResult(measurements=tuple(m for _, m in measurements), notes=tuple(notes))


DOMAIN_EXTENT = Rule(
    id="domain-extent",
    title="Domain size around a body",
    rationale=(
        "Boundaries too close to a body distort the flow around it: an inflow boundary too "
        "near leaves no room for the approaching flow to adjust, an outflow boundary inside "
        "the wake forces it, and side and top boundaries that squeeze the flow accelerate it "
        "(blockage). For external flows with a declared body (domain.body) the rule measures "
        "the distances from the body to the inflow, outflow, side and top boundaries in body "
        "heights H, and the blockage ratio (frontal area over domain cross-section). Defaults "
        "follow the building-wind guidelines: inflow at least 5H, outflow at least 15H, "
        "sides and top at least 5H, blockage below 3 % (" + _COST + "; " + _AIJ + " gives "
        "outflow 10H). The limits are fractions of each guideline: a warning below 1x, an "
        "error below 0.5x (blockage above 2x); the 0.5x error level is a caselint default. "
        "A rule set for aerodynamic bodies can set other guideline values."
    ),
    source=(_COST + " (lateral, top and blockage values from memory); " + _AIJ
            + " (from memory); error level: caselint default"),
    unit="x guideline",
    limits=Limits(warn=1.0, error=0.5),
    worse="lower",
    hint=("Enlarge the domain around the body: move the boundaries named in the finding "
          "further away (in body heights H), keeping the cells near the body as they are."),
    check=check_domain_extent,
    needs=("mesh", "domain.body", "physics.flow.direction"),
    parameters=tuple(Parameter(name, default, unit, f"guideline {what}", exclusive_minimum=0)
                     for name, (default, unit, what, _) in GUIDELINES.items()),
    measures="domain size around the body, as a fraction of its guideline",
)

RULES: tuple[Rule, ...] = (DOMAIN_EXTENT,)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in domain-extent rule."""
    return list(RULES)
