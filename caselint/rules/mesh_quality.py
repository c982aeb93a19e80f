"""Built-in mesh-quality rules: inverted cells, non-orthogonality, skewness, aspect ratio,
growth, face warp.

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
from caselint.model import MAX_LISTED_IDS, Grade, Limits, Measurement, Rule, RuleResult, Where
from caselint.rulekit import (
    RuleContext, cell_names, finite_point, first_limit, plural, worst_ids,
)
from caselint.rulekit.measures import (
    cell_extent,
    cell_measurement,
    face_extent,
    face_measurement,
    graded_by_place,
    linear_bin_edges,
    nonfinite_skip,
    with_histogram,
)
from caselint.rulekit.pictures import cut_picture, face_values_per_cell

_VERDICT = "Verdict geometric quality library (Stimpson et al., SAND2007-1751, 2007)"
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
    if (skip := nonfinite_skip(values, what, faces)) is not None:
        return skip
    measurement = face_measurement(ctx.mesh, values, faces, ctx.limits, unit_words, fmt)
    extent = face_extent(ctx, values, faces, unit_words, fmt)
    return RuleResult(measurements=(dataclasses.replace(measurement, extent=extent),),
                      plots=_face_picture(ctx, values, faces, measurement.value, what))


def _past_limit(ctx: RuleContext, value: float, worse: str = "higher") -> bool:
    """Whether the worst value crosses the rule's first limit (then a picture is drawn)."""
    limit = first_limit(ctx.limits)
    return limit is not None and (value > limit if worse == "higher" else value < limit)


def _face_picture(ctx: RuleContext, values: np.ndarray, faces: np.ndarray | None,
                  worst_value: float, what: str) -> tuple:
    """A cut through the cells at the worst face, when the worst crosses the limit."""
    if not _past_limit(ctx, worst_value):
        return ()
    mesh = ctx.mesh
    per_cell = face_values_per_cell(mesh, values, faces)
    considered = values if faces is None else values[faces]
    worst_face = int(np.argmax(considered)) if faces is None else int(faces[np.argmax(considered)])
    owner, nbr = int(mesh.owner[worst_face]), int(mesh.neighbour[worst_face])
    worst_cell = nbr if nbr >= 0 and per_cell[nbr] > per_cell[owner] else owner
    picture = cut_picture(ctx, per_cell, worst_cell, what.capitalize(),
                          f"largest {what} of the cell's faces",
                          worst_face=worst_face)
    return () if picture is None else (picture,)


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
    plots = ()
    if count:
        picture = cut_picture(ctx, bad.astype(float), worst, "Inverted cells",
                              "1 inverted or folded, 0 valid")
        plots = () if picture is None else (picture,)
    return RuleResult(measurements=(Measurement(value=float(count), where=where, detail=detail),),
                      plots=plots)


def check_non_orthogonality(ctx: RuleContext) -> RuleResult:
    """Largest angle between a face's area vector and the line joining the cell centres,
    over internal faces; boundary faces measured apart (grade ``boundary``)."""
    mesh = ctx.mesh
    values = quality.non_orthogonality_deg(mesh)
    n = mesh.n_internal
    if not n:                            # a single cell: its boundary faces are all there is
        result = _face_result(ctx, values, None, "non-orthogonality", " deg", ".1f")
        edges = linear_bin_edges(values, resolution=0.5, limits=ctx.limits)
        return with_histogram(result, ctx.limits, values, edges, "Face non-orthogonality",
                              "non-orthogonality (deg)", "boundary faces")
    internal = np.arange(n)
    result = _face_result(ctx, values, internal, "non-orthogonality", " deg", ".1f")
    if result.skipped is None and n < mesh.n_faces:
        boundary = _boundary_angle(ctx, values, np.arange(n, mesh.n_faces))
        result = dataclasses.replace(result, measurements=(*result.measurements, boundary))
    edges = linear_bin_edges(values[:n], resolution=0.5, limits=ctx.limits)
    return with_histogram(result, ctx.limits, values[:n], edges, "Face non-orthogonality",
                          "non-orthogonality (deg)", "internal faces")


