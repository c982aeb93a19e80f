"""What a rule declares beyond its check: its parameters (checked by the engine where a
rule set or case file sets them) and its named grades."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from caselint.values import PLACES, Limits, Worse, _require_finite

#: Kinds of rule parameters and how a message names a value of each.
PARAMETER_KINDS: dict[str, str] = {
    "number": "a finite number", "integer": "a whole number", "flag": "true or false",
    "text": "text",
}
_NAME = r"[a-z][a-z0-9]*(_[a-z0-9]+)*"
_GRADE_NAME = r"[a-z][a-z0-9]*(-[a-z0-9]+)*(\.[a-z0-9]+(-[a-z0-9]+)*)*"


def finite_number(value: Any) -> float | None:
    """``value`` as a float when it is a finite number (not true/false), else None."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    try:
        number = float(value)
    except OverflowError:             # an int beyond the float range
        return None
    return number if math.isfinite(number) else None


@dataclass(frozen=True)
class Parameter:
    """A rule parameter: its default, unit and the values it takes.

    The engine checks every value a rule set or case file sets against ``kind``
    (``number``, ``integer``, ``flag``, ``text``; by default the kind of the default),
    ``minimum`` / ``maximum`` (inclusive), ``exclusive_minimum``, ``choices`` and
    ``nullable`` (null allowed; always so when the default is None), and reports a bad
    one at the file, line and key that set it. A rule never validates its parameters.
    """

    name: str
    default: Any
    unit: str = ""
    description: str = ""
    nullable: bool = False
    kind: str = ""
    minimum: float | None = None
    maximum: float | None = None
    exclusive_minimum: float | None = None
    choices: tuple[Any, ...] = ()

    def __post_init__(self) -> None:
        import re

        if not re.fullmatch(_NAME, self.name):
            raise ValueError(f"parameter name {self.name!r} must be lower-case words joined by '_'")
        if not self.kind:
            kind = ("flag" if isinstance(self.default, bool) else
                    "text" if isinstance(self.default, str) else "number")
            object.__setattr__(self, "kind", kind)
        if self.kind not in PARAMETER_KINDS:
            raise ValueError(f"parameter {self.name!r}: kind must be one of "
                             f"{', '.join(PARAMETER_KINDS)}, got {self.kind!r}")
        if self.default is None:
            object.__setattr__(self, "nullable", True)
        problem = self.problem(self.default)
        if problem is not None:
            raise ValueError(f"parameter {self.name!r}: its default {self.default!r} is not "
                             f"{problem}")

    def expected(self) -> str:
        """What a value must be, in words: ``a whole number of at least 1 (cells) or null``."""
        text = PARAMETER_KINDS[self.kind]
        if self.choices:
            text = "one of " + ", ".join(str(c) for c in self.choices)
        bounds = []
        if self.exclusive_minimum is not None:
            bounds.append(f"above {self.exclusive_minimum:g}")
        if self.minimum is not None:
            bounds.append(f"at least {self.minimum:g}")
        if self.maximum is not None:
            bounds.append(f"at most {self.maximum:g}")
        if bounds:
            text += ", " + " and ".join(bounds)
        if self.unit and self.kind in ("number", "integer"):
            text += f" (in {self.unit})"
        return text + (" or null" if self.nullable else "")

    def problem(self, value: Any) -> str | None:
        """None when ``value`` is one this parameter takes, else what was expected."""
        if value is None:
            return None if self.nullable else self.expected()
        if self.kind == "flag":
            ok = isinstance(value, bool)
        elif self.kind == "text":
            ok = isinstance(value, str)
        else:
            number = finite_number(value)
            ok = number is not None and (self.kind == "number" or number == int(number))
            if ok:
                ok = ((self.minimum is None or number >= self.minimum)
                      and (self.maximum is None or number <= self.maximum)
                      and (self.exclusive_minimum is None or number > self.exclusive_minimum))
        if ok and self.choices:
            ok = value in self.choices
        return None if ok else self.expected()


@dataclass(frozen=True)
class Grade:
    """A named pair of limits that a rule's measurements are graded against.

    Every rule has a main grade (named ``Rule.main_grade``, its ``limits``, ``worse`` and
    ``unit``); :attr:`Rule.grades` declares more, for measurements on another scale or in
    another regime (``wall-function.low`` for the low side of a y+ band). A measurement
    names its grade; rule sets and case files override a grade by name.

    Grading by extent and place: a grade with ``places`` judges the entities of a
    measurement's :class:`Extent` in those places (names from :data:`PLACES`). It bounds
    their worst value, or, when ``share`` is set, the share (percent of the entities, or of
    their weight) beyond the quality limit ``beyond`` (None: the rule's main warning limit,
    else its error limit).
    """

    name: str
    warn: float | None = None
    error: float | None = None
    description: str = ""
    source: str = ""
    worse: Worse | None = None
    unit: str | None = None
    places: tuple[str, ...] = ()
    share: bool = False
    beyond: float | None = None

    def __post_init__(self) -> None:
        import re

        if not re.fullmatch(_GRADE_NAME, self.name):
            raise ValueError(f"grade name {self.name!r} must be lower-case words joined by '-' "
                             "(and '.')")
        _require_finite(self, ("warn", "error", "beyond"))
        unknown = [p for p in self.places if p not in PLACES]
        if unknown:
            raise ValueError(f"grade {self.name!r}: unknown places {unknown}; places are "
                             f"{', '.join(PLACES)}")
        if (self.share or self.beyond is not None) and not self.places:
            raise ValueError(f"grade {self.name!r}: a share grade needs the places it judges")
        if self.share and self.worse == "lower":
            raise ValueError(f"grade {self.name!r}: a share grade is worse when higher")

    @property
    def limits(self) -> Limits:
        """The grade's warning and error limits."""
        return Limits(self.warn, self.error)
