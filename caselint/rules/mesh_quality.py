"""Built-in mesh-quality rules on faces: non-orthogonality, skewness, face warp.

Each rule reads one metric of :mod:`caselint.mesh.quality` (vectorised, cached on the mesh)
and reports its extreme value, how many faces are past the warning limit, the worst few
ids (worst first) and a point at the worst one. Face ids are caselint's own numbering, so
each finding also names the cells on either side of its worst faces. Non-orthogonality
attaches a histogram of the metric (``RuleResult.plots``) for the review reports. The
rules on cells are in :mod:`caselint.rules.cell_quality`, those on size changes between
neighbours in :mod:`caselint.rules.cell_growth`.

Non-orthogonality and skewness are graded by extent and place
(:mod:`caselint.engine.extent`): their measurement carries the metric per face with its
place (region of interest, near a no-slip wall, elsewhere; :mod:`caselint.rulekit.places`).
The main grade (``strict``) holds the worst value in regions and near walls to the rule's
limits; grade ``elsewhere`` bounds the worst value elsewhere where it breaks a solver;
grade ``elsewhere-share`` bounds the share of the rest beyond the warning limit.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from caselint import hookimpl
from caselint.mesh import quality
from caselint.model import Grade, Limits, Measurement, Rule, RuleResult
from caselint.rulekit import RuleContext
from caselint.rulekit.face_metrics import face_result, internal_faces
from caselint.rulekit.measures import (
    face_measurement,
    graded_by_place,
    linear_bin_edges,
    with_histogram,
)
from caselint.rulekit.sources import FV_BOOKS, places_words

def check_non_orthogonality(ctx: RuleContext) -> RuleResult:
    """Largest angle between a face's area vector and the line joining the cell centres,
    over internal faces; boundary faces measured apart (grade ``boundary``)."""
    mesh = ctx.mesh
    values = quality.non_orthogonality_deg(mesh)
    n = mesh.n_internal
    if not n:                            # a single cell: its boundary faces are all there is
        result = face_result(ctx, values, None, "non-orthogonality", " deg", ".1f")
        edges = linear_bin_edges(values, resolution=0.5, limits=ctx.limits)
        return with_histogram(result, ctx.limits, values, edges, "Face non-orthogonality",
                              "non-orthogonality (deg)", "boundary faces")
    result = face_result(ctx, values, slice(0, n), "non-orthogonality", " deg", ".1f")
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
    """Largest face skewness: centroid offset from where PN crosses the face, over |PN|
    or the cells' size across the face, whichever is larger."""
    internal = internal_faces(ctx, "skewness is undefined")
    if isinstance(internal, RuleResult):
        return internal
    return face_result(ctx, quality.skewness(ctx.mesh), internal, "skewness", "", ".3g")


def check_face_warp(ctx: RuleContext) -> RuleResult:
    """Largest face warp: how far a face's fan triangles turn from the face normal."""
    mesh = ctx.mesh
    if mesh.dim == 2:
        return RuleResult.skip("faces of a 2-D mesh are edges, which cannot warp")
    values = quality.face_warp_deg(mesh)
    return face_result(ctx, values, None, "face warp", " deg", ".1f")


# -- the rules ---------------------------------------------------------------------------

NON_ORTHOGONALITY = Rule(
    id="non-orthogonality",
    title="Face non-orthogonality",
    rationale=(
        "The angle between a face's area vector S_f and the vector d joining the centres of "
        "the two cells it separates (on a boundary face, from the cell centre to the face "
        "centre). Finite-volume diffusion terms use d; when it departs from S_f the "
        "non-orthogonal correction grows, needs extra iterations and limits stability "
        "(" + FV_BOOKS + "). Warning above 70 deg, error above 85 deg: common practice, on "
        "internal faces. Near 90 deg the correction breaks down wherever the face is, so "
        "elsewhere the error limit 85 deg stays (grade elsewhere). Boundary faces are "
        "measured apart (grade boundary): there the angle only corrects the boundary "
        "gradient, and a curved wall meshed with flat faces always shows some."
        + places_words("faces")
    ),
    source=FV_BOOKS + "; limits: common practice",
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
        "accuracy (" + FV_BOOKS + "). caselint measures |x_f - x_i| / max(|d|, s): the "
        "distance from the face centroid x_f to the crossing point x_i, over the centre "
        "distance |d| or, where that is shorter, the two cells' mean size s across the face "
        "(their thickness normal to it; the root-mean-square edge of a tetrahedron, pyramid "
        "or triangle). On hexahedra, prisms, polyhedra and leaning or refined layers |d| is "
        "the larger and the value is the textbook |x_f - x_i| / |d|; on tetrahedra the "
        "centres of even two regular cells are only 0.41 of an edge apart, and the textbook "
        "value reaches 1.3-1.5 on optimised gmsh meshes (5 % of faces above 0.5) where the "
        "offset is at most 0.22 of the cells' size. 0 is ideal; boundary faces are not "
        "measured. Warning above 0.5, error above 1.0: common practice (a caselint default; "
        "tune per solver). Beyond 1 the interpolation point lies farther from the face "
        "centroid than the cells are apart or wide, which destabilises most solvers "
        "wherever it happens, so elsewhere the error limit 1.0 stays (grade elsewhere)."
        + places_words("faces")
    ),
    source=FV_BOOKS + "; limits: common practice",
    unit="",
    limits=Limits(warn=0.5, error=1.0),
    hint=("Even out cell sizes and shapes across the listed faces: avoid abrupt jumps in "
          "block spacing and stretched cells that meet at a kink."),
    check=check_skewness,
    measures="largest face skewness (|x_f - x_i| / max(|d|, cell size), internal faces)",
    **graded_by_place(elsewhere=Limits(warn=None, error=1.0),
                      elsewhere_source="common practice (the error limit)"),
)

FACE_WARP = Rule(
    id="face-warp",
    title="Face warp",
    rationale=(
        "A face whose points do not lie in one plane has no single normal: the face area "
        "vector and centroid a solver uses are those of an averaged surface, and fluxes, "
        "gradients and the non-orthogonal correction pick up an error that grows with the "
        "warp. caselint fans each face into triangles about its vertex mean (the geometry "
        "of " + FV_BOOKS + ") and measures the largest angle between a triangle's normal "
        "and the face's area vector: 0 on planar faces and on triangles; a square with "
        "alternate corners lifted by +h and -h warps by atan(2 h / side). Warning above "
        "20 deg, error above 40 deg: common practice (caselint defaults; tune per solver)."
    ),
    source=FV_BOOKS + "; limits: common practice",
    unit="deg",
    limits=Limits(warn=20.0, error=40.0),
    hint=("Flatten the listed faces: split warped quadrilaterals or polygons into "
          "triangles (or planar pieces), smooth the mesh near curved walls, or reduce the "
          "twist of swept blocks."),
    check=check_face_warp,
    measures="largest face warp (angle between a fan triangle's normal and the face normal)",
)

RULES: tuple[Rule, ...] = (NON_ORTHOGONALITY, SKEWNESS, FACE_WARP)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in mesh-quality rules on faces."""
    return list(RULES)
