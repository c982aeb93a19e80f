"""Write a commented starter case file for a mesh, so a new case begins from its real groups.

The starter lists every boundary group of the mesh with a role: the one its declared type
implies where the file gives one (a ``wall`` patch, a ``symmetry`` zone:
:mod:`caselint.mesh.roles`), else one guessed from its name; points ``mesh.file`` at the
mesh relative to the new file, and leaves the physics and time sections as commented
examples to fill in. For a mesh folder (a face-based case) the starter goes into the case
folder. It never overwrites a file.
"""

from __future__ import annotations

import json
import os
import re
from pathlib import Path

import yaml

from caselint.errors import UsageError

#: (role, name fragments) tried in order; the first role with a fragment in the name wins.
ROLE_HINTS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("inlet", ("inlet", "inflow", "supply", "intake", "entry", "entrance")),
    ("outlet", ("outlet", "outflow", "exhaust", "return", "extract", "exit", "discharge")),
    ("symmetry", ("sym",)),
    ("periodic", ("periodic", "cyclic")),
    ("open", ("open", "far", "atmos")),
    ("slip-wall", ("slip", "inviscid")),
    ("interface", ("interface", "interior")),
)

_PLAIN = re.compile(r"[A-Za-z0-9_.][A-Za-z0-9_./\-]*")


def guess_role(group: str, group_type: str | None = None) -> str:
    """Boundary role implied by a group's declared type, else suggested by its name
    (``wall`` when nothing matches)."""
    from caselint.mesh.roles import role_of_type

    implied = role_of_type(group_type)
    if implied is not None:
        return implied
    lower = group.lower()
    for role, fragments in ROLE_HINTS:
        if any(fragment in lower for fragment in fragments):
            return role
    return "wall"


def _scalar(text: str) -> str:
    """A YAML scalar for ``text``: plain when it reads back as the same text, else double-quoted."""
    # the read-back catches what a character list cannot: 'yes', '1e3', '.5', '~' ...
    if _PLAIN.fullmatch(text) and yaml.safe_load(text) == text:
        return text
    return json.dumps(text)  # JSON string quoting is valid YAML


def _relative(target: Path, start: Path) -> str:
    """``target`` relative to folder ``start``, or absolute when they share no folder."""
    try:
        shared = Path(os.path.commonpath([target, start]))
    except ValueError:  # different drives
        return target.as_posix()
    if shared == Path(shared.anchor):
        return target.as_posix()
    return Path(os.path.relpath(target, start)).as_posix()


def _group_comment(count: int, group_type: str | None) -> str:
    """What the starter says about a group: its faces, its declared type and whether the
    role comes from that type or from the name."""
    from caselint.mesh.roles import role_of_type

    text = f"{count} faces"
    if group_type == "empty" and count == 0:
        return "front and back of the 2-D case (type empty): no faces in 2-D"
    if group_type:
        implied = role_of_type(group_type)
        text += f", type {group_type}" + ("" if implied else ": role guessed from the name")
    return text


