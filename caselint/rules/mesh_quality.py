"""Built-in mesh-quality rules: inverted cells, non-orthogonality, skewness, aspect ratio,
growth, face warp.

Each rule reads one metric of :mod:`caselint.mesh.quality` (vectorised, cached on the mesh)
and reports its extreme value, how many cells or faces are past the warning limit, the
worst few ids (worst first) and a point at the worst one. Cell ids are those of the mesh
file (volume cells in file order); face ids are caselint's own numbering, so each finding
also names the cells on either side of its worst faces. Non-orthogonality and growth
ratio attach a histogram of the metric (``RuleResult.plots``) for the review reports.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

import numpy as np

from caselint.bins import linear_bin_edges
from caselint.engine.hookspecs import hookimpl
from caselint.mesh import quality
from caselint.model import (
    MAX_LISTED_IDS,
    Limits,
    Measurement,
    PlotData,
    PlotSeries,
    Rule,
    RuleResult,
    Where,
)

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.mesh.analysis import Mesh

_VERDICT = "Verdict geometric quality library (Stimpson et al., SAND2007-1751, 2007)"
_FV_BOOKS = (
    "Jasak 1996 (PhD thesis, Imperial College); Ferziger & Peric 2002; Moukalled et al. 2016"
)


# -- locating the worst entities (shared with caselint.rules.boundaries) -----------------


def worst_ids(values: np.ndarray, threshold: float | None, worse: str = "higher",
              names: np.ndarray | None = None) -> tuple[np.ndarray, int]:
    """Ids past ``threshold`` (worst first, at most 10) and how many there are.

    Ties go to the lowest id, or to the lowest of ``names`` (the file's ids of the
    entities, :meth:`Mesh.file_cell_ids`) when given. ``threshold`` None counts nothing
    but still lists the single worst id.
    """
    sign = 1.0 if worse == "higher" else -1.0
    badness = sign * values
    count = 0
    if threshold is not None:
        candidates = np.flatnonzero(badness > sign * threshold)
        count = int(candidates.size)
    if count == 0:
        return _single_worst(badness, names), 0
    keep = MAX_LISTED_IDS
    cand_bad = badness[candidates]
    if candidates.size > keep:
        # the candidates worse than the keep-th worst, then the lowest ids of those tied
        # with it (candidates are in id order); a structured mesh can tie millions of
        # values, which must not all be sorted
        kth = np.partition(cand_bad, candidates.size - keep)[candidates.size - keep]
        worse_than = np.flatnonzero(cand_bad > kth)
        tied = np.flatnonzero(cand_bad == kth)
        need = keep - worse_than.size
        if names is not None and tied.size > need:
            tie_names = names[candidates[tied]]
            tied = tied[np.argpartition(tie_names, need - 1)[:need]]
        sel = np.sort(np.concatenate([worse_than, tied[:need]]))
        candidates, cand_bad = candidates[sel], cand_bad[sel]
    tie = candidates if names is None else names[candidates]
    order = np.lexsort((tie, -cand_bad))
    return candidates[order][:keep].astype(np.int64), count


def _single_worst(badness: np.ndarray, names: np.ndarray | None) -> np.ndarray:
    """The one worst id (ties: the lowest id or name; a NaN counts as worst), or none.

    One pass over the values: no sort, no id array as long as the mesh.
    """
    if badness.size == 0:
        return np.empty(0, dtype=np.int64)
    top = np.max(badness)
    tied = np.flatnonzero(np.isnan(badness) if np.isnan(top) else badness == top)
    pick = tied[np.argmin(names[tied])] if names is not None and tied.size > 1 else tied[0]
    return np.array([pick], dtype=np.int64)


def cell_names(mesh: "Mesh", cells: np.ndarray) -> tuple[int, ...]:
    """The file's ids of ``cells`` (caselint's own ids), in the same order, for a Where."""
    return tuple(int(c) for c in mesh.file_cell_ids(cells))


def first_cells(mesh: "Mesh", cells: np.ndarray) -> tuple[int, ...]:
    """The lowest file ids among the set ``cells``, sorted, at most ten, for a Where."""
    named = mesh.file_cell_ids(cells)
    if named.size > MAX_LISTED_IDS:
        named = np.partition(named, MAX_LISTED_IDS - 1)[:MAX_LISTED_IDS]
    return tuple(int(c) for c in np.sort(named))


def plural(count: int, noun: str) -> str:
    """``1 face``, ``3 faces``."""
    return f"{count} {noun}" if count == 1 else f"{count} {noun}s"


def finite_point(xyz: np.ndarray) -> tuple[float, float, float] | None:
    """A point as a plain tuple, or None when a damaged entity has no finite centroid."""
    if not np.all(np.isfinite(xyz)):
        return None
    return (float(xyz[0]), float(xyz[1]), float(xyz[2]))


def _cells_of_faces(mesh: "Mesh", faces: np.ndarray) -> np.ndarray:
    """Cells on either side of ``faces`` (owner then neighbour), first appearance order."""
    pairs = np.stack([mesh.owner[faces], mesh.neighbour[faces]], axis=1).ravel()
    pairs = pairs[pairs >= 0]
    _, first = np.unique(pairs, return_index=True)
    return pairs[np.sort(first)]


def _face_where(mesh: "Mesh", considered: np.ndarray, limits: Limits,
                faces_considered: np.ndarray | None):
    """Where of a face metric, given its ``considered`` values on ``faces_considered``
    (None: all faces), plus (worst face, offender count)."""
    threshold = limits.warn if limits.warn is not None else limits.error
    local, count = worst_ids(considered, threshold)
    listed = local if faces_considered is None else faces_considered[local]
    worst = int(listed[0])
    if count:
        offenders = np.flatnonzero(considered > threshold)
        if faces_considered is not None:
            offenders = faces_considered[offenders]
        # distinct cells by marking (linear; np.unique sorts millions of offenders)
        touched = np.zeros(mesh.n_cells, dtype=bool)
        touched[mesh.owner[offenders]] = True
        nbr = mesh.neighbour[offenders]
        touched[nbr[nbr >= 0]] = True                                  # -1 is no cell
        cell_count = int(np.count_nonzero(touched))
    else:
        cell_count = 0
    cells = _cells_of_faces(mesh, listed)[:MAX_LISTED_IDS]
    where = Where(
        faces=tuple(int(f) for f in listed) if count else (),
        face_count=count,
        cells=cell_names(mesh, cells) if count else (),
        cell_count=cell_count,
        point=finite_point(mesh.face_centroids[worst]),
    )
    return where, worst, count


def _face_place(mesh: "Mesh", face: int) -> str:
    """Plain words for where a face is: between two cells, or on a boundary."""
    owner = int(mesh.file_cell_ids(mesh.owner[face]))
    neighbour = int(mesh.neighbour[face])
    if neighbour >= 0:
        neighbour = int(mesh.file_cell_ids(neighbour))
        return f"between cells {owner} and {neighbour}"
    group = int(mesh.face_group[face])
    name = f" '{mesh.group_names[group]}'" if group >= 0 else ""
    return f"on boundary{name} at cell {owner}"


def _nonfinite_skip(values: np.ndarray, what: str) -> RuleResult | None:
    """Skip (instead of reporting NaN) when a damaged mesh gives a non-finite metric."""
    if np.all(np.isfinite(values)):
        return None
    n = int(np.count_nonzero(~np.isfinite(values)))
    return RuleResult.skip(
        f"{what} is not finite on {n} entities (degenerate geometry); fix inverted or "
        "collapsed cells first (see inverted-cells)"
    )


def _face_rule_result(ctx: "RuleContext", values: np.ndarray, faces: np.ndarray | None,
                      what: str, unit_words: str, fmt: str) -> RuleResult:
    """Measurement of the maximum of a face metric over ``faces`` (None: all), with the
    offending faces located."""
    mesh = ctx.mesh
    considered = values if faces is None else values[faces]
    skip = _nonfinite_skip(considered, what)
    if skip is not None:
        return skip
    where, worst, count = _face_where(mesh, considered, ctx.limits, faces)
    value = float(values[worst])
    threshold = ctx.limits.warn if ctx.limits.warn is not None else ctx.limits.error
    if count:
        lead = f"{plural(count, 'face')} above {threshold:g}{unit_words}, worst"
    else:
        lead = f"no face above the limit; largest {format(value, fmt)}{unit_words}"
    return RuleResult(measurements=(
        Measurement(value=value, where=where, detail=f"{lead} {_face_place(mesh, worst)}"),
    ))


def _with_histogram(result: RuleResult, ctx: "RuleContext", values: np.ndarray,
                    edges: np.ndarray, title: str, x_label: str, y_label: str) -> RuleResult:
    """``result`` with a histogram of ``values`` attached for the review reports."""
    if result.skipped is not None:
        return result
    plot = PlotData(title=title, x_label=x_label, y_label=y_label,
                    series=(PlotSeries.histogram(values, edges),), limits=ctx.limits)
    return dataclasses.replace(result, plots=(plot,))


def _no_cells(mesh: "Mesh") -> RuleResult | None:
    if mesh.n_cells == 0:
        return RuleResult.skip("the mesh has no volume cells")
    return None


# -- checks ------------------------------------------------------------------------------


def check_inverted_cells(ctx: "RuleContext") -> RuleResult:
    """Count cells with a non-positive volume or a negative corner Jacobian."""
    mesh = ctx.mesh
    if (skip := _no_cells(mesh)) is not None:
        return skip
    volumes = mesh.cell_volumes
    corner = quality.min_corner_jacobian(mesh)
    scaled = quality.scaled_jacobian(mesh)
    # general polyhedra have no corner Jacobian (NaN): their test is a face seen from behind
    bad = (volumes <= 0.0) | (corner < 0.0) | quality.folded_polyhedra(mesh)
    bad_ids = np.flatnonzero(bad)
    count = int(bad_ids.size)
    # worst first: the most negative scaled Jacobian, then the smallest volume
    names = mesh.file_cell_ids()
    order = np.lexsort((names[bad_ids], volumes[bad_ids], scaled[bad_ids]))
    listed = bad_ids[order][:MAX_LISTED_IDS]
    if count:
        worst = int(listed[0])
        jacobian = (f", scaled Jacobian {scaled[worst]:.3g}" if np.isfinite(scaled[worst])
                    else ", a polyhedron whose centre sees a face from behind")
        detail = (f"{plural(count, 'cell')} inverted or folded, worst cell {names[worst]} "
                  f"(volume {volumes[worst]:.3g} m^3{jacobian})")
    elif np.isfinite(scaled).any():
        # cells without a known shape have no scaled Jacobian: rank the others
        ranked = np.where(np.isfinite(scaled), scaled, np.inf)
        worst = int(worst_ids(ranked, None, "lower", names)[0][0])  # ties: lowest file id
        detail = (f"no inverted cells; lowest scaled Jacobian {scaled[worst]:.3g} in cell "
                  f"{names[worst]}")
    else:
        worst = int(worst_ids(volumes, None, "lower", names)[0][0])
        detail = (f"no inverted cells; smallest volume {volumes[worst]:.3g} m^3 in cell "
                  f"{names[worst]}")
    where = Where(cells=cell_names(mesh, listed), cell_count=count,
                  point=finite_point(mesh.cell_centroids[worst]))
    return RuleResult(measurements=(Measurement(value=float(count), where=where, detail=detail),))


def check_non_orthogonality(ctx: "RuleContext") -> RuleResult:
    """Largest angle between a face's area vector and the line joining the cell centres."""
    mesh = ctx.mesh
    if (skip := _no_cells(mesh)) is not None:
        return skip
    values = quality.non_orthogonality_deg(mesh)
    result = _face_rule_result(ctx, values, None, "non-orthogonality", " deg", ".1f")
    edges = linear_bin_edges(values, resolution=0.5, limits=ctx.limits)
    return _with_histogram(result, ctx, values, edges, "Face non-orthogonality",
                           "non-orthogonality (deg)", "faces (internal and boundary)")


