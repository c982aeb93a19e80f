"""Built-in mesh-quality rules: inverted cells, non-orthogonality, skewness, aspect ratio, growth.

Each rule reads one metric of :mod:`caselint.mesh.quality` (vectorised, cached on the mesh)
and reports its extreme value, how many cells or faces are past the warning limit, the
worst few ids (worst first) and a point at the worst one. Cell ids are those of the mesh
file (volume cells in file order); face ids are caselint's own numbering, so each finding
also names the cells on either side of its worst faces. Non-orthogonality and growth
ratio attach a histogram of the metric (``RuleResult.plots``) for the review reports.

The four metric rules are graded by extent and place (:mod:`caselint.engine.extent`):
their measurement carries the metric per face or cell with its place (region of interest,
near a no-slip wall, elsewhere; :mod:`caselint.rulekit.places`). The main grade
(``strict``) holds the worst value in regions and near walls to the rule's limits; grade
``elsewhere`` bounds the worst value elsewhere where it breaks a solver; grade
``elsewhere-share`` bounds the share of the rest beyond the warning limit.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from caselint import hookimpl
from caselint.mesh import quality
from caselint.model import MAX_LISTED_IDS, Limits, Measurement, Rule, RuleResult, Where
from caselint.rulekit import RuleContext, cell_names, finite_point, plural, worst_ids
from caselint.rulekit.measures import (
    cell_extent,
    cell_measurement,
    face_extent,
    face_measurement,
    graded_by_place,
    nonfinite_skip,
    with_histogram,
)

_VERDICT = "Verdict geometric quality library (Stimpson et al., SAND2007-1751, 2007)"
#: Most bins of a histogram a rule attaches (growth ratio: 0.05 wide up to 1.5x the limit).
MAX_BINS = 200
_FV_BOOKS = (
    "Jasak 1996 (PhD thesis, Imperial College); Ferziger & Peric 2002; Moukalled et al. 2016"
)
_PLACES_WORDS = (
    " Graded by place: in regions of interest and the near_wall_layers cell layers next to "
    "no-slip walls the worst value is held to these limits (grade strict); elsewhere the "
    "worst value is held to the elsewhere grade and the share of faces or cells beyond the "
    "warning limit to elsewhere-share (a warning above 1 %, an error above 10 %, caselint "
    "default), since a compromise far from the resolved flow is common practice. The report "
    "gives the distribution (percentiles, share beyond each limit, where the worst sits)."
)


def _face_result(ctx: RuleContext, values: np.ndarray, faces: np.ndarray | None, what: str,
                 unit_words: str, fmt: str) -> RuleResult:
    """The largest of a face metric over ``faces`` (None: all), with its extent by place."""
    considered = values if faces is None else values[faces]
    if (skip := nonfinite_skip(considered, what)) is not None:
        return skip
    measurement = face_measurement(ctx.mesh, values, faces, ctx.limits, unit_words, fmt)
    extent = face_extent(ctx, values, faces, unit_words, fmt)
    return RuleResult(measurements=(dataclasses.replace(measurement, extent=extent),))


def _internal_faces(ctx: RuleContext, what: str) -> np.ndarray | RuleResult:
    internal = np.flatnonzero(ctx.mesh.neighbour >= 0)
    if internal.size == 0:
        return RuleResult.skip(f"the mesh has no internal faces (a single cell): {what}")
    return internal


# -- checks ------------------------------------------------------------------------------


def check_inverted_cells(ctx: RuleContext) -> RuleResult:
    """Count cells with a non-positive volume or a negative corner Jacobian."""
    mesh = ctx.mesh
    volumes = mesh.cell_volumes
    corner = quality.min_corner_jacobian(mesh)
    scaled = quality.scaled_jacobian(mesh)
    bad = (volumes <= 0.0) | (corner < 0.0)
    bad_ids = np.flatnonzero(bad)
    count = int(bad_ids.size)
    # worst first: the most negative scaled Jacobian, then the smallest volume
    names = mesh.file_cell_ids()
    order = np.lexsort((names[bad_ids], volumes[bad_ids], scaled[bad_ids]))
    listed = bad_ids[order][:MAX_LISTED_IDS]
    if count:
        worst = int(listed[0])
        detail = (f"{plural(count, 'cell')} inverted or folded, worst cell {names[worst]} "
                  f"(volume {volumes[worst]:.3g} m^3, scaled Jacobian {scaled[worst]:.3g})")
    else:
        worst = int(worst_ids(scaled, None, "lower", names)[0][0])  # ties: lowest file id
        detail = (f"no inverted cells; lowest scaled Jacobian {scaled[worst]:.3g} in cell "
                  f"{names[worst]}")
    where = Where(cells=cell_names(mesh, listed), cell_count=count,
                  point=finite_point(mesh.cell_centroids[worst]))
    return RuleResult(measurements=(Measurement(value=float(count), where=where, detail=detail),))


def check_non_orthogonality(ctx: RuleContext) -> RuleResult:
    """Largest angle between a face's area vector and the line joining the cell centres."""
    values = quality.non_orthogonality_deg(ctx.mesh)
    result = _face_result(ctx, values, None, "non-orthogonality", " deg", ".1f")
    # 5 deg bins over 0-90 deg; the plot counts faces beyond 90 deg (flipped) separately.
    edges = np.linspace(0.0, 90.0, 19)
    return with_histogram(result, ctx.limits, values, edges, "Face non-orthogonality",
                          "non-orthogonality (deg)", "faces (internal and boundary)")


