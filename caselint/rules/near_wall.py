"""Near-wall resolution rules: first-layer uniformity, cells across the boundary layer, how
far the layer stacks cover it, growth inside them and the transition to the core.

All of them read the layer stacks of :mod:`caselint.mesh.wall_layers` (walked once per mesh,
shared through the mesh cache) over the faces of the boundaries whose role is ``wall``
(:mod:`caselint.rulekit.walls`), and measure once per wall boundary so that a waiver can
cover one wall. ``wall-yplus`` reads the same stacks and lives in :mod:`caselint.rules.yplus`.
"""

from __future__ import annotations

import numpy as np

from caselint import hookimpl
from caselint.mesh.rays import cells_within
from caselint.mesh.wall_layers import END_CORE, END_WORDS
from caselint.model import (
    Limits,
    Measurement,
    Note,
    Parameter,
    PlotData,
    PlotSeries,
    Rule,
    RuleResult,
    Where,
)
from caselint.rulekit import (
    RuleContext,
    at_face,
    cell_names,
    finite_point,
    first_limit,
    plural,
    settled,
)
from caselint.rulekit.thickness import along_walls
from caselint.rulekit.walls import locate, walls

_DPW = "AIAA Drag Prediction Workshop gridding guidelines"


# -- wall-spacing-uniformity ---------------------------------------------------------------


def check_wall_spacing_uniformity(ctx: RuleContext) -> RuleResult:
    """Per wall boundary, the largest over the smallest first-layer height."""
    found = walls(ctx)
    if isinstance(found, str):
        return RuleResult.skip(found)
    mesh, layers = ctx.mesh, found.layers
    measurements, notes = [], []
    for name, rows in found.items():
        heights = layers.first_height[rows]
        good = rows[heights > 0]
        if good.size < rows.size:
            notes.append(Note(f"{plural(rows.size - good.size, 'face')} of '{name}' with a "
                              "degenerate first cell left out (see inverted-cells)",
                              Where(boundary=name)))
        if good.size == 0:
            continue
        h = layers.first_height[good]
        faces = layers.faces[good]
        lo, hi = int(np.lexsort((faces, h))[0]), int(np.lexsort((faces, -h))[0])
        ratio = settled(float(h[hi] / h[lo]))
        tets = int(np.count_nonzero(~layers.layered_first[good]))
        extra = (f"; {plural(tets, 'face')} without a prism or hexahedral wall cell, measured "
                 "to the cell's farthest vertex") if tets else ""
        detail = (f"first-layer height from {h[lo]:.3g} m at {at_face(mesh, int(faces[lo]))} "
                  f"to {h[hi]:.3g} m at {at_face(mesh, int(faces[hi]))}{extra}")
        listed = (int(faces[hi]), int(faces[lo])) if hi != lo else (int(faces[hi]),)
        where = Where(boundary=name, faces=listed, face_count=len(listed),
                      cells=tuple(dict.fromkeys(cell_names(mesh, mesh.owner[list(listed)]))),
                      cell_count=len(set(int(mesh.owner[f]) for f in listed)),
                      point=finite_point(mesh.face_centroids[faces[hi]]))
        fix = (f"Use one first-layer height along '{name}' (now {h[lo]:.3g} to {h[hi]:.3g} m): "
               "set it as an absolute height rather than relative to the local surface "
               "cell size, and check the layers where the largest and smallest heights sit.")
        measurements.append(Measurement(ratio, where, detail, fix))
    if not measurements:
        return RuleResult(skipped="every wall face has a degenerate first cell (see "
                                  "inverted-cells)", notes=tuple(notes))
    return RuleResult(tuple(measurements), notes=tuple(notes))


# -- boundary-layer-cells ------------------------------------------------------------------

#: Default of ``leading_zone``: the fraction of the walls' length along the flow, from the
#: leading edge, where boundary-layer-cells does not grade the count.
LEADING_ZONE = 0.1