def check_skewness(ctx: "RuleContext") -> RuleResult:
    """Largest face skewness: centroid offset from where PN crosses the face, over |PN|."""
    mesh = ctx.mesh
    if (skip := _no_cells(mesh)) is not None:
        return skip
    internal = np.flatnonzero(mesh.neighbour >= 0)
    if internal.size == 0:
        return RuleResult.skip("the mesh has no internal faces (a single cell): "
                               "skewness is undefined")
    values = quality.skewness(mesh)
    return _face_rule_result(ctx, values, internal, "skewness", "", ".3g")


def check_growth_ratio(ctx: "RuleContext") -> RuleResult:
    """Largest volume ratio between two cells sharing a face."""
    mesh = ctx.mesh
    if (skip := _no_cells(mesh)) is not None:
        return skip
    internal = np.flatnonzero(mesh.neighbour >= 0)
    if internal.size == 0:
        return RuleResult.skip("the mesh has no internal faces (a single cell): "
                               "no neighbours to compare")
    values = quality.growth_ratio(mesh)
    result = _face_rule_result(ctx, values, internal, "growth ratio", "", ".4g")
    edges = linear_bin_edges(values[internal], resolution=0.01, limits=ctx.limits)
    return _with_histogram(result, ctx, values[internal], edges, "Volume growth ratio",
                           "growth ratio (larger / smaller cell volume)", "internal faces")


