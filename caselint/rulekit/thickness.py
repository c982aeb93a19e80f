"""The boundary-layer thickness along the walls: delta at each wall face, from the face's
distance x from the leading edge along the flow.

Where x comes from, in order of preference:

1. ``physics.flow.leading_edge`` (a point): x is each face centroid's distance from it
   along ``physics.flow.direction``, or straight-line when no direction is given;
2. ``physics.flow.direction`` alone: the leading edge is the most upstream point of the
   case's no-slip walls along the direction (the nose of an aerofoil, the front of a
   plate or a body, the inlet end of a pipe wall), and x the distance from it along the
   direction. Walls of several separate bodies share that one leading edge;
3. neither: no local x. External flow is judged at x = ``physics.flow.length`` on every
   face, internal flow as fully developed.

x is the distance along the flow, not along the surface: on a thin body the two agree;
round a bluff body (a cylinder) x is the projected distance, shorter than the distance
round the surface (R (1 - cos t) against R t), so delta is underestimated there.
Faces nearer the leading edge than :data:`~caselint.rulekit.wallflow.MIN_X_FRACTION` of
the reference length (of the farthest face for internal flow) are evaluated at that
distance, as the friction velocity is (:mod:`caselint.rulekit.wallflow`).

Thickness, x from the leading edge, Re_x = U x / nu:

- external flow, flat-plate estimates from the leading edge: laminar delta_99 = 5.0 x /
  sqrt(Re_x) (Blasius) [confirmed]; turbulent delta = 0.37 x Re_x^-1/5 (1/7-power law,
  Schlichting 1979) [memory]; see :mod:`caselint.physics.friction`;
- internal flow, developing: the boundary layer grows from the inlet as on a flat plate
  until it meets the facing walls' at the middle of the duct, so delta is the external
  estimate capped at half the hydraulic diameter D_h / 2 (caselint's approximation of the
  entrance region; it ignores the acceleration of the core). The cap is reached at
  x = 0.01 Re D_h (laminar) and about 1.46 Re^1/4 D_h (turbulent, [computed] from the two
  formulas); White, Fluid Mechanics, gives entrance lengths of 0.06 Re D (laminar) and
  4.4 Re^1/6 D (turbulent) [memory]: the laminar estimate reaches D_h / 2 sooner than the
  fully developed profile is reached. Without a local x: D_h / 2 (fully developed). A
  flow that enters developed is declared with a leading edge upstream of the inlet by the
  development length.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.physics import friction as fr
from caselint.rulekit.meshview import face_points
from caselint.rulekit.wallflow import MIN_X_FRACTION, FlowData, face_x, flow_data
from caselint.rulekit.walls import walls
from caselint.rulekit.words import fmt

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.mesh.analysis import Mesh
    from caselint.rulekit.walls import Walls


@dataclass(frozen=True)
class Thickness:
    """delta (m) at each of a set of wall faces, x (m) from the leading edge along the flow
    (None when the case gives no direction or leading edge), and how it was estimated."""

    delta: np.ndarray
    x: np.ndarray | None
    how: str
    notes: tuple[str, ...] = ()

    def at(self, row: int) -> str:
        """`` (x = 0.25 m from the leading edge)`` for a local estimate, else nothing."""
        return "" if self.x is None else f" (x = {self.x[row]:.3g} m from the leading edge)"


def wall_x(flow: FlowData, mesh: "Mesh", faces: np.ndarray) -> tuple[np.ndarray, str] | str | None:
    """Distance of each face from the leading edge along the flow (m, clamped near the
    edge) and where the edge is in words; a reason when no face is downstream of it; None
    without a direction or leading edge."""
    centroids = mesh.face_centroids[faces]
    if flow.leading_edge is not None:
        got = face_x(flow, centroids)
        if isinstance(got, str):
            return got
        along = "along physics.flow.direction" if flow.direction is not None else "straight"
        return got[0], f"from physics.flow.leading_edge ({along})"
    if flow.direction is None:
        return None
    d = flow.direction
    edge = float((face_points(mesh, faces) @ d).min())
    x = centroids @ d - edge
    reference = flow.length if flow.kind == "external" and flow.length else float(x.max())
    x = np.maximum(x, MIN_X_FRACTION * reference)
    return x, ("from the walls' most upstream point along physics.flow.direction "
               f"({fmt(edge)} m along it)")


def wall_thickness(flow: FlowData, mesh: "Mesh", faces: np.ndarray) -> Thickness | str:
    """delta at each of ``faces`` (see the module docstring), or a reason it is unknown."""
    n = len(faces)
    located = wall_x(flow, mesh, faces)
    if isinstance(located, str):
        return located
    half = 0.5 * float(flow.length) if flow.kind == "internal" else np.inf
    if located is None:
        if flow.kind == "internal":
            return Thickness(np.full(n, half), None,
                             f"half the hydraulic diameter {flow.length:.4g} m (fully developed "
                             "internal flow: the boundary layers fill the duct; give "
                             "physics.flow.direction for a developing one)")
        x = np.full(n, float(flow.length))
        where = (f"at x = {flow.length:.4g} m on every face (give physics.flow.direction or "
                 "leading_edge for a local thickness)")
    else:
        x, edge = located
        where = f"with x each face's distance {edge}"
    re_x = np.atleast_1d(np.asarray(fr.reynolds(flow.velocity, x, flow.nu), dtype=np.float64))
    if flow.turbulent:
        grown = np.atleast_1d(fr.delta_turbulent(x, re_x))
        formula = "0.37 x Re_x^-1/5 (turbulent)"
    else:
        grown = np.atleast_1d(fr.delta_laminar(x, re_x))
        formula = "5.0 x / sqrt(Re_x) (laminar)"
    delta = np.minimum(grown, half)
    notes = []
    if flow.kind == "internal":
        capped = int(np.count_nonzero(grown >= half))
        formula += f", at most half the hydraulic diameter ({half:.4g} m)"
        notes.append(f"developing internal flow: delta reaches D_h / 2 = {half:.4g} m on "
                     f"{capped} of {n} wall faces, downstream of x = "
                     f"{_entrance(flow, half):.3g} m")
    low, high = fmt(float(delta.min())), fmt(float(delta.max()))
    how = f"{formula} {where}; delta {low} m" + ("" if low == high else f" to {high} m")
    return Thickness(delta, None if located is None else x, how, tuple(notes))


def along_walls(ctx: "RuleContext") -> tuple["Walls", np.ndarray, Thickness] | str:
    """The case's walls with their stacks, delta per row of the stacks and the estimate, or
    a skip reason. delta is the local estimate, and at most half the passage where a stack
    ran into a facing wall: two boundary layers meet in the middle."""
    flow = flow_data(ctx.case)
    if isinstance(flow, str):
        return flow
    found = walls(ctx)
    if isinstance(found, str):
        return found
    thick = wall_thickness(flow, ctx.mesh, found.layers.faces)
    if isinstance(thick, str):
        return thick
    return found, np.minimum(thick.delta, 0.5 * found.layers.passage), thick


def _entrance(flow: FlowData, half: float) -> float:
    """x (m) at which the flat-plate estimate reaches ``half`` (solved from the formulas)."""
    speed = flow.velocity / flow.nu
    if flow.turbulent:          # 0.37 x^0.8 (U / nu)^-0.2 = half
        return (half / 0.37 * speed**0.2) ** 1.25
    return (half / 5.0) ** 2 * speed          # 5 sqrt(x nu / U) = half