def check_skewness(ctx: RuleContext) -> RuleResult:
    """Largest face skewness: centroid offset from where PN crosses the face, over |PN|."""
    internal = _internal_faces(ctx, "skewness is undefined")
    if isinstance(internal, RuleResult):
        return internal
    return _face_result(ctx, quality.skewness(ctx.mesh), internal, "skewness", "", ".3g")


def check_growth_ratio(ctx: RuleContext) -> RuleResult:
    """Largest volume ratio between two cells sharing a face."""
    internal = _internal_faces(ctx, "no neighbours to compare")
    if isinstance(internal, RuleResult):
        return internal
    values = quality.growth_ratio(ctx.mesh)
    result = _face_result(ctx, values, internal, "growth ratio", "", ".4g")
    # Bins of 0.05 from 1 to 1.5x the highest limit (at least 2); the plot counts the rest.
    # A rule set may raise the limits to any value: past MAX_BINS bins of 0.05 the bins
    # widen, so a plot never holds millions of bins.
    top_limit = max(v for v in (ctx.limits.error, ctx.limits.warn, 2.0 / 1.5) if v is not None)
    top_limit = min(top_limit, 1e6)   # beyond, the plot range would overflow; counted above
    width = max(0.05, (1.5 * top_limit - 1.0) / MAX_BINS)
    n_bins = int(np.ceil(round((1.5 * top_limit - 1.0) / width, 6)))
    edges = np.round(1.0 + width * np.arange(n_bins + 1), 9)
    return with_histogram(result, ctx.limits, values[internal], edges, "Volume growth ratio",
                          "growth ratio (larger / smaller cell volume)", "internal faces")


def check_aspect_ratio(ctx: RuleContext) -> RuleResult:
    """Largest edge ratio (longest over shortest edge) of any cell."""
    values = quality.edge_ratio(ctx.mesh)
    if (skip := nonfinite_skip(values, "edge ratio")) is not None:
        return skip
    measurement = cell_measurement(ctx.mesh, values, None, ctx.limits, ".4g")
    return RuleResult(measurements=(
        dataclasses.replace(measurement, extent=cell_extent(ctx, values, ".4g")),))


# -- the rules ---------------------------------------------------------------------------

INVERTED_CELLS = Rule(
    id="inverted-cells",
    title="Inverted or folded cells",
    rationale=(
        "A cell with zero or negative volume, or with a corner whose Jacobian determinant is "
        "negative (the cell folds over itself), has no meaningful control volume: fluxes and "
        "gradients on it are wrong in sign or undefined and most solvers stop or diverge. The "
        "corner Jacobian follows the Verdict definitions (" + _VERDICT + "). A single such cell "
        "is an error."
    ),
    source=_VERDICT,
    unit="cells",
    limits=Limits(warn=None, error=0),
    hint=("Re-mesh or untangle the listed cells: check the node ordering of hand-made blocks, "
          "collapsed edges, and inflation layers that fold at sharp convex corners."),
    check=check_inverted_cells,
    measures="number of inverted or folded cells (non-positive volume or negative corner Jacobian)",
)