def check_aspect_ratio(ctx: "RuleContext") -> RuleResult:
    """Largest edge ratio (longest over shortest edge) of any cell."""
    mesh = ctx.mesh
    if (skip := _no_cells(mesh)) is not None:
        return skip
    values = quality.edge_ratio(mesh)
    shaped = mesh.cell_shape >= 0
    n_general = int(mesh.n_cells - np.count_nonzero(shaped))
    if n_general == mesh.n_cells:
        return RuleResult.skip(
            f"the edge ratio is defined per cell shape; all {plural(n_general, 'cell')} "
            "are general polyhedra (polygons in 2-D)")
    # not defined on general polyhedra: they neither pass nor fail, and are counted
    ranked = np.where(shaped, values, -np.inf)
    threshold = ctx.limits.warn if ctx.limits.warn is not None else ctx.limits.error
    listed, count = worst_ids(ranked, threshold, names=mesh.file_cell_ids())
    worst = int(listed[0])
    name = int(mesh.file_cell_ids(worst))
    if count:
        detail = (f"{plural(count, 'cell')} above {threshold:g}, "
                  f"worst cell {name} ({values[worst]:.4g})")
    else:
        detail = f"no cell above the limit; largest {values[worst]:.4g} in cell {name}"
    if n_general:
        kind = "polyhedron" if n_general == 1 else "polyhedra"
        detail += f"; not defined for {n_general} general {kind}"
    where = Where(cells=cell_names(mesh, listed) if count else (), cell_count=count,
                  point=finite_point(mesh.cell_centroids[worst]))
    measurement = Measurement(value=float(values[worst]), where=where, detail=detail)
    return RuleResult(measurements=(measurement,))