def starter_text(mesh_file: str, case_name: str, groups: list[tuple],
                 extent: tuple[float, float, float]) -> str:
    """The starter case file's text for a mesh with these ``(group, face count)`` or
    ``(group, face count, declared type)`` tuples."""
    width = max((len(_scalar(g[0])) for g in groups), default=0) + 1
    if groups:
        boundary_lines = []
        for name, count, *kind in groups:
            kind = kind[0] if kind else None
            boundary_lines.append(f"    {(_scalar(name) + ':').ljust(width)} "
                                  f"{guess_role(name, kind):<9}  # {_group_comment(count, kind)}")
    else:
        boundary_lines = ["    {}   # none found: name the boundary faces in the mesher"]
    size = " x ".join(f"{v:.4g}" for v in extent)
    lines = [
        "# caselint case file: a starter written by `caselint init` from the mesh below.",
        "# Check every value marked CHECK, fill in the commented sections, and delete what does",
        "# not apply. Quantities are plain SI numbers or text with a unit ('2.5 m/s', '5 mm').",
        "caselint: 1",
        "",
        "case:",
        f"  name: {_scalar(case_name)}",
        "  description: CHECK what the case models and why, in a sentence or two",
        "  # safety: none, structural-wind, fire-smoke, life-safety, medical, pressure-equipment",
        "  safety: none",
        "",
        "mesh:",
        f"  file: {_scalar(mesh_file)}",
        f"  # The mesh spans {size} in its own coordinates. CHECK the unit it was exported in:",
        "  units: m       # m, cm, mm, um, in or ft",
        "  # Boundary group -> role (wall, slip-wall, inlet, outlet, open, symmetry, periodic,",
        "  # interface).",
        "  # Roles come from the group types the mesh declares, else are GUESSED from the",
        "  # group names: CHECK each one.",
        "  boundaries:",
        *boundary_lines,
        "",
        "physics:",
        "  method: cell-centred    # or vertex-centred, finite-element (where y+ is measured)",
        "  # fluid:                  # give viscosity with density, or kinematic_viscosity",
        "  #   density: 1.2 kg/m^3",
        "  #   viscosity: 1.81e-5 Pa*s",
        "  # flow:                   # reference flow for Reynolds, y+ and Courant estimates",
        "  #   kind: internal        # or external",
        "  #   velocity: 2.5 m/s",
        "  #   length: 0.3 m         # hydraulic diameter (internal) or body length (external)",
        "  # turbulence:",
        "  #   model: k-omega-sst",
        "  #   wall_treatment: resolved   # or wall-function, blended",
        "",
        "time:",
        "  mode: steady   # or transient, then give step and end:",
        "  # step: 1e-3 s",
        "  # end: 10 s",
        "",
        "checks:",
        "  rule_sets: [general]",
        "  # rules:                  # change a limit for this case only",
        "  #   growth-ratio: {warn: 1.25}",
        "  # waivers:                # accepted departures, each with a reason and an expiry date",
        "  #   - {rule: aspect-ratio, reason: ..., approved_by: ..., expires: 2030-12-31}",
        "",
        "# review:",
        "#   prepared_by: ...",
        "#   reviewers: [...]",
        "",
    ]
    return "\n".join(lines)


def _case_folder(folder: Path) -> Path:
    """The case folder of a mesh folder: ``case`` for ``case/constant/polyMesh`` (and for
    ``case/constant/<region>/polyMesh``), else the folder itself."""
    parts = folder.parts
    if folder.name == "polyMesh" and "constant" in parts[-3:-1]:
        return Path(*parts[:len(parts) - 1 - parts[::-1].index("constant")])
    return folder


def starter_for(mesh_path: str | Path, folder: str | Path) -> str:
    """The starter case file text for ``mesh_path``, for a case file kept in ``folder``
    (the mesh path in it is relative to that folder).

    :raises MeshReadError: the mesh cannot be read.
    """
    import numpy as np

    from caselint.mesh import read_mesh

    mesh_path = Path(mesh_path).resolve()
    mesh = read_mesh(mesh_path)
    counts = np.bincount(mesh.face_group[mesh.face_group >= 0], minlength=len(mesh.group_names))
    types = mesh.data.group_types
    groups = [(name, int(counts[i]), types.get(name)) for i, name in enumerate(mesh.group_names)]
    lo, hi = mesh.bounds
    extent = tuple(float(b - a) for a, b in zip(lo, hi))
    name = (_case_folder(mesh_path) if mesh_path.is_dir() else mesh_path).stem
    return starter_text(_relative(mesh_path, Path(folder).resolve()), name, groups, extent)


def write_starter(mesh_path: str | Path, out_path: str | Path | None = None) -> Path:
    """Write a starter case file for ``mesh_path`` (default: ``case.yaml`` beside it).

    Never overwrites an existing file.

    :raises UsageError: the target file already exists.
    :raises MeshReadError: the mesh cannot be read.
    """
    mesh_path = Path(mesh_path).resolve()
    home = _case_folder(mesh_path) if mesh_path.is_dir() else mesh_path.parent
    target = Path(out_path) if out_path is not None else home / "case.yaml"
    target = target.resolve()
    if target.exists():
        raise UsageError(f"{target}: already exists; caselint never overwrites a file "
                         "(choose another output path or move the file away)")
    text = starter_for(mesh_path, target.parent)
    target.parent.mkdir(parents=True, exist_ok=True)
    try:
        # "x" mode: fails rather than overwrite a file created since the check above
        with open(target, "x", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
    except FileExistsError as exc:
        raise UsageError(f"{target}: already exists; caselint never overwrites a file") from exc
    except OSError as exc:
        raise UsageError(f"{target}: cannot write the starter case file ({exc.strerror})") from exc
    return target
