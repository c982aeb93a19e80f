"""Grading by extent and place: one measurement's per-entity values, judged per place.

A rule whose measurement carries an :class:`~caselint.model.Extent` (a value and a place
per face, cell or wall face) is graded by its place grades (:attr:`Rule.place_grades`)
instead of by one extreme value. For each such grade the engine takes the entities in
the grade's places and measures either their worst value, or the share of them (by count,
or by weight such as wall area) beyond the grade's quality limit. The rule's extent
locates the worst of any subset (``Extent.measure``), so each graded measurement says
where its worst entity is. The spread of the values (percentiles, share beyond each
limit, per place) becomes a :class:`~caselint.model.Distribution` of the check.

Everything is vectorised over the entities: a mask per place, a count or a weighted sum
per limit, one partition for the percentiles.
"""

from __future__ import annotations

import dataclasses
from typing import Mapping

import numpy as np

from caselint.model import (
    PLACES,
    Distribution,
    Extent,
    Grade,
    Limits,
    Measurement,
    PlaceSpread,
    Rule,
)

#: Percentiles a distribution reports (0 and 100: the smallest and largest value).
PERCENTILES: tuple[float, ...] = (0.0, 1.0, 5.0, 50.0, 95.0, 99.0, 100.0)

_WORDS = {
    frozenset({"region", "near-wall"}): "in regions of interest and near no-slip walls",
    frozenset({"region"}): "in regions of interest",
    frozenset({"near-wall"}): "near no-slip walls",
    frozenset({"elsewhere"}): "elsewhere (away from regions of interest and no-slip walls)",
    frozenset(PLACES): "anywhere",
}


def place_words(places: tuple[str, ...]) -> str:
    """``in regions of interest and near no-slip walls``, ``elsewhere (...)``."""
    return _WORDS.get(frozenset(places), "in " + " and ".join(places))


def place_label(places: tuple[str, ...]) -> str:
    """The places of a grade as a ``Where.place`` value: ``near-wall+region``."""
    return "+".join(sorted(places))


def _in_places(places: np.ndarray, names: tuple[str, ...]) -> np.ndarray:
    """(N,) bool: the entities whose place code is one of the places ``names``."""
    mask = np.zeros(places.shape, dtype=bool)
    for code in sorted({PLACES.index(p) for p in names}):
        mask |= places == code          # a few codes: cheaper than np.isin on millions
    return mask


def _past(values: np.ndarray, limit: float, worse: str) -> np.ndarray:
    return values > limit if worse == "higher" else values < limit


def _percent(mask: np.ndarray, weights: np.ndarray | None) -> float:
    """Percentage of the entities (or of their weight) where ``mask`` holds."""
    if mask.size == 0:
        return 0.0
    if weights is None:
        return 100.0 * float(np.count_nonzero(mask)) / mask.size
    total = float(weights.sum())
    if total <= 0.0:
        return 100.0 * float(np.count_nonzero(mask)) / mask.size
    return 100.0 * float(weights[mask].sum()) / total


def beyond_limit(grade: Grade, main: Grade) -> float | None:
    """The quality limit of a share grade: its own, else the main grade's warning limit,
    else its error limit."""
    if grade.beyond is not None:
        return grade.beyond
    return main.warn if main.warn is not None else main.error


def _share(rule: Rule, grade: Grade, main: Grade, extent: Extent, values: np.ndarray,
           weights: np.ndarray | None, inside: np.ndarray, worse: str,
           unit: str) -> Measurement | None:
    """The share of the entities where ``inside`` (a mask) beyond the grade's quality
    limit (judged over all values and masked: no gathered copy of them)."""
    beyond = beyond_limit(grade, main)
    if beyond is None:
        return None
    past = _past(values, beyond, worse)
    past &= inside
    count = int(np.count_nonzero(inside))
    if weights is None:
        share = 100.0 * float(np.count_nonzero(past)) / count
    else:
        share = _percent(past[inside], weights[inside])
    offenders = np.flatnonzero(past)
    n_past = int(offenders.size)
    located = extent.measure(offenders if n_past else np.flatnonzero(inside),
                             Limits(warn=beyond))
    whole = f"{extent.weight_words} of the " if weights is not None and extent.weight_words \
        else ""
    words = place_words(grade.places)
    unit_words = f" {unit}" if unit else ""
    relation = "beyond" if worse == "higher" else "below"
    detail = (f"{n_past} of {count} {extent.entity}s {words} are "
              f"{relation} {beyond:g}{unit_words}")
    if n_past:
        detail += f"; {located.detail}" if located.detail else ""
    label = f"share of the {whole}{extent.entity}s {relation} {beyond:g}{unit_words}"
    return Measurement(
        value=float(f"{share:.10g}"), detail=detail, fix=located.fix, label=label, unit="%",
        worse="higher", grade=grade.name,
        where=dataclasses.replace(located.where, place=place_label(grade.places)))