def check_face_warp(ctx: "RuleContext") -> RuleResult:
    """Largest face warp: how far a face's fan triangles turn from the face normal."""
    mesh = ctx.mesh
    if (skip := _no_cells(mesh)) is not None:
        return skip
    if mesh.dim == 2:
        return RuleResult.skip("faces of a 2-D mesh are edges, which cannot warp")
    values = quality.face_warp_deg(mesh)
    return _face_rule_result(ctx, values, None, "face warp", " deg", ".1f")


# -- the rules ---------------------------------------------------------------------------

INVERTED_CELLS = Rule(
    id="inverted-cells",
    title="Inverted or folded cells",
    rationale=(
        "A cell with zero or negative volume, or with a corner whose Jacobian determinant is "
        "negative (the cell folds over itself), has no meaningful control volume: fluxes and "
        "gradients on it are wrong in sign or undefined and most solvers stop or diverge. The "
        "corner Jacobian follows the Verdict definitions (" + _VERDICT + "). A general "
        "polyhedron (no corners of a known shape) counts as folded when its centroid sees one "
        "of its faces from behind, which no finite-volume cell centre may. A single such cell "
        "is an error."
    ),
    source=_VERDICT,
    unit="cells",
    limits=Limits(warn=None, error=0),
    hint=("Re-mesh or untangle the listed cells: check the node ordering of hand-made blocks, "
          "collapsed edges, and inflation layers that fold at sharp convex corners."),
    check=check_inverted_cells,
    measures=("number of inverted or folded cells (non-positive volume, negative corner "
              "Jacobian, or a polyhedron's face seen from behind)"),
)

NON_ORTHOGONALITY = Rule(
    id="non-orthogonality",
    title="Face non-orthogonality",
    rationale=(
        "The angle between a face's area vector S_f and the vector d joining the centres of "
        "the two cells it separates (on a boundary face, from the cell centre to the face "
        "centre). Finite-volume diffusion terms use d; when it departs from S_f the "
        "non-orthogonal correction grows, needs extra iterations and limits stability "
        "(" + _FV_BOOKS + "). Warning above 70 deg, error above 85 deg: common practice."
    ),
    source=_FV_BOOKS + "; limits: common practice",
    unit="deg",
    limits=Limits(warn=70.0, error=85.0),
    hint=("Straighten the cells around the listed faces: reduce shear in swept or sheared "
          "blocks, align block edges with each other, smooth the mesh near sharp corners."),
    check=check_non_orthogonality,
    measures="largest face non-orthogonality (angle between face area vector and cell-centre line)",
)

