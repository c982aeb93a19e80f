"""Rule ``wall-yplus``: the first wall distance in wall units against the wall treatment.

y+ = y u_tau / nu at every wall face, with y the first cell centre's wall distance in a
cell-centred finite-volume case and the first node's in a vertex-centred finite-volume or
finite-element one (on a prism or hexahedral layer the same mesh gives twice the y+), and
u_tau from a mesh field or a correlation (:mod:`caselint.rulekit.wallflow`). The band
depends on the declared wall treatment: each side of each band is a grade of the rule
(``resolved``, the main grade; ``wall-function.low``, ``wall-function.high``,
``blended.buffer``, ``les.dx-plus``, ``les.dz-plus``).
"""

from __future__ import annotations

import dataclasses

import numpy as np

from caselint import hookimpl
from caselint.model import (
    Grade,
    Limits,
    Measurement,
    Note,
    Parameter,
    PlotData,
    PlotSeries,
    Rule,
    RuleResult,
    Where,
    log_bin_edges,
)
from caselint.rulekit import RuleContext, at_face, finite_point, first_limit, plural
from caselint.rulekit import wallflow
from caselint.rulekit.cases import stores_at_nodes, wall_treatment
from caselint.rulekit.meshview import face_point_ids
from caselint.rulekit.walls import locate, walls
from caselint.rulekit.words import area_distribution, area_share


def _spacing(mesh, faces, normals, direction):
    """Wall-parallel extents of each face along and across the flow (m); NaN-free mask."""
    tang = direction[None, :] - (normals @ direction)[:, None] * normals
    size = np.linalg.norm(tang, axis=1)
    usable = size > 0.1                       # flow not (nearly) normal to the wall
    t = tang / np.where(usable, size, 1.0)[:, None]
    s = np.cross(normals, t)
    pts = mesh.points[face_point_ids(mesh, faces)]
    along = np.einsum("ikj,ij->ik", pts, t)
    across = np.einsum("ikj,ij->ik", pts, s)
    return np.ptp(along, axis=1), np.ptp(across, axis=1), usable