NON_ORTHOGONALITY = Rule(
    id="non-orthogonality",
    title="Face non-orthogonality",
    rationale=(
        "The angle between a face's area vector S_f and the vector d joining the centres of "
        "the two cells it separates (on a boundary face, from the cell centre to the face "
        "centre). Finite-volume diffusion terms use d; when it departs from S_f the "
        "non-orthogonal correction grows, needs extra iterations and limits stability "
        "(" + _FV_BOOKS + "). Warning above 70 deg, error above 85 deg: common practice. Near "
        "90 deg the correction breaks down wherever the face is, so elsewhere the error limit "
        "85 deg stays (grade elsewhere)." + _PLACES_WORDS
    ),
    source=_FV_BOOKS + "; limits: common practice",
    unit="deg",
    limits=Limits(warn=70.0, error=85.0),
    hint=("Straighten the cells around the listed faces: reduce shear in swept or sheared "
          "blocks, align block edges with each other, smooth the mesh near sharp corners."),
    check=check_non_orthogonality,
    measures="largest face non-orthogonality (angle between face area vector and cell-centre line)",
    **graded_by_place(elsewhere=Limits(warn=None, error=85.0),
                      elsewhere_source="common practice (the error limit, where the "
                                       "non-orthogonal correction breaks down)"),
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
        "practice (a caselint default; tune per solver). Beyond 1 the interpolation point "
        "lies farther from the face centroid than the cells are apart, which destabilises "
        "most solvers wherever it happens, so elsewhere the error limit 1.0 stays (grade "
        "elsewhere)." + _PLACES_WORDS
    ),
    source=_FV_BOOKS + "; limits: common practice",
    unit="",
    limits=Limits(warn=0.5, error=1.0),
    hint=("Even out cell sizes and shapes across the listed faces: avoid abrupt jumps in "
          "block spacing and stretched cells that meet at a kink."),
    check=check_skewness,
    measures="largest face skewness (|x_f - x_i| / |d|, internal faces)",
    **graded_by_place(elsewhere=Limits(warn=None, error=1.0),
                      elsewhere_source="common practice (the error limit)"),
)

ASPECT_RATIO = Rule(
    id="aspect-ratio",
    title="Cell aspect ratio (edge ratio)",
    rationale=(
        "The edge ratio of a cell, its longest edge over its shortest (Verdict 'edge ratio', "
        + _VERDICT + "). Very flat or needle-like cells slow convergence and amplify round-off. "
        "Wall-layer cells are anisotropic by design (thin normal to the wall, long along it), "
        "so the limits are loose: warning above 1000, error above 10000 (common practice). "
        "A flat cell far from the resolved flow breaks nothing, so elsewhere the worst value "
        "is only reported (grade elsewhere has no limits)." + _PLACES_WORDS.replace(
            "faces or cells", "cells")
    ),
    source=_VERDICT + "; limits: common practice",
    unit="",
    limits=Limits(warn=1000.0, error=10000.0),
    hint=("Refine along the long edges of the listed cells or thicken the first layer; in "
          "wall layers high ratios are expected, so only act when they appear away from walls."),
    check=check_aspect_ratio,
    measures="largest cell edge ratio (longest over shortest edge)",
    **graded_by_place(elsewhere=Limits(),
                      elsewhere_source="caselint default (reported, not graded)"),
)

GROWTH_RATIO = Rule(
    id="growth-ratio",
    title="Volume growth between neighbouring cells",
    rationale=(
        "The larger over the smaller volume of two cells sharing a face. Sudden jumps in cell "
        "size add truncation error and spurious gradients; expansion between neighbours at "
        "most about 1.3 is common practice (warning above 1.3), and a doubling (above 2.0, "
        "common practice) is an error. Pairs with a non-positive volume are left to "
        "inverted-cells. A size jump far from the resolved flow costs accuracy where little "
        "is resolved, so elsewhere the worst value is only reported (grade elsewhere has no "
        "limits)." + _PLACES_WORDS.replace("faces or cells", "faces")
    ),
    source="common practice",
    unit="",
    limits=Limits(warn=1.3, error=2.0),
    hint=("Grade the spacing more gently near the listed faces (smaller expansion ratio, more "
          "cells), and blend refinement zones over several cells rather than one."),
    check=check_growth_ratio,
    measures="largest volume ratio of two neighbouring cells",
    **graded_by_place(elsewhere=Limits(),
                      elsewhere_source="caselint default (reported, not graded)"),
)

RULES: tuple[Rule, ...] = (INVERTED_CELLS, NON_ORTHOGONALITY, SKEWNESS, ASPECT_RATIO, GROWTH_RATIO)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in mesh-quality rules."""
    return list(RULES)