def check_boundary_layer_cells(ctx: RuleContext) -> RuleResult:
    """Per wall boundary, the fewest cells across the local boundary-layer thickness, counted
    along the inward normal of each wall face."""
    got = along_walls(ctx)
    if isinstance(got, str):
        return RuleResult.skip(got)
    found, delta, thick = got
    mesh, layers = ctx.mesh, found.layers
    crossing = cells_within(mesh, layers.faces, delta)
    count = settled(crossing.cells)
    zone = float(ctx.params["leading_zone"])
    graded = (np.ones(len(delta), dtype=bool) if thick.x is None
              else thick.x >= zone * float(thick.x.max()))
    threshold = first_limit(ctx.limits)
    notes = [Note(f"boundary-layer thickness {thick.how}; cells counted along the inward "
                  "normal of each wall face through any cell type, each by the length of "
                  "the normal inside it (up to delta) over the cell's depth along it"),
             *(Note(text) for text in thick.notes)]
    measurements = []
    for name, rows in found.items():
        short = rows[crossing.short[rows]]
        if short.size:
            notes.append(Note(f"{plural(short.size, 'face')} of '{name}' whose ray meets the "
                              "boundary (or a damaged cell) within delta: counted up to it",
                              Where(boundary=name)))
        near_edge = rows[~graded[rows]]
        if near_edge.size:
            notes.append(Note(
                f"{plural(near_edge.size, 'face')} of '{name}' in the first {zone:.0%} of the "
                "walls' length along the flow not graded (the boundary layer grows from "
                f"nothing at the leading edge); fewest {float(count[near_edge].min()):.3g} "
                "cells there", Where(boundary=name)))
        rows = rows[graded[rows]]
        if not rows.size:
            continue
        faces = layers.faces[rows]
        where, worst, n_bad = locate(mesh, faces, count[rows], threshold, "lower", name)
        r = rows[worst]
        lead = (f"{n_bad} of {plural(len(faces), 'face')} with fewer than {threshold:g} cells "
                "within the local delta" if n_bad else "no face below the limit")
        detail = (f"{lead}; fewest {float(count[r]):.3g} at {at_face(mesh, int(faces[worst]))}"
                  f"{thick.at(r)}, delta = {delta[r]:.3g} m, under a stack of "
                  f"{plural(int(layers.n_layers[r]), 'layer')} ({layers.thickness[r]:.3g} m)")
        fix = ""
        if threshold:
            fix = (f"Refine normal to '{name}': {threshold:g} cells within delta = "
                   f"{delta[r]:.3g} m means cells of at most {delta[r] / threshold:.3g} m on "
                   "average there; add inflation layers or lower their growth ratio.")
        measurements.append(Measurement(float(count[r]), where, detail, fix))
    if not measurements:
        return RuleResult(skipped=f"every wall face lies in the first {zone:.0%} of the walls' "
                                  "length along the flow (parameter leading_zone)",
                          notes=tuple(notes))
    return RuleResult(tuple(measurements), notes=tuple(notes))


# -- layer-cover ---------------------------------------------------------------------------


def check_layer_cover(ctx: RuleContext) -> RuleResult:
    """Per wall boundary, the smallest ratio of a face's stack thickness to its local
    boundary-layer thickness."""
    got = along_walls(ctx)
    if isinstance(got, str):
        return RuleResult.skip(got)
    found, delta, thick = got
    mesh, layers = ctx.mesh, found.layers
    cover = settled(layers.thickness / delta)
    measurements = []
    for name, rows in found.items():
        faces = layers.faces[rows]
        where, worst, n_bad = locate(mesh, faces, cover[rows], first_limit(ctx.limits),
                                     "lower", name)
        r = rows[worst]
        layer_words = plural(int(layers.n_layers[r]), "layer")
        measurements.append(Measurement(
            float(cover[r]), where,
            f"thinnest stack for its boundary layer {layers.thickness[r]:.3g} m "
            f"({layer_words}) at {at_face(mesh, int(faces[worst]))}{thick.at(r)}, where "
            f"delta = {delta[r]:.3g} m",
            f"Grow the inflation stack on '{name}' to at least delta = {delta[r]:.3g} m there: "
            "more layers, or a larger total thickness."))
    notes = (Note(f"boundary-layer thickness {thick.how}"), *(Note(t) for t in thick.notes))
    return RuleResult(tuple(measurements), notes=notes)


# -- layer-growth --------------------------------------------------------------------------