class _Band:
    """Builds the measurements of one boundary for the declared wall treatment."""

    def __init__(self, ctx: RuleContext, fv: bool, nu: float, source: str) -> None:
        self.ctx, self.fv, self.nu, self.source = ctx, fv, nu, source
        self.p = ctx.params
        self.label = "y+ of the first cell centre" if fv else "y+ of the first node"

    def _height(self, y_plus: float, u_tau: float) -> str:
        """Words for the first wall distance (and layer height) giving ``y_plus``."""
        y = y_plus * self.nu / u_tau
        if self.fv:
            return f"a first-cell centre {y:.3g} m from the wall (first-layer height {2 * y:.3g} m)"
        return f"a first-layer height of {y:.3g} m"

    def side(self, mesh, name, faces, yp, u_tau, worse, grade, what) -> Measurement:
        """The extreme y+ on one side of the band (``grade``), located, with a fix."""
        limits = self.ctx.grade(grade)
        threshold = first_limit(limits)
        where, worst, count = locate(mesh, faces, yp, threshold, worse, name)
        word = "above" if worse == "higher" else "below"
        lead = (f"{count} of {plural(len(faces), 'face')} {word} {threshold:g}"
                if count else "no face past the limit")
        detail = (f"{lead}; {what} {yp[worst]:.3g} at {at_face(mesh, int(faces[worst]))}; "
                  f"y+ from {self.source}")
        if threshold is None:
            fix = ""
        elif worse == "higher":
            u = float(u_tau.max())
            fix = (f"Thin the first layer: {self._height(threshold, u)} gives y+ = "
                   f"{threshold:g} at u_tau = {u:.3g} m/s.")
        else:
            u = float(u_tau.min())
            fix = (f"Thicken the first layer: {self._height(threshold, u)} gives y+ = "
                   f"{threshold:g} at u_tau = {u:.3g} m/s.")
        return Measurement(float(yp[worst]), where, detail, fix,
                           label=f"{what} {self.label}", worse=worse, grade=grade)

    def blended(self, mesh, name, faces, yp, areas, u_tau) -> Measurement:
        """Share of the wall area whose y+ lies in the buffer layer."""
        lo, hi = float(self.p["buffer_min"]), float(self.p["buffer_max"])
        inside = (yp > lo) & (yp < hi)
        share = area_share(inside, areas)
        ids = np.flatnonzero(inside)
        ids = ids[np.lexsort((ids, -areas[ids]))][:10]
        point = finite_point(mesh.face_centroids[faces[ids[0]]]) if ids.size else None
        where = Where(boundary=name, faces=tuple(int(f) for f in faces[ids]),
                      face_count=int(inside.sum()), point=point)
        u = float(np.median(u_tau))
        fix = (f"Move the first cell out of the buffer layer: {self._height(lo, u)} or less "
               f"(y+ < {lo:g}), or {self._height(hi, u)} or more (y+ > {hi:g}), at u_tau = "
               f"{u:.3g} m/s.")
        return Measurement(share, where, f"{int(inside.sum())} of {plural(len(faces), 'face')} "
                           f"with {lo:g} < y+ < {hi:g}; y+ from {self.source}", fix,
                           label=f"share of the wall area in the buffer layer ({lo:g} < y+ < "
                                 f"{hi:g})",
                           grade="blended.buffer")

    def les(self, mesh, name, faces, normals, u_tau, direction) -> list[Measurement]:
        """Largest streamwise and spanwise wall spacings in wall units (wall-resolved LES)."""
        dx, dz, usable = _spacing(mesh, faces, normals, direction)
        out = []
        sides = [("dx", dx, "streamwise", "les.dx-plus")]
        if mesh.dim == 3:
            sides.append(("dz", dz, "spanwise", "les.dz-plus"))
        for tag, extent, word, grade in sides:
            if not usable.any():
                continue
            plus = np.where(usable, extent * u_tau / self.nu, 0.0)
            limit = first_limit(self.ctx.grade(grade))
            where, worst, count = locate(mesh, faces, plus, limit, "higher", name)
            u = float(u_tau.max())
            fix = (f"Refine the wall faces {word}: a {word} face size of at most "
                   f"{limit * self.nu / u:.3g} m gives {tag}+ = {limit:g} at u_tau = "
                   f"{u:.3g} m/s." if limit else "")
            lead = f"{plural(count, 'face')} above {limit:g}; " if count else ""
            detail = f"{lead}largest at {at_face(mesh, int(faces[worst]))}"
            out.append(Measurement(float(plus[worst]), where, detail, fix,
                                   label=f"largest {word} wall spacing {tag}+", grade=grade))
        return out


def _both_ends(ctx, band, mesh, name, faces, yp, u_tau) -> list[Measurement]:
    """The low and high ends of a wall-function band, the end nearer its limit first (the
    one a passing check shows), each naming the other end."""
    low = band.side(mesh, name, faces, yp, u_tau, "lower", "wall-function.low", "smallest")
    high = band.side(mesh, name, faces, yp, u_tau, "higher", "wall-function.high", "largest")
    span = f"; y+ on '{name}' ranges from {yp.min():.3g} to {yp.max():.3g}"
    low = dataclasses.replace(low, detail=low.detail + span)
    high = dataclasses.replace(high, detail=high.detail + span)

    def margin(value: float, limit: float | None, worse: str) -> float:
        if limit is None or value <= 0 or limit <= 0:
            return float("inf")
        return value / limit if worse == "lower" else limit / value

    near_low = margin(low.value, first_limit(ctx.grade("wall-function.low")), "lower")
    near_high = margin(high.value, first_limit(ctx.grade("wall-function.high")), "higher")
    return [low, high] if near_low <= near_high else [high, low]


def check_wall_yplus(ctx: RuleContext) -> RuleResult:
    """y+ of the first wall distance on every wall face, graded for the wall treatment."""
    found = walls(ctx)
    if isinstance(found, str):
        return RuleResult.skip(found)
    case, mesh, layers = ctx.case, ctx.mesh, found.layers
    mode, why = wall_treatment(case)
    if mode is None:
        return RuleResult.skip(why)
    fv = not stores_at_nodes(case.physics.method)
    friction, notes = wallflow.mesh_friction(case, mesh, layers.faces, layers.cells)
    flow = wallflow.flow_data(case, need_kind=friction is None, need_model=friction is None,
                              need_velocity=friction is None)
    if isinstance(flow, str):
        return RuleResult(skipped=flow, notes=tuple(Note(n) for n in notes))
    if friction is None:
        friction = wallflow.correlation_friction(
            flow, mesh.face_centroids[layers.faces], float(ctx.params["relative_roughness"]))
        if isinstance(friction, str):
            return RuleResult.skip(friction)
    return _graded(ctx, found, mode, why, fv, flow, friction, notes)


