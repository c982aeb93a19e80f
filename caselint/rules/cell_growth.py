"""Built-in rules on how much neighbouring cells differ: growth (size) ratio, volume ratio.

``growth-ratio`` judges the ratio of the two cells' sizes across each internal face
(:mod:`caselint.mesh.size_ratio`: the thickness normal to the face for layered and
polyhedral cells, the root-mean-square edge for tetrahedra, pyramids and triangles), a
length ratio as the rule of thumb is; ``volume-ratio`` the ratio of their volumes, which
finds a tiny cell beside a normal one whatever its shape. Both are graded by extent and
place and attach a histogram for the review reports.

How ``growth-ratio`` is graded, and why (caselint defaults, measured on gmsh meshes,
:mod:`caselint.mesh.size_ratio`): the common-practice expansion ratio 1.3 is a quality
limit for the *share* of faces beyond it, because an unstructured mesh of one target size
keeps a few faces above it wherever it is made well (optimised tetrahedra 0.07-0.7 %, up to
1.7 at worst; recombined quadrilaterals extruded 5-8 %, up to 1.9), while a block graded
too fast puts a third of its faces there and a wall stack a fifth of a prism-layer mesh.
The worst face is held to 2 (warning above; an octree mesher's 2:1 refinement step, a
ratio of exactly 2, is made on purpose and passes) and 3 (error above; no mesher makes a
threefold step by design, and a real 4x jump is an error wherever it sits).
"""

from __future__ import annotations

from caselint import hookimpl
from caselint.mesh import quality
from caselint.model import PLACES, Grade, Limits, Rule, RuleResult
from caselint.rulekit import RuleContext, settled
from caselint.rulekit.face_metrics import face_result, internal_faces
from caselint.rulekit.measures import graded_by_place, linear_bin_edges, with_histogram
from caselint.rulekit.sources import places_words

#: The common-practice expansion ratio between neighbouring cells.
EXPANSION = 1.3


def check_growth_ratio(ctx: RuleContext) -> RuleResult:
    """Largest ratio of two neighbouring cells' sizes across their shared face."""
    return _ratio_result(ctx, quality.growth_ratio, "growth ratio", 0.01,
                         "Growth (size) ratio",
                         "growth ratio (larger / smaller cell size across the face)")


def check_volume_ratio(ctx: RuleContext) -> RuleResult:
    """Largest volume ratio of two cells sharing a face."""
    return _ratio_result(ctx, quality.volume_ratio, "volume ratio", 0.1,
                         "Volume ratio", "volume ratio (larger / smaller cell volume)")


def _ratio_result(ctx: RuleContext, ratio, what: str, resolution: float,
                  title: str, x_label: str) -> RuleResult:
    """The worst of a ratio (``ratio(mesh)``, per face) over the internal faces, with its
    extent and a histogram."""
    internal = internal_faces(ctx, "no neighbours to compare")
    if isinstance(internal, RuleResult):
        return internal
    # a grading designed at exactly a limit must not cross it by round-off; the ratios
    # themselves are dropped once settled (8 bytes a face) where the mesh does not keep them
    values = settled(ratio(ctx.mesh))
    result = face_result(ctx, values, internal, what, "", ".4g")
    inner = values[internal]                        # a view
    edges = linear_bin_edges(inner, resolution=resolution, limits=ctx.limits)
    return with_histogram(result, ctx.limits, inner, edges, title, x_label, "internal faces")


GROWTH_RATIO = Rule(
    id="growth-ratio",
    title="Growth in cell size between neighbours",
    rationale=(
        "The larger over the smaller of two neighbouring cells' sizes across their shared "
        "face: the thickness normal to the face for hexahedra, prisms, quadrilaterals and "
        "polyhedra (exactly the grading ratio of a graded block or layer stack, 2 across a "
        "2:1 refinement), the root-mean-square edge length for tetrahedra, pyramids and "
        "triangles. Sudden jumps in cell size add truncation error and spurious gradients; "
        "an expansion between neighbours of at most about 1.3 is common practice. On an "
        "unstructured mesh some faces always exceed it (measured on gmsh meshes: optimised "
        "tetrahedra up to 0.7 % of faces and 1.7 at worst, extruded recombined "
        "quadrilaterals 5-8 % and 1.9), so 1.3 bounds the share of faces beyond it (grade "
        "expansion-share: a warning when more than 10 % of all internal faces exceed it, "
        "which a block or layer stack graded too fast does and a well-made mesh does not; "
        "caselint default). The worst face: warning above 2 and error above 3 (caselint "
        "defaults: an octree mesher's 2:1 refinement step, exactly 2, is made on purpose; "
        "no mesher makes a threefold step by design, so elsewhere the error limit stays). "
        "Pairs with a collapsed or inverted cell are left to inverted-cells."
        + places_words("faces")
    ),
    source="common practice (expansion ratio 1.3); limits on the worst face and the share: "
           "caselint defaults (measured on gmsh meshes)",
    unit="",
    limits=Limits(warn=2.0, error=3.0),
    hint=("Grade the spacing more gently near the listed faces (smaller expansion ratio, more "
          "cells), and blend refinement zones over several cells rather than one."),
    check=check_growth_ratio,
    measures="largest ratio of two neighbouring cells' sizes across their shared face",
    **graded_by_place(
        elsewhere=Limits(warn=None, error=3.0),
        elsewhere_source="caselint default (the error limit: a threefold step is no design)",
        more=(Grade("expansion-share", 10.0, None, places=PLACES, share=True,
                    beyond=EXPANSION, unit="%", worse="higher",
                    description=f"percent of all internal faces whose growth ratio exceeds "
                                f"{EXPANSION:g}, the common-practice expansion ratio",
                    source="caselint default: well-made unstructured meshes keep below 8 % "
                           "(measured on gmsh meshes), a block graded too fast has a third "
                           "of its faces there"),)),
)

VOLUME_RATIO = Rule(
    id="volume-ratio",
    title="Volume ratio between neighbouring cells",
    rationale=(
        "The larger over the smaller volume of two cells sharing a face (areas in 2-D). It "
        "is no size ratio: a tetrahedron has 0.12 of the volume of the cube on its edge, so "
        "a tetrahedron beside a hexahedron of its size reads 8.5, and optimised tetrahedra "
        "of one target size reach 5 (38 % of their faces above 1.3; measured on gmsh "
        "meshes). What it finds is a tiny cell beside a normal one, a sliver or a collapsed "
        "cell, whatever its shape, which hurts the conditioning of the linear systems and "
        "explicit time steps. Warning above 10 (an order of magnitude), error above 100 "
        "(two): caselint defaults, above what cell shapes alone give. Pairs with a "
        "non-positive volume are left to inverted-cells." + places_words("faces")
    ),
    source="caselint default (measured on gmsh meshes)",
    unit="",
    limits=Limits(warn=10.0, error=100.0),
    hint=("Find the small cell beside the listed faces: a sliver or a collapsed cell is "
          "usually a meshing defect (re-mesh or optimise there); a real change of scale "
          "should be spread over several cells."),
    check=check_volume_ratio,
    measures="largest volume ratio of two neighbouring cells",
    **graded_by_place(elsewhere=Limits(warn=None, error=100.0),
                      elsewhere_source="caselint default (the error limit)"),
)

RULES: tuple[Rule, ...] = (GROWTH_RATIO, VOLUME_RATIO)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in rules on size changes between neighbouring cells."""
    return list(RULES)
