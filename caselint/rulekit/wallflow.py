"""Flow data for the near-wall rules: the case's flow turned into a friction velocity per
wall face and a boundary-layer thickness, with the reason when the case lacks data.

Friction velocity, in order of preference:

1. a field carried by the mesh file from an earlier run: friction velocity (``u_tau``,
   ``friction_velocity``, m/s) or wall shear stress (``wall_shear_stress``,
   ``wallShearStress``, ``tau_w``; vector or scalar, read as Pa, divided by the density),
   as point data averaged over each wall face's vertices or as cell data of the wall cell;
2. external flow: the local flat-plate skin friction, Schlichting's formula when the case
   declares a turbulence model, Blasius' when it is laminar, at the flow length, or at each
   face's distance from ``physics.flow.leading_edge`` when the case gives one;
3. internal flow: the Darcy friction factor at Re = U D_h / nu with D_h = the flow length,
   Colebrook's equation (turbulent) or 64/Re (laminar).

All correlations live in :mod:`caselint.physics.friction` with their sources.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.topology import face_point_mean
from caselint.physics import friction as fr
from caselint.rulekit.meshview import face_vertex_mean
from caselint.rulekit.words import fmt

if TYPE_CHECKING:
    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh

#: Field names recognised as friction velocity (m/s) and as wall shear stress (Pa).
U_TAU_FIELDS: tuple[str, ...] = ("u_tau", "friction_velocity")
SHEAR_FIELDS: tuple[str, ...] = ("wall_shear_stress", "wallShearStress", "tau_w")
#: With a leading edge, faces nearer to it than this fraction of the flow length (or of
#: the farthest wall face) are evaluated at that distance: Cf is singular at the edge.
MIN_X_FRACTION = 0.01


@dataclass(frozen=True)
class FlowData:
    """What the case says about the flow, in SI units; ``direction`` is a unit vector."""

    kind: str
    velocity: float
    nu: float
    length: float | None
    model: str
    leading_edge: np.ndarray | None = None
    direction: np.ndarray | None = None
    density: float | None = None

    @property
    def turbulent(self) -> bool:
        """False only for a laminar case: DNS and every model count as turbulent flow."""
        return self.model != "laminar"


@dataclass(frozen=True)
class Friction:
    """Friction velocity per wall face (m/s), where it came from, and caveats in words."""

    u_tau: np.ndarray
    source: str
    notes: tuple[str, ...] = ()
    field: str | None = None


def flow_data(case: "Case", *, need_kind: bool = True, need_model: bool = True,
              need_velocity: bool = True) -> FlowData | str:
    """The case's flow data, or a skip reason naming the missing case-file keys."""
    physics = case.physics
    flow, fluid = physics.flow, physics.fluid
    missing = []
    if need_kind and flow.kind is None:
        missing.append("physics.flow.kind (internal or external)")
    if need_velocity and flow.velocity is None:
        missing.append("physics.flow.velocity")
    elif need_velocity and flow.velocity <= 0:
        return f"physics.flow.velocity is {flow.velocity:g} m/s: no wall friction to estimate"
    if fluid.nu is None:
        missing.append("physics.fluid.kinematic_viscosity (or viscosity with density)")
    if need_model and physics.turbulence.model is None:
        missing.append("physics.turbulence.model")
    needs_length = flow.kind == "internal" or flow.leading_edge is None
    if flow.length is not None and flow.length <= 0:
        return f"physics.flow.length is {flow.length:g} m; a positive length is needed"
    if need_velocity and needs_length and flow.length is None:
        missing.append("physics.flow.length" + (" (the hydraulic diameter)"
                                                if flow.kind == "internal" else ""))
    if missing:
        return "the case gives no " + ", no ".join(missing)
    direction = None
    if flow.direction is not None:
        d = np.asarray(flow.direction, dtype=np.float64)
        direction = d / np.linalg.norm(d)
    return FlowData(
        kind=flow.kind or "external", velocity=float(flow.velocity or 0.0), nu=float(fluid.nu),
        length=flow.length, model=physics.turbulence.model or "laminar",
        leading_edge=None if flow.leading_edge is None else np.asarray(flow.leading_edge, float),
        direction=direction, density=fluid.density,
    )


def _field_on_faces(mesh: "Mesh", names: tuple[str, ...], faces: np.ndarray,
                    cells: np.ndarray) -> tuple[str, np.ndarray] | None:
    """(name, magnitude per face) of the first field found under one of ``names``."""
    wanted = {n.lower() for n in names}
    for kind, data in (("point", mesh.point_data), ("cell", mesh.cell_data)):
        for name in sorted(data):
            if name.lower() not in wanted:
                continue
            values = np.asarray(data[name], dtype=np.float64)
            mag = np.abs(values) if values.ndim == 1 else np.linalg.norm(
                values.reshape(len(values), -1), axis=1)
            if kind == "cell":
                return f"{name} (cell data of the wall cells)", mag[cells]
            return (f"{name} (point data, averaged over each face)",
                    face_vertex_mean(mesh, faces, mag))
    return None