def check_layer_growth(ctx: RuleContext) -> RuleResult:
    """Largest layer-to-layer growth inside the wall layer stacks."""
    found = walls(ctx)
    if isinstance(found, str):
        return RuleResult.skip(found)
    mesh, layers = ctx.mesh, found.layers
    measurements, notes, profiles = [], [], []
    for name, rows in found.items():
        n = layers.n_layers[rows]
        profile = _median_profile(layers.heights[rows], n, name)
        if profile is not None:
            profiles.append(profile)
        ends = ", ".join(f"{END_WORDS[code]} {np.count_nonzero(layers.end[rows] == code)}"
                         for code in sorted(set(layers.end[rows].tolist())))
        notes.append(Note(f"layer stacks on '{name}': {n.min()} to {n.max()} layers "
                          f"(median {np.median(n):g}), thickness {layers.thickness[rows].min():.3g}"
                          f" to {layers.thickness[rows].max():.3g} m; stacks end at: {ends}",
                          Where(boundary=name)))
        stacked = rows[n >= 2]
        if stacked.size:
            faces = layers.faces[stacked]
            growth = settled(layers.max_growth[stacked])
            where, worst, n_bad = locate(mesh, faces, growth, first_limit(ctx.limits), "higher",
                                         name)
            k = int(layers.growth_layer[stacked[worst]])
            lead = (f"{n_bad} of {plural(len(faces), 'stack')} above {first_limit(ctx.limits):g}"
                    if n_bad else "no stack above the limit")
            measurements.append(Measurement(
                float(growth[worst]), where,
                f"{lead}; largest from layer {k - 1} to layer {k} above "
                f"{at_face(mesh, int(faces[worst]))}"))
    if not measurements:
        return RuleResult(skipped="no wall face has a layer stack of two or more cells",
                          notes=tuple(notes))
    plots = (PlotData(title="Layer height through the wall stacks (median over each wall's "
                            "faces)", x_label="layer", y_label="height (m)",
                      series=tuple(profiles), kind="line", y_log=True),) if profiles else ()
    return RuleResult(tuple(measurements), notes=tuple(notes), plots=plots)


# -- layer-transition ----------------------------------------------------------------------


def check_layer_transition(ctx: RuleContext) -> RuleResult:
    """Per wall boundary, the largest jump from the last layer to the first core cell."""
    found = walls(ctx)
    if isinstance(found, str):
        return RuleResult.skip(found)
    mesh, layers = ctx.mesh, found.layers
    measurements = []
    for name, rows in found.items():
        cored = rows[layers.end[rows] == END_CORE]
        if not cored.size:
            continue
        faces = layers.faces[cored]
        values = settled(layers.core_jump[cored])
        where, worst, n_bad = locate(mesh, faces, values, first_limit(ctx.limits), "higher",
                                     name)
        r = cored[worst]
        measurements.append(Measurement(
            float(values[worst]), where,
            f"core cell {int(mesh.file_cell_ids(layers.core_cell[r]))} is "
            f"{values[worst]:.3g} times as tall as the last of "
            f"{plural(int(layers.n_layers[r]), 'layer')} above "
            f"{at_face(mesh, int(faces[worst]))}"))
    if not measurements:
        return RuleResult.skip("no wall layer stack ends in core cells (stacks that reach "
                               "another boundary have no transition)")
    return RuleResult(tuple(measurements))


def _median_profile(heights: np.ndarray, n_layers: np.ndarray, name: str) -> PlotSeries | None:
    """Median height of layer 1, 2, ... over the faces whose stack has that layer."""
    depth = min(int(n_layers.max(initial=0)), heights.shape[1], 200)
    if depth == 0:
        return None
    inside = np.arange(depth)[None, :] < n_layers[:, None]
    masked = np.where(inside, heights[:, :depth], np.nan)
    medians = np.nanmedian(masked, axis=0)  # every column has at least one face inside
    return PlotSeries(x=tuple(float(k) for k in range(1, depth + 1)),
                      y=tuple(float(h) for h in medians), label=name)


# -- the rules -----------------------------------------------------------------------------

WALL_SPACING_UNIFORMITY = Rule(
    id="wall-spacing-uniformity",
    title="Uniform first-layer height along each wall",
    rationale=(
        "The ratio of the largest to the smallest first-layer height over the faces of one "
        "wall boundary (the height of the first prism or hexahedral layer; for a wall cell "
        "without layers, the wall distance of its farthest vertex). Keeping the same wall "
        "distance along a wall keeps y+ and the accuracy of the wall treatment from varying "
        "along it (common practice). Warning above 1.5, error above 3 (common practice)."
    ),
    source="common practice",
    unit="",
    limits=Limits(warn=1.5, error=3.0),
    hint="Set one absolute first-layer height for the whole wall in the mesher.",
    check=check_wall_spacing_uniformity,
    needs=("walls", "mesh"),
    measures="ratio of the largest to the smallest first-layer height",
)

_THICKNESS = (
    "The boundary-layer thickness delta is estimated at each wall face from its distance x "
    "from the leading edge along the flow (physics.flow.leading_edge, or the walls' most "
    "upstream point along physics.flow.direction): turbulent 0.37 x Re_x^-1/5 (1/7-power "
    "law, Schlichting 1979, from memory), laminar 5.0 x / sqrt(Re_x) (Blasius); internal "
    "flow develops the same way until delta reaches half the hydraulic diameter. Without a "
    "direction or leading edge: at x = physics.flow.length (external), half the hydraulic "
    "diameter (internal, fully developed). Where a layer stack runs into a facing wall, delta "
    "is at most half the distance across."
)

