"""What a rule needs before it can run, checked by the engine: ``Rule.needs``.

A need is ``"mesh"`` (the case's mesh, with volume cells), a condition named in
:data:`CONDITIONS` (``"transient"``, ``"compressible"``, ``"walls"``, ``"solid-walls"``, ``"viscosity"``), or a
dotted key of the case file (``"time.step"``, ``"regions"``, a plugin's
``"quillfen.supply_flow"``), which is met when the case gives it (not null, not empty; read
from the :class:`Case`, so plugin sections from ``Case.extensions``). The first need not
met skips the rule, with one wording for every rule; rules check only what their needs
cannot say.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Callable

if TYPE_CHECKING:
    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh

def _no_slip_walls(case: "Case") -> str:
    """Why a case has no no-slip wall to judge near-wall resolution on."""
    if case.physics.turbulence.model == "inviscid":
        return ("the case is inviscid (physics.turbulence.model: inviscid): its walls slip "
                "and no boundary layer forms")
    if "slip-wall" in case.mesh.boundaries.values():
        return ("no no-slip wall: the solid boundaries of mesh.boundaries are slip walls, "
                "where no boundary layer forms")
    return "no boundary has role wall in mesh.boundaries"


#: Named conditions on the case: name -> (test, the skip reason when it fails: text, or
#: text made from the case).
CONDITIONS: dict[str, tuple[Callable[["Case"], bool], str | Callable[["Case"], str]]] = {
    "transient": (lambda case: case.time.mode == "transient", "steady case"),
    "compressible": (lambda case: case.physics.compressible,
                     "the case does not declare compressible flow (physics.compressible)"),
    "walls": (lambda case: ("wall" in case.mesh.boundaries.values()
                            and case.physics.turbulence.model != "inviscid"),
              _no_slip_walls),
    "solid-walls": (lambda case: any(r in ("wall", "slip-wall")
                                     for r in case.mesh.boundaries.values()),
                    "no boundary has role wall or slip-wall in mesh.boundaries"),
    "viscosity": (lambda case: case.physics.fluid.nu is not None,
                  "the case file gives no physics.fluid.kinematic_viscosity (nor viscosity "
                  "with density)"),
}


def _given(case: "Case", key: str) -> bool:
    """True when the case gives ``key`` (dotted), not None and not empty: an attribute path
    of the :class:`Case` (``time.step``), or a key of a plugin section (``case.extensions``)."""
    parts = key.split(".")
    value: object = case
    if not hasattr(case, parts[0]):
        value, parts = case.extensions, parts
    for part in parts:
        if isinstance(value, dict):
            value = value.get(part)
        elif hasattr(value, "__dataclass_fields__") and part in value.__dataclass_fields__:
            value = getattr(value, part)
        else:
            return False
    return value is not None and not (isinstance(value, (tuple, list, dict)) and not value)


def missing_case_data(needs: tuple[str, ...], case: "Case") -> str | None:
    """The skip reason of the first need (other than the mesh) the case does not meet."""
    for need in needs:
        if need == "mesh":
            continue
        if need in CONDITIONS:
            test, reason = CONDITIONS[need]
            if not test(case):
                return reason if isinstance(reason, str) else reason(case)
        elif not _given(case, need):
            return f"the case file gives no {need}"
    return None


def missing_mesh_data(needs: tuple[str, ...], load_mesh: Callable[[], "Mesh"]) -> str | None:
    """The skip reason when the rule needs the mesh and it has no volume cells."""
    if "mesh" in needs and load_mesh().n_cells == 0:
        return "the mesh has no volume cells"
    return None


def describe(need: str) -> str:
    """A need in words for ``caselint explain``."""
    if need == "mesh":
        return "the mesh (with volume cells)"
    if need in CONDITIONS:
        return {"transient": "a transient case", "compressible": "compressible flow",
                "walls": "a no-slip wall (a boundary with role wall, in a viscous case)",
                "solid-walls": "a solid boundary (role wall or slip-wall)",
                "viscosity": "the fluid's viscosity"}[need]
    return need
