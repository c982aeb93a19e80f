"""A face metric's result: its worst value located, its extent by place, and a picture of
the cells at the worst face when that crosses the rule's first limit.

What the rules measuring one number per face (non-orthogonality, skewness, growth and
volume ratio, face warp) share; :mod:`caselint.rulekit.measures` builds the measurement
and the extent, :mod:`caselint.rulekit.pictures` the cut through the worst cell.
"""

from __future__ import annotations

import dataclasses
from typing import TYPE_CHECKING

import numpy as np

from caselint.model import Limits, RuleResult
from caselint.rulekit.locate import first_limit
from caselint.rulekit.measures import face_extent, face_measurement, nonfinite_skip
from caselint.rulekit.pictures import cut_picture, face_values_per_cell

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext


def past_limit(limits: Limits, value: float, worse: str = "higher") -> bool:
    """Whether ``value`` crosses the first of ``limits`` (then a rule draws a picture)."""
    limit = first_limit(limits)
    return limit is not None and (value > limit if worse == "higher" else value < limit)


def internal_faces(ctx: "RuleContext", what: str) -> slice | RuleResult:
    """The internal faces as ``slice(0, n)`` (they come first: no id array as long as the
    faces), or a skip naming ``what`` when there are none."""
    n = ctx.mesh.n_internal
    if n == 0:
        return RuleResult.skip(f"the mesh has no internal faces (a single cell): {what}")
    return slice(0, n)


def face_result(ctx: "RuleContext", values: np.ndarray, faces: np.ndarray | slice | None,
                what: str, unit_words: str, fmt: str) -> RuleResult:
    """The largest of a face metric over ``faces`` (ids, ``slice(a, b)``, or None: all),
    with its extent by place and a picture at the worst face."""
    if (skip := nonfinite_skip(values, what, faces)) is not None:
        return skip
    measurement = face_measurement(ctx.mesh, values, faces, ctx.limits, unit_words, fmt)
    extent = face_extent(ctx, values, faces, unit_words, fmt)
    return RuleResult(measurements=(dataclasses.replace(measurement, extent=extent),),
                      plots=face_picture(ctx, values, faces, measurement.value, what))


def face_picture(ctx: "RuleContext", values: np.ndarray, faces: np.ndarray | slice | None,
                 worst_value: float, what: str) -> tuple:
    """A cut through the cells at the worst face, when the worst crosses the limit."""
    if not past_limit(ctx.limits, worst_value):
        return ()
    mesh = ctx.mesh
    per_cell = face_values_per_cell(mesh, values, faces)
    considered = values if faces is None else values[faces]
    at = int(np.argmax(considered))
    if faces is None:
        worst_face = at
    else:
        worst_face = at + faces.start if isinstance(faces, slice) else int(faces[at])
    owner, nbr = int(mesh.owner[worst_face]), int(mesh.neighbour[worst_face])
    worst_cell = nbr if nbr >= 0 and per_cell[nbr] > per_cell[owner] else owner
    picture = cut_picture(ctx, per_cell, worst_cell, what.capitalize(),
                          f"largest {what} of the cell's faces",
                          worst_face=worst_face)
    return () if picture is None else (picture,)