BOUNDARY_LAYER_CELLS = Rule(
    id="boundary-layer-cells",
    title="Cells across the boundary layer",
    rationale=(
        _THICKNESS + " A ray cast from each wall face along its inward normal counts the "
        "cells it crosses within delta, through any cell type (layers, tetrahedra, "
        "triangles, polyhedra): each cell by the length of the ray inside it, up to delta, "
        "over the cell's depth along the ray (the spread of its vertices along it), so a "
        "layer crossed along its normal counts 1, the layer delta cuts the part of it below "
        "delta, and a tetrahedron the ray clips near a corner little. At least 10 are wanted (warning below 10, error below 5; "
        "common practice: 5-10 or more cells across a boundary layer). Faces in the first "
        "leading_zone of the walls' length along the flow are not graded: the boundary layer "
        "grows from nothing at a leading edge, thinner there than any wall cell. Whether the "
        "inflation stack reaches the edge of the boundary layer is the rule layer-cover."
    ),
    source="Schlichting 1979; Blasius 1908; cell counts: common practice",
    unit="cells",
    limits=Limits(warn=10.0, error=5.0),
    hint="Add inflation layers or lower their growth so that more cells fall inside the "
         "boundary layer.",
    check=check_boundary_layer_cells,
    worse="lower",
    needs=("walls", "physics.flow.length", "mesh"),
    measures="fewest cells within the local boundary-layer thickness",
    parameters=(Parameter(
        "leading_zone", LEADING_ZONE, "",
        "fraction of the walls' length along the flow, from the leading edge, left "
        "ungraded (caselint default 0.1; 0 grades every face)", minimum=0.0, maximum=1.0),),
)

LAYER_COVER = Rule(
    id="layer-cover",
    title="Wall layer stacks covering the boundary layer",
    rationale=(
        "The thickness of the wall layer stack (prism or hexahedral layers) over the local "
        "boundary-layer thickness delta at each wall face. " + _THICKNESS + " A stack that "
        "stops well inside the boundary layer leaves the outer part of it to core cells, "
        "usually much coarser across the wall; a stack reaching delta keeps the whole "
        "profile in layers. Warning when thinner than delta (common practice)."
    ),
    source="Schlichting 1979; Blasius 1908; limit: common practice",
    unit="",
    limits=Limits(warn=1.0, error=None),
    hint="Grow the inflation stack to the boundary-layer thickness: more layers, or a larger "
         "total thickness.",
    check=check_layer_cover,
    worse="lower",
    needs=("walls", "physics.flow.length", "mesh"),
    measures="thinnest layer stack over the local boundary-layer thickness",
)

LAYER_GROWTH = Rule(
    id="layer-growth",
    title="Growth inside the wall layer stacks",
    rationale=(
        "The largest ratio of a layer's height to the one below it inside the wall layer "
        "stacks. The " + _DPW + " ask for growth below 1.25 in the viscous layer; caselint "
        "warns above 1.2 and errs above 1.3 (common practice). The jump from the last layer "
        "to the core is the rule layer-transition."
    ),
    source=_DPW + "; limits: common practice",
    unit="",
    limits=Limits(warn=1.2, error=1.3),
    hint="Lower the growth ratio of the inflation layers and add layers to keep the thickness.",
    check=check_layer_growth,
    needs=("walls", "mesh"),
    measures="largest layer-to-layer growth ratio",
)

LAYER_TRANSITION = Rule(
    id="layer-transition",
    title="Transition from the wall layers to the core",
    rationale=(
        "The height of the first core cell above a wall layer stack (its farthest vertex "
        "from the last layer's top face) over the last layer's height. The stack should "
        "hand over to cells of about its own size: expansion between neighbours at most "
        "about 1.3 is common practice, and a jump past 2.5 leaves the outer boundary layer "
        "to cells far coarser than the layers (caselint's error limit; common practice)."
    ),
    source="common practice",
    unit="",
    limits=Limits(warn=1.5, error=2.5),
    hint=("Blend the stack into the core: make the last layer closer to the core cell size "
          "(more layers, or a larger growth up to the limit), or refine the core next to the "
          "layers."),
    check=check_layer_transition,
    needs=("walls", "mesh"),
    measures="largest height jump from the last layer to the first core cell",
)

RULES: tuple[Rule, ...] = (WALL_SPACING_UNIFORMITY, BOUNDARY_LAYER_CELLS, LAYER_COVER,
                           LAYER_GROWTH, LAYER_TRANSITION)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in near-wall rules."""
    return list(RULES)
