"""How numbers, units and counts are written in findings and reports.

Shared by the engine (the sentence of a finding) and the reporters (tables), so that a
value and its limit are written the same way everywhere.

On the limit: grading is exact (a maximum of 1.2 is crossed by 1.2000001 and not by 1.2),
so a value and the limit it crosses must never be printed alike. :func:`apart` writes
the two with the usual number of significant digits and adds digits, up to the 17 that
identify any double, until they differ: "1.2000001, above the warning limit 1.2". We
chose visible digits over a tolerance that would count values within 1e-9 of a limit as
on it: a tolerance changes grades silently, and the few values it would spare (volume
ratios of a uniform grid computed as 1.3000000000000003) are then shown for what they are.
"""

from __future__ import annotations

from typing import Callable

#: Digits that tell any two different doubles apart (IEEE 754 binary64).
MAX_DIGITS = 17
#: Count nouns used as units, with their singular ("1 cell", "2 cells").
SINGULAR = {
    "cells": "cell", "faces": "face", "points": "point", "pieces": "piece",
    "elements": "element", "waivers": "waiver", "meshes": "mesh", "layers": "layer",
    "stacks": "stack", "boundaries": "boundary", "regions": "region",
}
#: How the limit of each direction is written: "higher" values are worse, so the limit is
#: a maximum.
LIMIT_SIGN = {"higher": "<=", "lower": ">="}


def number(value: float, digits: int = 4) -> str:
    """A value for a sentence: ``digits`` significant digits, whole numbers in full."""
    if value == int(value) and abs(value) < 1e9:
        return str(int(value))
    return f"{value:.{digits}g}"


def format_number(value: float | None, digits: int = 6) -> str:
    """A value for a table: ``digits`` significant digits; ``-`` when there is none."""
    if value is None:
        return "-"
    text = f"{float(value):.{digits}g}"
    return "0" if text == "-0" else text


def apart(value: float, limit: float, digits: int = 4,
          write: Callable[[float, int], str] = number) -> tuple[str, str]:
    """``value`` and ``limit`` written with at least ``digits`` significant digits, and
    with more where needed so that different numbers never read alike."""
    shown = (write(value, digits), write(limit, digits))
    while shown[0] == shown[1] and value != limit and digits < MAX_DIGITS:
        digits += 1
        shown = (write(value, digits), write(limit, digits))
    return shown


def plural(count: int, noun: str) -> str:
    """``1 face``, ``3 faces``; ``noun`` is the singular."""
    return f"{count} {noun}" if count == 1 else f"{count} {noun}s"


def quantity(value: float, unit: str, text: str | None = None) -> str:
    """``78.2 deg``, ``1.45`` (no unit), ``1 cell``, ``12 cells``.

    ``text`` is the value as already written (see :func:`apart`); a count noun in
    ``unit`` is made singular when the value is exactly one.
    """
    text = number(value) if text is None else text
    if value == 1 and unit in SINGULAR:
        unit = SINGULAR[unit]
    return f"{text} {unit}".rstrip()


def limit_text(limit: float | None, worse: str, unit: str, text: str | None = None) -> str:
    """A limit with its direction and unit: ``<= 1.3``, ``>= 10 cells``; ``-`` for none."""
    if limit is None:
        return "-"
    return f"{LIMIT_SIGN[worse]} {quantity(limit, unit, text)}"
