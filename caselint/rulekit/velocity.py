"""The flow velocity a time-step rule uses: a field carried by the mesh file, or the case's
reference velocity and direction.

A velocity field (point or cell data of the mesh file, e.g. from an initial or earlier
solution) is used when ``mesh.velocity_field`` names one, or else when the mesh carries an
array with one of the usual names (:data:`FIELD_NAMES`) and 2 or 3 components. Values are
taken as m/s. Face velocities: point data -> mean of the face's vertices; cell data ->
mean of owner and neighbour (the owner's on boundary faces). When a name exists as both,
a cell-centred case uses the cell data, a vertex-centred or finite-element case the point
data.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.errors import CaseFileError
from caselint.physics import timestep
from caselint.rulekit.cases import stores_at_nodes
from caselint.rulekit.words import plural

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh

#: Array names recognised as a velocity field when ``mesh.velocity_field`` is not given.
FIELD_NAMES: tuple[str, ...] = ("U", "u", "velocity", "Velocity")


@dataclass(frozen=True)
class FlowVelocity:
    """Face velocities (m/s): (3,) for a uniform reference velocity, else (F, 3)."""

    face: np.ndarray
    described: str                 # plain words for findings: where the velocity came from
    field: str | None = None       # name of the mesh array used, None for the reference


def _as_vectors(values: np.ndarray) -> np.ndarray | None:
    """(n, 3) float vectors from (n, 2) or (n, 3) data; None for any other shape."""
    values = np.asarray(values)
    if values.ndim != 2 or values.shape[1] not in (2, 3):
        return None
    out = np.zeros((len(values), 3))
    out[:, : values.shape[1]] = values
    return out


def _candidates(mesh: "Mesh", name: str, method: str) -> list[tuple[str, np.ndarray]]:
    """(kind, values) of the arrays called ``name``, the one of the case's method first."""
    found = [(kind, data[name]) for kind, data in (("cell", mesh.cell_data),
                                                   ("point", mesh.point_data)) if name in data]
    if stores_at_nodes(method):
        found.reverse()
    return found


def _named_field(ctx: "RuleContext", name: str) -> tuple[str, np.ndarray]:
    """The array ``mesh.velocity_field`` names; a clear case-file error when unusable."""
    case, mesh = ctx.case, ctx.mesh
    key = "mesh.velocity_field"
    found = _candidates(mesh, name, case.physics.method)
    if not found:
        have = sorted(set(mesh.point_data) | set(mesh.cell_data)) or ["none"]
        raise CaseFileError(str(case.path), f"{key} names {name!r}, which the mesh "
                            f"{case.mesh.file.name} does not carry as point or cell data; "
                            f"its arrays: {', '.join(have)}", line=case.line_of(key), key=key)
    for kind, values in found:
        vectors = _as_vectors(values)
        if vectors is not None:
            return kind, vectors
    shape = np.asarray(found[0][1]).shape
    raise CaseFileError(str(case.path), f"{key} names {name!r}, which has shape {shape}; "
                        "expected a vector per point or cell (2 or 3 components, m/s)",
                        line=case.line_of(key), key=key)


def _usual_field(mesh: "Mesh", method: str) -> tuple[str, str, np.ndarray] | None:
    """The first array with a usual velocity name and a vector shape, if any."""
    for name in FIELD_NAMES:
        for kind, values in _candidates(mesh, name, method):
            vectors = _as_vectors(values)
            if vectors is not None:
                return name, kind, vectors
    return None


def _reference(case: "Case") -> FlowVelocity | str:
    """The uniform reference velocity vector, or what is missing."""
    flow = case.physics.flow
    if flow.velocity is None:
        return ("no flow velocity: give physics.flow.velocity and physics.flow.direction, or a "
                "mesh carrying a velocity field (mesh.velocity_field)")
    if flow.direction is None:
        return ("physics.flow.direction is not given: the Courant number needs the direction "
                "of the reference velocity (or a velocity field in the mesh, mesh.velocity_field)")
    vector = flow.velocity * np.asarray(flow.direction, dtype=np.float64)
    along = ", ".join(f"{v:.3g}" for v in flow.direction)
    return FlowVelocity(vector, f"the reference velocity {flow.velocity:.4g} m/s along "
                                f"({along})")


def flow_velocity(ctx: "RuleContext") -> FlowVelocity | str:
    """The velocity to use for ``ctx``'s case, or a skip reason saying what is missing.

    :raises CaseFileError: ``mesh.velocity_field`` names an array the mesh lacks or that is
        not a vector field.
    """
    case, mesh = ctx.case, ctx.mesh
    if case.mesh.velocity_field is not None:
        name = case.mesh.velocity_field
        kind, vectors = _named_field(ctx, name)
    else:
        usual = _usual_field(mesh, case.physics.method)
        if usual is None:
            return _reference(case)
        name, kind, vectors = usual
    bad = ~np.isfinite(vectors).all(axis=1)
    if bad.any():
        file_ids = mesh.file_point_ids if kind == "point" else mesh.file_cell_ids
        return (f"the velocity field {name!r} ({kind} data) has "
                f"{plural(int(bad.sum()), 'non-finite value')} (first at {kind} "
                f"{int(file_ids(np.flatnonzero(bad)).min())})")

    def faces() -> np.ndarray:
        if kind == "point":
            return timestep.face_velocity_from_points(mesh, vectors)
        return timestep.face_velocity_from_cells(mesh, vectors)

    face = mesh.cached(f"flow_velocity.faces:{kind}:{name}", faces)
    speed = float(np.sqrt((vectors * vectors).sum(axis=1)).max()) if len(vectors) else 0.0
    return FlowVelocity(face, f"the velocity field {name!r} ({kind} data of the mesh file, "
                              f"largest {speed:.4g} m/s)", field=name)
