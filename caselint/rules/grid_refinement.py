"""Built-in rule ``grid-refinement-ratio``: is a planned grid study able to give an answer?

Before the runs of a grid study, the meshes of ``grid_study.meshes`` are read for their cell
count and total volume (no topology unless a wall-layer check needs it), and their
representative sizes h = (V/N)^(1/3) (2-D: (A/N)^(1/2)) sorted (Celik et al. 2008). The
rule measures the smallest refinement ratio between neighbouring meshes, graded by the
rule's limits. Three further measurements have grades of their own: the number of meshes
(``meshes``, a warning below three), the largest domain-volume difference
(``volume-difference``, a warning above 1 %) and, under wall functions, how much of the
refinement the first-layer height followed (``first-layer-share``, a warning above 0.5).
Notes say what could not be compared.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Callable

import numpy as np

from caselint import hookimpl
from caselint.errors import CaseFileError, MeshReadError
from caselint.mesh.cellsize import MeshSize, first_layer_heights, mesh_size
from caselint.model import Grade, Limits, Measurement, Note, Rule, RuleResult, Where
from caselint.rulekit import RuleContext

if TYPE_CHECKING:
    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh

_CELIK = ("Celik, Ghia, Roache, Freitas, Coleman & Raad, ASME J. Fluids Eng. 130(7) 078001 "
          "(2008)")
_NASA = ("NASA Glenn / NPARC Alliance tutorial 'Examining Spatial (Grid) Convergence' "
         "(r >= 1.1)")
_ECA = "Eca & Hoekstra, J. Comput. Phys. 262 (2014) (from memory)"
KEY = "grid_study.meshes"
#: Defaults of the rule's parameters (caselint defaults, see GRID_REFINEMENT_RATIO).
VOLUME_TOLERANCE_PERCENT = 1.0
FIRST_LAYER_SHARE = 0.5
#: Three meshes are the fewest that show an order of convergence (Celik 2008).
MIN_MESHES = 3.0


@dataclass(frozen=True)
class FamilyMember:
    """One mesh of a grid study: its case-file key, size and (if measured) first-layer height."""

    key: str
    path: Path
    size: MeshSize
    first_height_m: float | None = None
    missing_walls: tuple[str, ...] = ()

    @property
    def name(self) -> str:
        """The file name, for messages."""
        return self.path.name


def read_member(case: "Case", index: int, *, walls: tuple[str, ...] = (),
                mesh: "Mesh | None" = None,
                read_mesh: "Callable[..., Mesh] | None" = None) -> FamilyMember:
    """Read ``grid_study.meshes[index]`` (units and boundary tags of ``mesh:``) with
    ``read_mesh`` (default: :func:`caselint.mesh.read_mesh`) and size it.

    ``walls`` names boundary groups whose median first-layer height is measured (this builds
    the topology). A mesh that cannot be read raises :class:`CaseFileError` at its key.
    """
    if read_mesh is None:
        from caselint.mesh import read_mesh

    key = f"{KEY}[{index}]"
    path = case.grid_study.meshes[index]
    spec = case.mesh
    if mesh is None:
        try:
            mesh = read_mesh(path, scale_to_m=spec.scale_to_m, tag_array=spec.tag_array,
                             tags=dict(spec.tags) or None, zone=spec.zone)
        except MeshReadError as exc:
            raise CaseFileError(str(case.path), f"cannot read the grid-study mesh: {exc}",
                                line=case.line_of(key), key=key) from exc
    volumes = mesh.cell_volumes
    size = mesh_size(mesh, volumes)
    height, missing = None, ()
    if walls:
        present = tuple(w for w in walls if w in mesh.group_names)
        missing = tuple(w for w in walls if w not in mesh.group_names)
        heights = first_layer_heights(mesh, present, volumes) if present else np.zeros(0)
        heights = heights[heights > 0]
        height = float(np.median(heights)) if heights.size else None
    return FamilyMember(key, path, size, height, missing)


def read_family(case: "Case", *, walls: tuple[str, ...] = (),
                main_mesh: "Callable[[], Mesh] | None" = None,
                read_mesh: "Callable[..., Mesh] | None" = None) -> list[FamilyMember]:
    """Every grid-study mesh of ``case``, sorted finest first (smallest h, then case order).

    ``main_mesh`` gives the case's own mesh, already loaded, for a family member that is the
    same file, so it is not read twice; the others are read with ``read_mesh``.
    """
    members = []
    for i, path in enumerate(case.grid_study.meshes):
        same = main_mesh is not None and Path(path).resolve() == Path(case.mesh.file).resolve()
        members.append(read_member(case, i, walls=walls, mesh=main_mesh() if same else None,
                                   read_mesh=read_mesh))
    return sorted(members, key=lambda m: m.size.h)


def _ratio_words(members: list[FamilyMember], ratios: np.ndarray) -> str:
    pairs = ", ".join(f"{r:.3g} ({a.name} -> {b.name})"
                      for r, a, b in zip(ratios, members[:-1], members[1:]))
    sizes = ", ".join(f"{m.size.h:.4g}" for m in members)
    return f"refinement ratios {pairs}; h = {sizes} m, finest first"


def _volume_measurement(members: list[FamilyMember]) -> Measurement:
    """Largest difference (%) of a mesh's domain volume from the finest mesh's."""
    base = members[0].size.volume
    diffs = np.array([abs(m.size.volume - base) / base * 100.0 for m in members])
    worst = int(np.argmax(diffs))
    unit = "m^3" if members[0].size.dim == 3 else "m^2"
    odd = members[worst]
    if worst == 0:
        detail = f"every mesh holds {base:.6g} {unit}"
    else:
        detail = (f"{odd.name} holds {odd.size.volume:.6g} {unit} against {base:.6g} {unit} in "
                  f"{members[0].name}; meshes of different domains mix geometry with "
                  "discretisation error")
    return Measurement(
        value=float(diffs[worst]), where=Where(key=odd.key if worst else KEY), detail=detail,
        fix="Export every mesh of the study from the same geometry, with the same domain.",
        label="largest domain-volume difference from the finest grid-study mesh",
        grade="volume-difference")


def _count_measurement(n: int) -> Measurement:
    """Number of meshes: below three no order of convergence can be observed."""
    detail = ("three or more meshes give an observed order (GCI safety factor 1.25)" if n >= 3
              else "no order of convergence can be observed, so the GCI needs an assumed order "
                   "and the safety factor 3 (Roache 1994)")
    return Measurement(
        value=float(n), where=Where(key=KEY), detail=detail,
        fix="Add a third mesh, coarser or finer by the same ratio, for an observed order.",
        label="size of the grid study", grade="meshes")


def _first_layer(members: list[FamilyMember],
                 ratios: np.ndarray) -> tuple[Measurement | None, list[Note]]:
    """Under wall functions: how much of the refinement the first-layer height followed.

    The measured value is ln(shrink)/ln(r) for the neighbouring pair where it is largest:
    0 when the first layer is kept, 1 when it is refined with the rest.
    """
    notes: list[Note] = []
    for m in members:
        if m.missing_walls:
            notes.append(Note(
                f"{m.name} has no boundary group {', '.join(repr(w) for w in m.missing_walls)} "
                "(a wall in mesh.boundaries): its first-layer height was not compared",
                Where(key=m.key)))
    pairs = []
    for r, fine, coarse in zip(ratios, members[:-1], members[1:]):
        if fine.first_height_m is None or coarse.first_height_m is None or r <= 1.0:
            continue
        shrink = coarse.first_height_m / fine.first_height_m
        pairs.append((float(np.log(shrink) / np.log(r)), shrink, r, fine, coarse))
    if not pairs:
        return None, notes
    followed, shrink, r, fine, coarse = max(pairs, key=lambda t: t[0])
    detail = (f"median first-layer height {fine.first_height_m:.3g} m in {fine.name} against "
              f"{coarse.first_height_m:.3g} m in {coarse.name} (factor {shrink:.3g} for a "
              f"refinement ratio {r:.3g}); under wall functions y+ falls with it and may leave "
              "the log-law band, which can make the extrapolation misleading (" + _ECA + ")")
    measurement = Measurement(
        value=round(followed, 12), where=Where(key=fine.key), detail=detail,
        fix=("Keep the first-layer height the same in every mesh of the study (refine along the "
             "wall and away from it, not the first layer)."),
        label="share of the refinement followed by the wall first-layer height "
              "(ln of its shrink over ln r)",
        grade="first-layer-share")
    return measurement, notes


def check_grid_refinement(ctx: RuleContext) -> RuleResult:
    """Smallest refinement ratio h_coarse/h_fine between neighbouring grid-study meshes."""
    case = ctx.case
    if len(case.grid_study.meshes) < 2:
        return RuleResult.skip("grid_study.meshes lists one mesh: there is no refinement ratio")
    wall_function = case.physics.turbulence.wall_treatment == "wall-function"
    walls = tuple(sorted(n for n, role in case.mesh.boundaries.items() if role == "wall"))
    members = read_family(case, walls=walls if wall_function else (),
                          main_mesh=lambda: ctx.mesh, read_mesh=ctx.read_mesh)
    dims = {m.size.dim for m in members}
    if len(dims) > 1:
        listed = ", ".join(f"{m.name} {m.size.dim}-D" for m in members)
        return RuleResult.skip(f"the grid-study meshes mix 2-D and 3-D ({listed}): "
                               "they are not one family")
    for m in members:
        if m.size.h <= 0.0:
            return RuleResult.skip(
                f"grid-study mesh {m.name} has no cells or a non-positive total volume "
                f"({m.size.volume:.3g}): its cell size is undefined; fix the mesh first "
                "(see inverted-cells)")
    # Twelve significant digits: a family built with a ratio of exactly 1.1 must not be
    # graded by the round-off of two cube roots.
    ratios = np.array([float(f"{b.size.h / a.size.h:.12g}")
                       for a, b in zip(members[:-1], members[1:])])
    smallest = int(np.argmin(ratios))
    dim = members[0].size.dim
    warn = ctx.limits.warn if ctx.limits.warn is not None else 1.3
    fix = (f"Make each mesh at least {warn:g} times coarser in cell size than the next finer "
           f"one: {warn:g}^{dim} = {warn**dim:.3g} times fewer cells; "
           f"{members[smallest].name} and {members[smallest + 1].name} are too close.")
    measurements = [
        Measurement(value=float(ratios[smallest]), where=Where(key=KEY),
                    detail=_ratio_words(members, ratios), fix=fix),
        _count_measurement(len(members)),
        _volume_measurement(members),
    ]
    notes: list[Note] = []
    for m in members:
        if m.size.nonpositive_cells:
            notes.append(Note(
                f"{m.name} has {m.size.nonpositive_cells} cells of non-positive volume; its "
                "total volume and h are approximate", Where(key=m.key)))
    if wall_function and not walls:
        notes.append(Note("wall functions, but no boundary has the role wall in "
                          "mesh.boundaries: first-layer heights were not compared",
                          Where(key="mesh.boundaries")))
    elif wall_function:
        layer, layer_notes = _first_layer(members, ratios)
        notes.extend(layer_notes)
        if layer is not None:
            measurements.append(layer)
    return RuleResult(measurements=tuple(measurements), notes=tuple(notes))


GRID_REFINEMENT_RATIO = Rule(
    id="grid-refinement-ratio",
    title="Grid-study refinement ratio",
    rationale=(
        "A grid study estimates the discretisation error by Richardson extrapolation and the "
        "Grid Convergence Index (" + _CELIK + "; Roache 1994, 1997). Its meshes must differ "
        "enough for the discretisation error to dominate other errors: the ratio of "
        "representative cell sizes h = (V/N)^(1/3) (2-D: (A/N)^(1/2)) between neighbouring "
        "meshes should exceed 1.3 (Celik 2008, 'from experience'; from memory) and must be "
        "at least 1.1 "
        "(" + _NASA + "). The rule reads every mesh of grid_study.meshes and measures the "
        "smallest ratio. It also warns, with grades of its own, when fewer than three meshes "
        "are given (meshes; no observed order: the GCI then needs an assumed order and the "
        "safety factor 3), when a mesh's domain volume differs from the finest mesh's by more "
        "than 1 % (volume-difference), and, under wall functions (first-layer-share), when "
        "the first-layer height "
        "(median over wall faces of the owner cell's volume over the face area; exact for "
        "prisms and hexahedra) shrinks between neighbouring meshes by more than "
        "r^0.5, which can drive y+ out of the log-law band (" + _ECA + "). When a "
        "concern is more severe than the ratio, the check reports that concern's value."
    ),
    source=_CELIK + "; " + _NASA,
    unit="",
    limits=Limits(warn=1.3, error=1.1),
    hint=("Coarsen or refine the grid-study meshes so that neighbouring meshes differ by a "
          "cell-size ratio of 1.3 or more (about 2.2 times the cells in 3-D)."),
    check=check_grid_refinement,
    worse="lower",
    needs=("grid_study.meshes",),
    grades=(
        Grade("meshes", warn=MIN_MESHES, worse="lower", unit="meshes",
              description="number of meshes in the study", source=_CELIK),
        Grade("volume-difference", warn=VOLUME_TOLERANCE_PERCENT, worse="higher", unit="%",
              description="largest difference in domain volume from the finest mesh",
              source="caselint default"),
        Grade("first-layer-share", warn=FIRST_LAYER_SHARE, worse="higher", unit="",
              description="under wall functions, the share of the refinement the first-layer "
                          "height followed, ln(shrink)/ln(r) (0.5: half the refinement on a "
                          "log scale; 0 = kept, 1 = refined with the rest)",
              source="caselint default; " + _ECA),
    ),
    measures="smallest refinement ratio between neighbouring grid-study meshes",
)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The grid-study rule."""
    return [GRID_REFINEMENT_RATIO]