def _graded(ctx, found, mode, why, fv, flow, friction, notes) -> RuleResult:
    mesh, layers = ctx.mesh, found.layers
    distance = layers.centre_distance if fv else layers.first_height
    y_plus = distance * friction.u_tau / flow.nu
    band = _Band(ctx, fv, flow.nu, friction.source)
    wall_kind = ("first cell centre (cell-centred storage)" if fv else
                 f"first node ({ctx.case.physics.method} storage)")
    messages = [f"y+ from {friction.source}; wall distance of the {wall_kind}; {why}",
                *friction.notes, *notes]
    no_stack = int(np.count_nonzero(~layers.layered_first))
    if no_stack:
        messages.append(f"{plural(no_stack, 'wall face')} with no layer cell on it (a "
                        "tetrahedron, pyramid or damaged cell, no prism or hexahedron): wall "
                        "distance of the first cell's " + ("centroid" if fv else "farthest vertex"))
    measurements: list[Measurement] = []
    by_area: list[Note] = []
    per_wall: list[tuple[str, np.ndarray]] = []
    les = ctx.case.physics.turbulence.model == "les" and mode == "resolved"
    for name, rows in found.items():
        good = rows[distance[rows] > 0]
        if good.size < rows.size:
            messages.append(f"{plural(rows.size - good.size, 'face')} of '{name}' with a "
                            "degenerate first cell left out (see inverted-cells)")
        if good.size == 0:
            continue
        faces, yp, u_tau = layers.faces[good], y_plus[good], friction.u_tau[good]
        per_wall.append((name, yp))
        areas = mesh.face_areas[faces]
        lo, hi = float(ctx.params["buffer_min"]), float(ctx.params["buffer_max"])
        by_area.append(Note(
            f"{band.label} on '{name}' by area: {area_distribution(yp, areas)}; "
            f"{area_share(yp < lo, areas):.0f} % below {lo:g}, "
            f"{area_share((yp >= lo) & (yp <= hi), areas):.0f} % from {lo:g} to {hi:g}, "
            f"{area_share(yp > hi, areas):.0f} % above {hi:g}", Where(boundary=name)))
        if mode == "resolved":
            measurements.append(band.side(mesh, name, faces, yp, u_tau, "higher",
                                          "resolved", "largest"))
        elif mode == "wall-function":
            measurements.extend(_both_ends(ctx, band, mesh, name, faces, yp, u_tau))
        else:
            measurements.append(band.blended(mesh, name, faces, yp, areas, u_tau))
        if les and flow.direction is not None:
            measurements.extend(band.les(mesh, name, faces, layers.normals[good], u_tau,
                                         flow.direction))
    if les and flow.direction is None:
        messages.append("dx+ and dz+ of wall-resolved LES not checked: the case gives no "
                        "physics.flow.direction")
    result_notes = tuple(Note(m) for m in messages) + tuple(by_area)
    if not measurements:
        return RuleResult(skipped="every wall face has a degenerate first cell (see "
                                  "inverted-cells)", notes=result_notes)
    drawn = _drawn_limits(ctx, mode)
    return RuleResult(tuple(measurements), notes=result_notes,
                      plots=(_yplus_histogram(per_wall, band.label, drawn),))


def _drawn_limits(ctx: RuleContext, mode: str) -> Limits | None:
    """The upper limits drawn on the y+ histogram: the band's top for the declared treatment."""
    if mode == "resolved":
        return ctx.limits
    if mode == "wall-function":
        return ctx.grade("wall-function.high")
    return None


def _yplus_histogram(per_wall: list[tuple[str, np.ndarray]], label: str,
                     limits: Limits | None) -> PlotData:
    """Face counts of y+ per wall boundary on log-spaced bins (four per decade)."""
    edges = log_bin_edges(np.concatenate([yp for _, yp in per_wall]))
    return PlotData(title=f"{label} per wall boundary", x_label=label, y_label="wall faces",
                    series=tuple(PlotSeries.histogram(yp, edges, label=name)
                                 for name, yp in per_wall),
                    limits=limits, x_log=True)


