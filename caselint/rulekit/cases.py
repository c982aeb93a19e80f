"""What a case's physics means for the rules: storage location, turbulence, wall treatment."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from caselint.manifest.case import Case

#: Turbulence models that resolve turbulent scales in time (``physics.turbulence.model``).
SCALE_RESOLVING: tuple[str, ...] = ("les", "des", "ddes", "iddes", "dns")
#: ``physics.method`` values that store the unknowns at the mesh's nodes: the first wall
#: distance is the first node's (the first-layer height), not the first cell centre's.
NODE_STORAGE: tuple[str, ...] = ("vertex-centred", "finite-element")


def stores_at_nodes(method: str) -> bool:
    """True for a vertex-centred finite-volume or a finite-element method."""
    return method in NODE_STORAGE


def scale_resolving(case: "Case") -> bool:
    """True for LES, DES variants and DNS."""
    return case.physics.turbulence.model in SCALE_RESOLVING


def wall_treatment(case: "Case") -> tuple[str | None, str]:
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
