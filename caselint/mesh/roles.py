"""Boundary roles implied by the group types a mesh file declares.

Face-based formats give each boundary group (patch, zone, marker) a type. Where the type
says what the boundary is, it implies the role a case file would give it; where it does
not (a plain ``patch``, an ``interior`` zone), the case file must say. The roles are
suggestions for ``caselint init`` and the defaults of groups the case file does not name
(:func:`default_roles`); a role in the case file always wins.

Types are matched lower-case. ``empty`` (the front and back of a 2-D case) implies
``symmetry``: a 2-D case is read as a 2-D mesh whose ``empty`` patches keep no faces
(:mod:`caselint.mesh.formats.one_cell_thick`), and where the mesh has to stay 3-D they
act as symmetry planes (no flow through them, no wall).
"""

from __future__ import annotations

from typing import Mapping

#: Declared group type -> role (the roles of the case file's ``mesh.boundaries``).
TYPE_ROLES: dict[str, str] = {
    "wall": "wall",
    "mappedwall": "wall",
    "symmetry": "symmetry",
    "symmetryplane": "symmetry",
    "wedge": "symmetry",
    "empty": "symmetry",
    "cyclic": "periodic",
    "cyclicami": "periodic",
    "cyclicacmi": "periodic",
    "cyclicslip": "periodic",
    "cyclictransform": "periodic",
    "processor": "interface",
    "processorcyclic": "interface",
    # role words the SU2, face-based .msh and CGNS readers give from their zone/BC types
    "inlet": "inlet",
    "outlet": "outlet",
    "open": "open",
    "interface": "interface",
    "periodic": "periodic",
    "slip-wall": "slip-wall",
}


def role_of_type(group_type: str | None) -> str | None:
    """The role a declared group type implies, or None when the case file must say."""
    if not group_type:
        return None
    key = group_type.lower()
    if key in TYPE_ROLES:
        return TYPE_ROLES[key]
    return "periodic" if key.startswith("cyclic") else None


def default_roles(group_types: Mapping[str, str]) -> dict[str, str]:
    """Group name -> role for the groups whose declared type implies one."""
    out = {}
    for name, group_type in group_types.items():
        role = role_of_type(group_type)
        if role is not None:
            out[name] = role
    return out