WALL_YPLUS = Rule(
    id="wall-yplus",
    title="First-cell y+ against the wall treatment",
    rationale=(
        "y+ = y u_tau / nu of the first wall distance y (the first cell centre's in a "
        "cell-centred finite-volume case, the first node's, one layer height, in a "
        "vertex-centred finite-volume or finite-element one; physics.method) decides whether "
        "the wall treatment works as intended. Wall regions (Pope, Turbulent Flows, 2000, 7.1): "
        "viscous sublayer y+ < 5, buffer layer 5-30, log layer above 30. A resolved (low-Re) "
        "wall needs y+ about 1 (Menter, AIAA J. 32, 1994: SST wall omega for y+ < 3; AIAA Drag "
        "Prediction Workshop gridding guidelines): grade resolved, warning above 1, error "
        "above 5 (the rule's main limits). Log-law wall functions (Launder & Spalding 1974) "
        "need the first point in the log layer, 30 to 300: grade wall-function.low, an error "
        "below 30, where the log law is applied outside its range; grade wall-function.high, "
        "a warning above 300 and an error above 500 (Versteeg & Malalasekera 2007). Blended "
        "treatments accept any y+ but are least accurate in the buffer layer: grade "
        "blended.buffer, a warning when more than 50 % of a wall's area lies there (common "
        "practice). Wall-resolved LES also needs dx+ <= 150 (grade les.dx-plus) and dz+ <= 40 "
        "(les.dz-plus) along the wall (Piomelli & Chasnov 1996; Georgiadis et al., AIAA J. 48, "
        "2010). u_tau comes from a wall-shear or friction-"
        "velocity field in the mesh file when there is one, else from Schlichting's "
        "(turbulent) or Blasius' (laminar) flat-plate skin friction for external flow and "
        "the Colebrook equation (64/Re when laminar) for internal flow. Band values are "
        "recalled from these sources (from memory)."
    ),
    source=("Pope 2000; Menter 1994; AIAA Drag Prediction Workshop gridding guidelines; "
            "Launder & Spalding 1974; Versteeg & Malalasekera 2007; Piomelli & Chasnov 1996; "
            "Georgiadis et al. 2010; Schlichting 1979; Blasius 1908; Colebrook 1939"),
    unit="",
    limits=Limits(warn=1.0, error=5.0),
    main_grade="resolved",
    main_description="resolved (low-Re) walls: largest y+",
    grades=(
        Grade("wall-function.low", error=30.0, worse="lower",
              description="wall functions: smallest y+ (buffer layer and below)",
              source="Launder & Spalding 1974"),
        Grade("wall-function.high", warn=300.0, error=500.0,
              description="wall functions: largest y+",
              source="log layer to 300: Launder & Spalding 1974; error above 500: Versteeg & "
                     "Malalasekera 2007"),
        Grade("blended.buffer", warn=50.0, unit="%",
              description="blended treatment: percent of a wall's area in the buffer layer",
              source="common practice"),
        Grade("les.dx-plus", warn=150.0,
              description="wall-resolved LES: largest streamwise spacing dx+",
              source="Piomelli & Chasnov 1996"),
        Grade("les.dz-plus", warn=40.0,
              description="wall-resolved LES: largest spanwise spacing dz+",
              source="Georgiadis et al. 2010"),
    ),
    hint=("Change the first-layer height to bring y+ into the band of the wall treatment, or "
          "choose the wall treatment that matches the mesh."),
    check=check_wall_yplus,
    needs=("walls", "mesh"),
    parameters=(
        Parameter("buffer_min", 5.0, "", "lower edge of the buffer layer (Pope 2000)",
                  minimum=0),
        Parameter("buffer_max", 30.0, "", "upper edge of the buffer layer (Pope 2000)",
                  minimum=0),
        Parameter("relative_roughness", 0.0, "", "internal flow: wall roughness over the "
                  "hydraulic diameter, eps/D, in the Colebrook equation", minimum=0),
    ),
    measures="largest first-cell y+",
)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The y+ rule."""
    return [WALL_YPLUS]