def _arrays(m: Measurement) -> tuple[Extent, np.ndarray, np.ndarray, np.ndarray | None]:
    """``m``'s extent and its values, place codes and weights as arrays."""
    extent = m.extent
    if extent is None:
        raise ValueError("the measurement has no extent to grade by place")
    weights = None if extent.weights is None else np.asarray(extent.weights, dtype=np.float64)
    return extent, np.asarray(extent.values, dtype=np.float64), np.asarray(extent.places), weights


def expand(rule: Rule, grades: Mapping[str, Grade], m: Measurement) -> list[Measurement]:
    """The measurements of ``m``'s extent, one per place grade of the rule that has entities
    in its places, each naming its grade (in the order the rule declares its grades)."""
    extent, values, places, weights = _arrays(m)
    main = grades[rule.main_grade]
    out = []
    for grade in (g for g in grades.values() if g.places):
        inside = _in_places(places, grade.places)
        if not inside.any():
            continue
        # the measured quantity's direction and unit (a share grade's own are its percent's)
        worse = m.worse or rule.worse
        unit = m.unit if m.unit is not None else rule.unit
        if grade.share:
            shared = _share(rule, grade, main, extent, values, weights, inside, worse, unit)
            if shared is not None:
                out.append(shared)
            continue
        subset = np.flatnonzero(inside)
        del inside
        located = extent.measure(subset, grade.limits)
        out.append(dataclasses.replace(
            located, grade=grade.name, label=located.label or m.label, extent=None,
            where=dataclasses.replace(located.where, place=place_label(grade.places))))
    return out


def _weighted_percentiles(values: np.ndarray, weights: np.ndarray | None) -> list[float]:
    if weights is None or float(weights.sum()) <= 0.0:
        return [float(v) for v in np.percentile(values, PERCENTILES)]
    order = np.argsort(values, kind="stable")
    cum = np.cumsum(weights[order])
    at = np.searchsorted(cum, np.asarray(PERCENTILES) / 100.0 * cum[-1], side="left")
    picked = values[order[np.minimum(at, values.size - 1)]]
    picked[0], picked[-1] = values.min(), values.max()
    return [float(v) for v in picked]


def distribution(rule: Rule, grades: Mapping[str, Grade], m: Measurement) -> Distribution:
    """How ``m``'s extent is spread: percentiles, shares beyond the limits of the rule's
    place grades, per place, and where the worst value sits."""
    extent, values, places, weights = _arrays(m)
    worse = m.worse or rule.worse
    main = grades[rule.main_grade]
    limits: set[float] = set()
    for grade in (g for g in grades.values() if g.places):
        if grade.share:
            beyond = beyond_limit(grade, main)
            limits.update([] if beyond is None else [beyond])
        else:
            limits.update(v for v in (grade.warn, grade.error) if v is not None)
    ordered = sorted(limits, reverse=worse == "lower")

    def shares(picked: np.ndarray, w: np.ndarray | None) -> tuple[tuple[float, float], ...]:
        return tuple((lim, float(f"{_percent(_past(picked, lim, worse), w):.6g}"))
                     for lim in ordered)

    per_place = []
    for code, place in enumerate(PLACES):
        mask = places == code
        n = int(np.count_nonzero(mask))
        if n == 0:
            continue
        # the place's values gathered once for its worst and all its shares
        picked = values if n == values.size else values[mask]
        w = None if weights is None else weights[mask]
        worst = picked.max() if worse == "higher" else picked.min()
        per_place.append(PlaceSpread(place, n, float(worst), shares(picked, w)))
    if values.size:
        top = int(np.argmax(values) if worse == "higher" else np.argmin(values))
        worst_place = PLACES[int(places[top])]
        percentiles = tuple(zip(PERCENTILES, _weighted_percentiles(values, weights)))
    else:
        worst_place, percentiles = "", ()
    return Distribution(
        entity=extent.entity, count=int(values.size), percentiles=percentiles,
        beyond=shares(values, None if weights is None else np.ascontiguousarray(weights)),
        places=tuple(per_place), worst_place=worst_place,
        worse=worse, weighted=extent.weight_words if weights is not None else "",
        label=m.where.boundary or "")