def _boundary_angle(ctx: RuleContext, values: np.ndarray, faces: np.ndarray) -> Measurement:
    """The worst non-orthogonality at boundary faces (cell centre to face centre)."""
    m = face_measurement(ctx.mesh, values, faces, ctx.grade("boundary"), " deg", ".1f")
    return dataclasses.replace(m, grade="boundary", label=(
        "non-orthogonality at boundary faces (cell centre to face centre)"))


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
    edges = linear_bin_edges(values[internal], resolution=0.01, limits=ctx.limits)
    return with_histogram(result, ctx.limits, values[internal], edges, "Volume growth ratio",
                          "growth ratio (larger / smaller cell volume)", "internal faces")


def check_aspect_ratio(ctx: RuleContext) -> RuleResult:
    """Largest edge ratio (longest over shortest edge) of any cell."""
    values = quality.edge_ratio(ctx.mesh)
    mesh = ctx.mesh
    shaped = np.flatnonzero(mesh.cell_shape >= 0)
    n_general = int(mesh.n_cells - shaped.size)
    if not shaped.size:
        return RuleResult.skip(
            f"the edge ratio is defined per cell shape; all {plural(n_general, 'cell')} "
            "are general polyhedra (polygons in 2-D)")
    # not defined on general polyhedra: they neither pass nor fail, and are counted
    cells = shaped if n_general else None
    measurement = cell_measurement(mesh, values, cells, ctx.limits, ".4g")
    if n_general:
        kind = "polyhedron" if n_general == 1 else "polyhedra"
        measurement = dataclasses.replace(
            measurement, detail=f"{measurement.detail}; not defined for {n_general} general {kind}")
    plots = ()
    if _past_limit(ctx, measurement.value):
        ranked = np.where(mesh.cell_shape >= 0, values, -np.inf)
        picture = cut_picture(ctx, values, int(np.argmax(ranked)), "Aspect ratio",
                              "edge ratio")
        plots = () if picture is None else (picture,)
    return RuleResult(measurements=(
        dataclasses.replace(measurement, extent=cell_extent(ctx, values, ".4g", cells)),),
        plots=plots)


def check_face_warp(ctx: RuleContext) -> RuleResult:
    """Largest face warp: how far a face's fan triangles turn from the face normal."""
    mesh = ctx.mesh
    if mesh.dim == 2:
        return RuleResult.skip("faces of a 2-D mesh are edges, which cannot warp")
    values = quality.face_warp_deg(mesh)
    return _face_result(ctx, values, None, "face warp", " deg", ".1f")


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
        "(" + _FV_BOOKS + "). Warning above 70 deg, error above 85 deg: common practice, on "
        "internal faces. Near 90 deg the correction breaks down wherever the face is, so "
        "elsewhere the error limit 85 deg stays (grade elsewhere). Boundary faces are "
        "measured apart (grade boundary): there the angle only corrects the boundary "
        "gradient, and a curved wall meshed with flat faces always shows some." + _PLACES_WORDS
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
                                       "non-orthogonal correction breaks down)",
                      more=(Grade("boundary", 85.0, None, description=(
                          "worst angle at boundary faces, between the face normal and the "
                          "line from the cell centre to the face centre"),
                          source="caselint default: at a boundary the angle enters only the "
                                 "boundary gradient's correction, so only a value near 90 "
                                 "deg is worth a warning"),)),
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
        "is only reported (grade elsewhere has no limits). The edge ratio is defined per "
        "cell shape (tetrahedron, hexahedron, wedge, pyramid, triangle, quadrilateral); "
        "general polyhedra are counted as not measured." + _PLACES_WORDS.replace(
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