SKEWNESS = Rule(
    id="skewness",
    title="Face skewness",
    rationale=(
        "Where the line joining two cell centres crosses a face at a distance from the face "
        "centroid, face values interpolated along that line are not face-centred and lose "
        "accuracy (" + _FV_BOOKS + "). caselint measures |x_f - x_i| / |d|: the distance from "
        "the face centroid x_f to the crossing point x_i, over the centre distance |d|; 0 is "
        "ideal, boundary faces are not measured. Warning above 0.5, error above 1.0: common "
        "practice (a caselint default; tune per solver)."
    ),
    source=_FV_BOOKS + "; limits: common practice",
    unit="",
    limits=Limits(warn=0.5, error=1.0),
    hint=("Even out cell sizes and shapes across the listed faces: avoid abrupt jumps in "
          "block spacing and stretched cells that meet at a kink."),
    check=check_skewness,
    measures="largest face skewness (|x_f - x_i| / |d|, internal faces)",
)

ASPECT_RATIO = Rule(
    id="aspect-ratio",
    title="Cell aspect ratio (edge ratio)",
    rationale=(
        "The edge ratio of a cell, its longest edge over its shortest (Verdict 'edge ratio', "
        + _VERDICT + "). Very flat or needle-like cells slow convergence and amplify round-off. "
        "Wall-layer cells are anisotropic by design (thin normal to the wall, long along it), "
        "so the limits are loose: warning above 1000, error above 10000 (common practice). "
        "The edge ratio is defined per cell shape (tetrahedron, hexahedron, wedge, pyramid, "
        "triangle, quadrilateral); general polyhedra are counted as not measured."
    ),
    source=_VERDICT + "; limits: common practice",
    unit="",
    limits=Limits(warn=1000.0, error=10000.0),
    hint=("Refine along the long edges of the listed cells or thicken the first layer; in "
          "wall layers high ratios are expected, so only act when they appear away from walls."),
    check=check_aspect_ratio,
    measures="largest cell edge ratio (longest over shortest edge)",
)

GROWTH_RATIO = Rule(
    id="growth-ratio",
    title="Volume growth between neighbouring cells",
    rationale=(
        "The larger over the smaller volume of two cells sharing a face. Sudden jumps in cell "
        "size add truncation error and spurious gradients; expansion between neighbours at "
        "most about 1.3 is common practice (warning above 1.3), and a doubling (above 2.0, "
        "common practice) is an error. Pairs with a non-positive volume are left to "
        "inverted-cells."
    ),
    source="common practice",
    unit="",
    limits=Limits(warn=1.3, error=2.0),
    hint=("Grade the spacing more gently near the listed faces (smaller expansion ratio, more "
          "cells), and blend refinement zones over several cells rather than one."),
    check=check_growth_ratio,
    measures="largest volume ratio of two neighbouring cells",
)

FACE_WARP = Rule(
    id="face-warp",
    title="Face warp",
    rationale=(
        "A face whose points do not lie in one plane has no single normal: the face area "
        "vector and centroid a solver uses are those of an averaged surface, and fluxes, "
        "gradients and the non-orthogonal correction pick up an error that grows with the "
        "warp. caselint fans each face into triangles about its vertex mean (the geometry "
        "of " + _FV_BOOKS + ") and measures the largest angle between a triangle's normal "
        "and the face's area vector: 0 on planar faces and on triangles; a square with "
        "alternate corners lifted by +h and -h warps by atan(2 h / side). Warning above "
        "20 deg, error above 40 deg: common practice (caselint defaults; tune per solver)."
    ),
    source=_FV_BOOKS + "; limits: common practice",
    unit="deg",
    limits=Limits(warn=20.0, error=40.0),
    hint=("Flatten the listed faces: split warped quadrilaterals or polygons into "
          "triangles (or planar pieces), smooth the mesh near curved walls, or reduce the "
          "twist of swept blocks."),
    check=check_face_warp,
    measures="largest face warp (angle between a fan triangle's normal and the face normal)",
)

RULES: tuple[Rule, ...] = (INVERTED_CELLS, NON_ORTHOGONALITY, SKEWNESS, ASPECT_RATIO, GROWTH_RATIO,
                           FACE_WARP)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in mesh-quality rules."""
    return list(RULES)
