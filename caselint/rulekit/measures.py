"""Measurements of per-face and per-cell metrics: the worst value, located, with an extent.

A face or cell metric is reported by its worst value, how many entities are past the
first limit, the worst few ids (worst first) and a point at the worst one; a face metric
also names the cells on either side. :func:`face_extent` and :func:`cell_extent` wrap the
same in an :class:`~caselint.model.Extent`, so the engine can grade the metric by extent
and place (:mod:`caselint.engine.extent`) and locate the worst of each place the same way.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING, Any

import numpy as np

from caselint.bins import linear_bin_edges

from caselint.model import (
    MAX_LISTED_IDS,
    STRICT_PLACES,
    Extent,
    Grade,
    Limits,
    Measurement,
    PlotData,
    PlotSeries,
    RuleResult,
    Where,
)
from caselint.rulekit.locate import (
    cell_names,
    cells_of_faces,
    face_place,
    finite_point,
    first_limit,
    id_range,
    touched_cell_count,
    worst_and_past,
    worst_and_past_within,
    worst_ids,
)
from caselint.rulekit.places import NEAR_WALL_PARAMETER, cell_places, face_places
from caselint.rulekit.words import plural

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.mesh.analysis import Mesh

#: Ids of faces (not a range) from which a face measurement judges the values through a
#: mask of them rather than a gathered copy (1 byte a face against 8 bytes an id).
MASK_FROM = 65_536


def nonfinite_skip(values: np.ndarray, what: str,
                   ids: np.ndarray | slice | None = None) -> RuleResult | None:
    """Skip (instead of reporting NaN) when a damaged mesh gives a non-finite metric
    (over the entities ``ids``, all when None)."""
    values = _Chosen(ids).take(values)
    if np.all(np.isfinite(values)):
        return None
    n = int(np.count_nonzero(~np.isfinite(values)))
    return RuleResult.skip(
        f"{what} is not finite on {n} entities (degenerate geometry); fix inverted or "
        "collapsed cells first (see inverted-cells)"
    )


class _Chosen:
    """Entities chosen by their ids (None: all of them), or as ``slice(a, b)`` for the ids
    ``a .. b - 1`` (the internal faces); where the ids are a range, values are taken as
    views instead of gathered."""

    def __init__(self, ids: np.ndarray | slice | None) -> None:
        if isinstance(ids, slice):
            self.span, self.every, self.ids = ids, False, None
            return
        self.span = None if ids is None else id_range(ids)
        self.every = ids is None
        # a range is kept as its bounds: an extent that keeps this for the engine's
        # grading does not keep an id array as long as the faces (8 bytes a face)
        self.ids = ids if self.span is None else None

    def take(self, values: np.ndarray) -> np.ndarray:
        """``values[ids]``."""
        if self.every:
            return values
        return values[self.ids] if self.span is None else values[self.span]

    def ascending(self) -> bool:
        """Whether the chosen ids rise strictly (a range or all do)."""
        ids = self.ids
        return ids is None or ids.size < 2 or bool(np.all(ids[1:] > ids[:-1]))

    def ids_of(self, local: np.ndarray) -> np.ndarray:
        """``ids[local]``: the ids of positions in the chosen entities."""
        if self.every:
            return local
        if self.span is None:
            return self.ids[local]
        return local if self.span.start == 0 else local + self.span.start


def face_measurement(mesh: "Mesh", values: np.ndarray, faces: np.ndarray | slice | None,
                     limits: Limits, unit_words: str, fmt: str) -> Measurement:
    """The largest of a face metric ``values`` (F,) over ``faces`` (ids, ``slice(a, b)``, or
    None: all), with the faces past the first limit counted and the worst located."""
    chosen = _Chosen(faces)
    threshold = first_limit(limits)
    if chosen.span is None and not chosen.every and values.dtype == np.float64 and \
            chosen.ids.size > MASK_FROM and chosen.ascending():
        # many ids, not a range (the faces of a place): judged through a mask of them
        within = np.zeros(values.shape, dtype=bool)
        within[chosen.ids] = True
        listed, past = worst_and_past_within(values, within, threshold)
        del within
    else:
        local, past = worst_and_past(chosen.take(values), threshold)
        listed, past = chosen.ids_of(local), chosen.ids_of(past)
    count = int(past.size)
    worst = int(listed[0])
    cell_count = touched_cell_count(mesh, past) if count else 0
    cells = cells_of_faces(mesh, listed)[:MAX_LISTED_IDS]
    where = Where(
        faces=tuple(int(f) for f in listed) if count else (),
        face_count=count,
        cells=cell_names(mesh, cells) if count else (),
        cell_count=cell_count,
        point=finite_point(mesh.face_centroids[worst]),
    )
    value = float(values[worst])
    if count:
        lead = f"{plural(count, 'face')} above {threshold:g}{unit_words}, worst"
    else:
        lead = f"no face above the limit; largest {format(value, fmt)}{unit_words}"
    return Measurement(value=value, where=where, detail=f"{lead} {face_place(mesh, worst)}")


def cell_measurement(mesh: "Mesh", values: np.ndarray, cells: np.ndarray | None,
                     limits: Limits, fmt: str, worse: str = "higher") -> Measurement:
    """The worst (largest, or smallest when ``worse`` is ``lower``) of a cell metric
    ``values`` (C,) over ``cells`` (None: all), with the cells past the first limit
    counted and the worst located (ties: lowest file id)."""
    chosen = _Chosen(cells)
    threshold = first_limit(limits)
    local, count = worst_ids(chosen.take(values), threshold, worse,
                             names=chosen.take(mesh.file_cell_ids()))
    listed = chosen.ids_of(local)
    worst = int(listed[0])
    name = int(mesh.file_cell_ids(worst))
    past, extreme = ("above", "largest") if worse == "higher" else ("below", "lowest")
    if count:
        detail = (f"{plural(count, 'cell')} {past} {threshold:g}, "
                  f"worst cell {name} ({format(values[worst], fmt)})")
    else:
        detail = (f"no cell {past} the limit; {extreme} {format(values[worst], fmt)} in "
                  f"cell {name}")
    where = Where(cells=cell_names(mesh, listed) if count else (), cell_count=count,
                  point=finite_point(mesh.cell_centroids[worst]))
    return Measurement(value=float(values[worst]), where=where, detail=detail)


def face_extent(ctx: "RuleContext", values: np.ndarray, faces: np.ndarray | slice | None,
                unit_words: str, fmt: str) -> Extent:
    """The face metric ``values`` (F,) over ``faces`` (ids, ``slice(a, b)``, or None: all),
    each with its place."""
    mesh, chosen = ctx.mesh, _Chosen(faces)
    return Extent(
        values=chosen.take(values), places=chosen.take(face_places(ctx)), entity="face",
        measure=lambda subset, limits: face_measurement(
            mesh, values, chosen.ids_of(subset), limits, unit_words, fmt))


def cell_extent(ctx: "RuleContext", values: np.ndarray, fmt: str,
                cells: np.ndarray | None = None, worse: str = "higher") -> Extent:
    """The cell metric ``values`` (C,) over ``cells`` (None: all), each cell with its place."""
    mesh, chosen = ctx.mesh, _Chosen(cells)
    return Extent(
        values=chosen.take(values), places=chosen.take(cell_places(ctx)), entity="cell",
        measure=lambda subset, limits: cell_measurement(
            mesh, values, chosen.ids_of(subset), limits, fmt, worse))


def graded_by_place(*, elsewhere: Limits, elsewhere_source: str, share_warn: float = 1.0,
                    share_error: float = 10.0, more: tuple[Grade, ...] = ()) -> dict[str, Any]:
    """The :class:`~caselint.model.Rule` settings of a metric graded by place: its main grade
    ``strict`` judges the worst value in regions of interest and near no-slip walls
    (:data:`STRICT_PLACES`) against the rule's limits, and

    - ``elsewhere`` the worst value in the rest of the mesh (what breaks a solver there);
    - ``elsewhere-share`` the share of the entities elsewhere beyond the main warning
      limit, in percent (caselint default: a warning above ``share_warn``, an error above
      ``share_error``);

    with the parameter ``near_wall_layers``, and the rule's ``more`` grades. Use as
    ``Rule(..., **graded_by_place(...))``.
    """
    grades = (
        Grade("elsewhere", elsewhere.warn, elsewhere.error, places=("elsewhere",),
              description="worst value away from regions of interest and no-slip walls",
              source=elsewhere_source),
        Grade("elsewhere-share", share_warn, share_error, places=("elsewhere",), share=True,
              unit="%", worse="higher",
              description="percent of the entities away from regions of interest and "
                          "no-slip walls beyond the quality limit (beyond; default: the main "
                          "warning limit)",
              source="caselint default: a few per cent of compromise cells far from the "
                     "resolved flow is the usual cost of a mesh, a tenth of the mesh is not"),
        *more,
    )
    return {"main_grade": "strict", "main_places": STRICT_PLACES, "grades": grades,
            "main_description": "worst value in regions of interest and near no-slip walls",
            "parameters": (NEAR_WALL_PARAMETER,)}


def with_histogram(result: RuleResult, limits: Limits, values: np.ndarray, edges: np.ndarray,
                   title: str, x_label: str, y_label: str) -> RuleResult:
    """``result`` with a histogram of ``values`` attached for the review reports."""
    if result.skipped is not None:
        return result
    plot = PlotData(title=title, x_label=x_label, y_label=y_label,
                    series=(PlotSeries.histogram(values, edges),), limits=limits)
    return dataclasses.replace(result, plots=(plot, *result.plots))


__all__ = ["cell_extent", "cell_measurement", "face_extent", "face_measurement",
           "graded_by_place", "linear_bin_edges", "nonfinite_skip", "with_histogram"]
