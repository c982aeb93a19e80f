"""Rule ``wall-yplus``: the first wall distance in wall units against the wall treatment.

y+ = y u_tau / nu at every wall face, with y the first cell centre's wall distance in a
finite-volume case and the first node's in a finite-element one (the same mesh gives twice
the y+), and u_tau from a mesh field or a correlation (:mod:`caselint.rules.wall_flow`).
The band depends on the declared wall treatment, so the low and high sides carry their
own limits (from the rule's parameters); the rule's own limits are the resolved band.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.model import (
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
from caselint.rules import wall_flow
from caselint.rules.mesh_quality import finite_point, plural
from caselint.rules.wall_scope import (
    area_share, at_face, distribution, locate, number, walls,
)

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext


def treatment(case) -> tuple[str | None, str]:
    """The wall treatment to judge against and why, or None and the skip reason."""
    turb = case.physics.turbulence
    if turb.wall_treatment:
        return turb.wall_treatment, f"declared {turb.wall_treatment} wall treatment"
    if turb.model in ("laminar", "dns"):
        return "resolved", f"a {turb.model} case resolves the wall"
    if turb.model is None:
        return None, "the case gives no physics.turbulence.model nor wall_treatment"
    return None, (f"the case does not say physics.turbulence.wall_treatment (resolved, "
                  f"wall-function or blended) for the {turb.model} model")


def _spacing(mesh, faces, normals, direction):
    """Wall-parallel extents of each face along and across the flow (m); NaN-free mask."""
    tang = direction[None, :] - (normals @ direction)[:, None] * normals
    size = np.linalg.norm(tang, axis=1)
    usable = size > 0.1                       # flow not (nearly) normal to the wall
    t = tang / np.where(usable, size, 1.0)[:, None]
    s = np.cross(normals, t)
    pts = mesh.points[mesh.face_point_table(faces)]
    along = np.einsum("ikj,ij->ik", pts, t)
    across = np.einsum("ikj,ij->ik", pts, s)
    return np.ptp(along, axis=1), np.ptp(across, axis=1), usable


class _Band:
    """Builds the measurements of one boundary for the declared wall treatment."""

    def __init__(self, ctx: "RuleContext", fv: bool, nu: float, source: str) -> None:
        self.ctx, self.fv, self.nu, self.source = ctx, fv, nu, source
        self.p = ctx.params
        self.label = "y+ of the first cell centre" if fv else "y+ of the first node"

    def _height(self, y_plus: float, u_tau: float) -> str:
        """Words for the first wall distance (and layer height) giving ``y_plus``."""
        y = y_plus * self.nu / u_tau
        if self.fv:
            return f"a first-cell centre {y:.3g} m from the wall (first-layer height {2 * y:.3g} m)"
        return f"a first-layer height of {y:.3g} m"

    def side(self, mesh, name, faces, yp, u_tau, worse, limits, what) -> Measurement:
        """The extreme y+ on one side of the band, located, with a fix for that side."""
        threshold = limits.warn if limits.warn is not None else limits.error
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
                           label=f"{what} {self.label}", worse=worse, limits=limits)

    def blended(self, mesh, name, faces, yp, areas, u_tau) -> Measurement:
        """Share of the wall area whose y+ lies in the buffer layer."""
        lo, hi = number(self.p, "buffer_min"), number(self.p, "buffer_max")
        limit = number(self.p, "blended_buffer_share", allow_none=True)
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
                           unit="%", worse="higher", limits=Limits(warn=limit, error=None))

    def les(self, mesh, name, faces, normals, u_tau, direction) -> list[Measurement]:
        """Largest streamwise and spanwise wall spacings in wall units (wall-resolved LES)."""
        dx, dz, usable = _spacing(mesh, faces, normals, direction)
        out = []
        sides = [("dx", dx, "streamwise", "les_dx_plus_max")]
        if mesh.dim == 3:
            sides.append(("dz", dz, "spanwise", "les_dz_plus_max"))
        for tag, extent, word, param in sides:
            if not usable.any():
                continue
            plus = np.where(usable, extent * u_tau / self.nu, 0.0)
            limit = number(self.p, param, allow_none=True)
            where, worst, count = locate(mesh, faces, plus, limit, "higher", name)
            u = float(u_tau.max())
            fix = (f"Refine the wall faces {word}: a {word} face size of at most "
                   f"{limit * self.nu / u:.3g} m gives {tag}+ = {limit:g} at u_tau = "
                   f"{u:.3g} m/s." if limit else "")
            lead = f"{plural(count, 'face')} above {limit:g}; " if count else ""
            detail = f"{lead}largest at {at_face(mesh, int(faces[worst]))}"
            out.append(Measurement(float(plus[worst]), where, detail, fix,
                                   label=f"largest {word} wall spacing {tag}+", worse="higher",
                                   limits=Limits(warn=limit, error=None)))
        return out


def check_wall_yplus(ctx: "RuleContext") -> RuleResult:
    """y+ of the first wall distance on every wall face, graded for the wall treatment."""
    found = walls(ctx)
    if isinstance(found, str):
        return RuleResult.skip(found)
    case, mesh, layers = ctx.case, ctx.mesh, found.layers
    mode, why = treatment(case)
    if mode is None:
        return RuleResult.skip(why)
    fv = case.physics.method != "finite-element"
    friction, notes = wall_flow.mesh_friction(case, mesh, layers.faces, layers.cells)
    flow = wall_flow.flow_data(case, need_kind=friction is None, need_model=friction is None,
                               need_velocity=friction is None)
    if isinstance(flow, str):
        return RuleResult(skipped=flow, notes=tuple(Note(n) for n in notes))
    try:
        if friction is None:
            friction = wall_flow.correlation_friction(
                flow, mesh.face_centroids[layers.faces], number(ctx.params, "relative_roughness"))
            if isinstance(friction, str):
                return RuleResult.skip(friction)
        return _graded(ctx, found, mode, why, fv, flow, friction, notes)
    except ValueError as exc:       # a rule parameter that is not a number
        return RuleResult.skip(str(exc))


def _graded(ctx, found, mode, why, fv, flow, friction, notes) -> RuleResult:
    mesh, layers = ctx.mesh, found.layers
    distance = layers.centre_distance if fv else layers.first_height
    y_plus = distance * friction.u_tau / flow.nu
    band = _Band(ctx, fv, flow.nu, friction.source)
    wall_kind = "first cell centre (finite volume)" if fv else "first node (finite element)"
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
        lo, hi = number(ctx.params, "buffer_min"), number(ctx.params, "buffer_max")
        by_area.append(Note(
            f"{band.label} on '{name}' by area: {distribution(yp, areas)}; "
            f"{area_share(yp < lo, areas):.0f} % below {lo:g}, "
            f"{area_share((yp >= lo) & (yp <= hi), areas):.0f} % from {lo:g} to {hi:g}, "
            f"{area_share(yp > hi, areas):.0f} % above {hi:g}", Where(boundary=name)))
        if mode == "resolved":
            measurements.append(band.side(mesh, name, faces, yp, u_tau, "higher",
                                          ctx.limits, "largest"))
        elif mode == "wall-function":
            p = ctx.params
            low = Limits(warn=None, error=number(p, "wall_function_min"))
            high = Limits(warn=number(p, "wall_function_max", allow_none=True),
                          error=number(p, "wall_function_max_error", allow_none=True))
            measurements.append(band.side(mesh, name, faces, yp, u_tau, "lower", low, "smallest"))
            measurements.append(band.side(mesh, name, faces, yp, u_tau, "higher", high,
                                          "largest"))
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


def _drawn_limits(ctx: "RuleContext", mode: str) -> Limits | None:
    """The upper limits drawn on the y+ histogram: the band's top for the declared treatment."""
    if mode == "resolved":
        return ctx.limits
    if mode == "wall-function":
        return Limits(warn=number(ctx.params, "wall_function_max", allow_none=True),
                      error=number(ctx.params, "wall_function_max_error", allow_none=True))
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
        "finite-volume case, the first node's in a finite-element one) decides whether the "
        "wall treatment works as intended. Wall regions (Pope, Turbulent Flows, 2000, 7.1): "
        "viscous sublayer y+ < 5, buffer layer 5-30, log layer above 30. A resolved (low-Re) "
        "wall needs y+ about 1 (Menter, AIAA J. 32, 1994: SST wall omega for y+ < 3; AIAA Drag "
        "Prediction Workshop gridding guidelines): warning above 1, error above 5 (the rule's "
        "limits, which apply to resolved walls only). Log-law wall functions (Launder & Spalding 1974) need the first point in "
        "the log layer, 30 to 300: below wall_function_min the log law is applied outside "
        "its range (error); above wall_function_max a warning, above wall_function_max_error "
        "(500, Versteeg & Malalasekera 2007) an error. Blended treatments accept any y+ but "
        "are least accurate in the buffer layer: a warning when more than "
        "blended_buffer_share % of a wall's area lies there (common practice). Wall-resolved "
        "LES also needs dx+ <= 150 and dz+ <= 40 along the wall (Piomelli & Chasnov 1996; "
        "Georgiadis et al., AIAA J. 48, 2010). u_tau comes from a wall-shear or friction-"
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
    hint=("Change the first-layer height to bring y+ into the band of the wall treatment, or "
          "choose the wall treatment that matches the mesh."),
    check=check_wall_yplus,
    needs=("mesh", "mesh.boundaries", "physics.method", "physics.fluid", "physics.flow",
           "physics.turbulence"),
    parameters=(
        Parameter("wall_function_min", 30.0, "", "wall functions: error below this y+ "
                  "(buffer layer and below; Launder & Spalding 1974)"),
        Parameter("wall_function_max", 300.0, "", "wall functions: warning above this y+"),
        Parameter("wall_function_max_error", 500.0, "", "wall functions: error above this y+ "
                  "(Versteeg & Malalasekera 2007)"),
        Parameter("buffer_min", 5.0, "", "lower edge of the buffer layer (Pope 2000)"),
        Parameter("buffer_max", 30.0, "", "upper edge of the buffer layer (Pope 2000)"),
        Parameter("blended_buffer_share", 50.0, "%", "blended treatment: warning when more of "
                  "a wall's area than this lies in the buffer layer (common practice)"),
        Parameter("les_dx_plus_max", 150.0, "", "wall-resolved LES: warning above this "
                  "streamwise spacing dx+ (Piomelli & Chasnov 1996)"),
        Parameter("les_dz_plus_max", 40.0, "", "wall-resolved LES: warning above this "
                  "spanwise spacing dz+ (Georgiadis et al. 2010)"),
        Parameter("relative_roughness", 0.0, "", "internal flow: wall roughness over the "
                  "hydraulic diameter, eps/D, in the Colebrook equation"),
    ),
    measures="largest first-cell y+",
)