def mesh_friction(case: "Case", mesh: "Mesh", faces: np.ndarray,
                  cells: np.ndarray) -> tuple[Friction | None, tuple[str, ...]]:
    """Friction velocity from a field in the mesh file, or None; plus notes on fields skipped."""
    found = _field_on_faces(mesh, U_TAU_FIELDS, faces, cells)
    if found is not None and np.all(np.isfinite(found[1])):
        return Friction(found[1], f"the mesh field {found[0]}", field=found[0]), ()
    notes: list[str] = []
    if found is not None:
        notes.append(f"the mesh field {found[0]} has non-finite values on wall faces; not used")
    shear = _field_on_faces(mesh, SHEAR_FIELDS, faces, cells)
    if shear is None:
        return None, tuple(notes)
    density = case.physics.fluid.density
    if not np.all(np.isfinite(shear[1])):
        notes.append(f"the mesh field {shear[0]} has non-finite values on wall faces; not used")
    elif density is None:
        notes.append(f"the mesh field {shear[0]} is not used: the case gives no "
                     "physics.fluid.density to turn a wall shear stress into u_tau")
    else:
        u_tau = np.sqrt(shear[1] / density)
        return Friction(u_tau, f"the mesh field {shear[0]} read as Pa, with density "
                               f"{density:.4g} kg/m^3", field=shear[0]), tuple(notes)
    return None, tuple(notes)


def face_x(flow: FlowData, centroids: np.ndarray) -> tuple[np.ndarray, int] | str:
    """Distance of each face from the leading edge along the flow (m), clamped; or a reason."""
    offset = centroids - flow.leading_edge
    if flow.direction is not None:
        x = offset @ flow.direction
    else:
        x = np.linalg.norm(offset, axis=1)
    if not np.any(x > 0):
        return ("every wall face lies upstream of physics.flow.leading_edge along "
                "physics.flow.direction")
    x_min = MIN_X_FRACTION * (flow.length if flow.length else float(x.max()))
    clamped = int(np.count_nonzero(x < x_min))
    return np.maximum(x, x_min), clamped


def correlation_friction(flow: FlowData, centroids: np.ndarray,
                         relative_roughness: float = 0.0) -> Friction | str:
    """Friction velocity per face from the flat-plate or pipe correlations, or a reason."""
    n = len(centroids)
    notes: list[str] = []
    if flow.kind == "internal":
        re = fr.reynolds(flow.velocity, flow.length, flow.nu)
        if flow.turbulent:
            f = fr.darcy_colebrook(re, relative_roughness)
            name = "the Colebrook equation"
            if re < fr.PIPE_TURBULENT_RE:
                notes.append(f"Re = {fmt(re)} is below {fr.PIPE_TURBULENT_RE:g}, outside the "
                             "Colebrook equation's turbulent range")
        else:
            f = fr.darcy_laminar(re)
            name = "the laminar friction factor 64/Re"
            if re > fr.PIPE_LAMINAR_RE:
                notes.append(f"Re = {fmt(re)} is above {fr.PIPE_LAMINAR_RE:g}: pipe flow is "
                             "normally turbulent there, yet the case is laminar")
        u_tau = fr.u_tau_from_darcy(f, flow.velocity)
        source = (f"{name} (Darcy f = {f:.4g} at Re = {fmt(re)}, D_h = {flow.length:.4g} m, "
                  f"u_tau = {u_tau:.4g} m/s)")
        return Friction(np.full(n, u_tau), source, tuple(notes))
    if flow.leading_edge is not None:
        got = face_x(flow, centroids)
        if isinstance(got, str):
            return got
        x, clamped = got
        where = "each face's distance from the leading edge"
        if clamped:
            notes.append(f"{clamped} wall faces lie within {MIN_X_FRACTION:.0%} of the "
                         "reference length from the leading edge (or upstream of it); they "
                         "are evaluated at that distance")
    else:
        x = np.full(n, float(flow.length))
        where = f"x = {flow.length:.4g} m"
    re_x = fr.reynolds(flow.velocity, x, flow.nu)
    re_x = np.atleast_1d(np.asarray(re_x, dtype=np.float64))
    if flow.turbulent:
        if np.any(2.0 * np.log10(re_x) - 0.65 <= 0.0):
            # (2 log10 Re_x - 0.65)^-2.3 is undefined there (a negative base) and infinite at
            # Re_x = 10^0.325 = 2.11: no friction estimate, rather than NaN.
            return (f"Re_x = {fmt(float(re_x.min()))} is below 2.11, where Schlichting's "
                    "turbulent flat-plate formula is undefined; check physics.flow.velocity, "
                    "length and the fluid's viscosity (a turbulent model at such a low "
                    "Reynolds number is unusual)")
        cf = np.atleast_1d(fr.cf_schlichting(re_x))
        name = "Schlichting's turbulent flat-plate formula"
        if np.any(re_x < fr.PLATE_TRANSITION_RE):
            notes.append(f"Re_x is below {fmt(fr.PLATE_TRANSITION_RE)} on part of the wall, where "
                         "a plate is normally still laminar; the turbulent formula gives the "
                         "higher friction there (a conservative y+)")
        if np.any(re_x > fr.SCHLICHTING_MAX_RE):
            notes.append(f"Re_x exceeds {fmt(fr.SCHLICHTING_MAX_RE)}, the upper end of "
                         "Schlichting's formula")
    else:
        cf = np.atleast_1d(fr.cf_blasius(re_x))
        name = "the Blasius laminar flat-plate solution"
        if np.any(re_x > fr.PLATE_TRANSITION_RE):
            notes.append(f"Re_x exceeds {fmt(fr.PLATE_TRANSITION_RE)} on part of the wall, where a "
                         "flat-plate boundary layer is normally turbulent, yet the case is laminar")
    u_tau = np.atleast_1d(fr.u_tau_from_cf(cf, flow.velocity))
    if np.ptp(re_x) == 0:
        at = f"Re_x = {fmt(re_x[0])}, Cf = {cf[0]:.4g}, u_tau = {u_tau[0]:.4g} m/s"
    else:
        at = f"Re_x {fmt(re_x.min())} to {fmt(re_x.max())}, u_tau {u_tau.min():.4g} to " \
             f"{u_tau.max():.4g} m/s"
    return Friction(u_tau, f"{name} at {where} ({at})", tuple(notes))

