"""Built-in boundary rules: every exposed face must belong to a boundary group with a role.

A face on the outside of the mesh that no group names, or a group the case file gives no
role (``mesh.boundaries``), would get whatever default condition the solver applies,
usually a no-slip wall, silently. Groups the case names but the mesh lacks are a
case-file error raised by the engine, not a finding of this rule.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.manifest.case import BOUNDARY_ROLES
from caselint.model import MAX_LISTED_IDS, Limits, Measurement, Rule, RuleResult, Where
from caselint.rulekit import RuleContext, finite_point, first_cells, plural

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh


def _faces_where(mesh: "Mesh", faces: np.ndarray, boundary: str | None = None) -> Where:
    """Where listing the first faces (lowest ids), their cells, and a point on the first."""
    faces = np.sort(faces)
    listed = faces[:MAX_LISTED_IDS]
    cells = np.unique(mesh.owner[faces])
    point = finite_point(mesh.face_centroids[listed[0]]) if listed.size else None
    return Where(
        boundary=boundary,
        faces=tuple(int(f) for f in listed),
        face_count=int(faces.size),
        cells=first_cells(mesh, cells),
        cell_count=int(cells.size),
        point=point,
    )


def check_unassigned_boundary(ctx: RuleContext) -> RuleResult:
    """Exposed faces in no group, and mesh groups with no role in the case file."""
    mesh = ctx.mesh
    roles = ctx.case.mesh.boundaries
    exposed = mesh.boundary_faces
    ungrouped = exposed[mesh.face_group[exposed] < 0]
    n_exposed = int(exposed.size)

    if ungrouped.size:
        detail = (f"{ungrouped.size} of {plural(n_exposed, 'exposed face')} in no boundary group; "
                  f"first at cell {int(mesh.file_cell_ids(mesh.owner[np.min(ungrouped)]))}")
        fix = ("Name these faces in the mesher (a physical group, zone or patch) and give the "
               "group a role under mesh.boundaries in the case file.")
    else:
        detail = f"all {n_exposed} exposed faces belong to a boundary group"
        fix = ""
    measurements = [Measurement(value=float(ungrouped.size), where=_faces_where(mesh, ungrouped),
                                detail=detail, fix=fix)]

    internal_elements = mesh.internal_group_elements
    for name in sorted(set(mesh.group_names) - set(roles)):
        faces = np.asarray(mesh.group_faces(name), dtype=np.int64)
        # a group on internal faces (a baffle or zone interface) needs a role just the same
        inside = int(internal_elements.get(name, 0))
        extra = f", {inside} more on internal faces" if inside else ""
        measurements.append(Measurement(
            value=float(faces.size + inside),
            where=_faces_where(mesh, faces, boundary=name),
            detail=f"group '{name}' ({plural(faces.size, 'exposed face')}{extra}) has no role in "
                   "the case file",
            fix=(f"Add '{name}: <role>' under mesh.boundaries in the case file (roles: "
                 f"{', '.join(BOUNDARY_ROLES)}), or remove the group from the mesh if it is "
                 "not a boundary."),
        ))
    # Boundary elements lying on no cell face are unmatched-boundary-elements' finding.
    return RuleResult(measurements=tuple(measurements))


UNASSIGNED_BOUNDARY = Rule(
    id="unassigned-boundary",
    title="Boundary faces without a role",
    rationale=(
        "Every face on the outside of the mesh needs a boundary condition. Faces that belong "
        "to no named group, and groups the case file gives no role, are left to the solver's "
        "default (often a no-slip wall), which silently changes the problem: a forgotten "
        "outlet becomes a wall. One such face is an error (common practice)."
    ),
    source="common practice",
    unit="faces",
    limits=Limits(warn=None, error=0),
    hint=("Put every exposed face in a named group in the mesher and give each group a role "
          "under mesh.boundaries in the case file."),
    check=check_unassigned_boundary,
    needs=("mesh",),
    # one measurement for exposed faces in no group, one per group without a role
    measures="number of boundary faces without a role",
)

RULES: tuple[Rule, ...] = (UNASSIGNED_BOUNDARY,)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in boundary rules."""
    return list(RULES)
