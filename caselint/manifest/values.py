"""Reading single values of a case file: quantities in SI, points, directions, mesh files.

:class:`ValueReader` converts one value at a time and checks what a schema cannot (a
positive size, a magnitude within reason, a direction that is not zero, a file that
exists). A value that fails is kept as a problem, at its line and key, and read as None,
so that the other values are still checked and every problem of a case file is
reported in one run.
"""

from __future__ import annotations

import functools
import math
from pathlib import Path
from typing import Any, Callable, TypeVar

from caselint.errors import CaseFileError
from caselint.manifest.units import DIMENSIONS, to_si
from caselint.manifest.yamlnodes import YamlDoc

#: Smallest and largest magnitude (SI) of a quantity, a coordinate (largest only) or a
#: plain number such as the Strouhal number. Far outside any CFD case, so a value beyond
#: is a typo or a wrong unit; within, the products and quotients of a few quantities that
#: rules form (Reynolds numbers, Courant numbers, y+) stay well inside the float range.
MIN_MAGNITUDE = 1e-12
MAX_MAGNITUDE = 1e12


_T = TypeVar("_T")


def collects(method: Callable[..., _T]) -> Callable[..., _T | None]:
    """A reading step that keeps its CaseFileError and returns None, so that the other
    values are still checked and every problem is reported in one run."""

    @functools.wraps(method)
    def step(self: "ValueReader", *args: Any, **kwargs: Any) -> _T | None:
        try:
            return method(self, *args, **kwargs)
        except CaseFileError as exc:
            self.problems.append(exc)
            return None

    return step


def _floats(values: list[Any]) -> list[float]:
    """Numbers as floats; a whole number too large for a float becomes infinity."""
    out = []
    for v in values:
        try:
            out.append(float(v))
        except OverflowError:
            out.append(math.inf)
    return out


class ValueReader:
    """Reads the values of one case file, keeping each problem at its line and key."""

    def __init__(self, case_path: Path, doc: YamlDoc) -> None:
        self.case_path = case_path
        self.folder = case_path.parent
        self.doc = doc
        self.problems: list[CaseFileError] = []

    def fail(self, key: str, message: str) -> CaseFileError:
        """A problem at ``key``, to raise inside a step that collects it."""
        return CaseFileError(self.doc.file, message, line=self.doc.line_of(key),
                             column=self.doc.column_of(key), key=key)

    def problem(self, key: str, message: str) -> None:
        """Keep a problem to report with the others; the checks go on."""
        self.problems.append(self.fail(key, message))

    @collects
    def quantity(self, section: dict[str, Any], name: str, dimension: str, path: str,
                 *, positive: bool = True) -> float | None:
        """SI value of ``section[name]`` (None when absent); positive unless told otherwise."""
        if name not in section:
            return None
        key = f"{path}.{name}"
        raw = section[name]
        try:
            value = to_si(raw, dimension, key)
        except CaseFileError as exc:
            raise self.fail(key, exc.message) from None
        shown = f"'{raw}'" if isinstance(raw, str) else f"{raw} {DIMENSIONS[dimension].si_unit}"
        if positive and not value > 0:
            raise self.fail(key, f"must be greater than zero, got {shown}")
        self.check_magnitude(key, value, shown, DIMENSIONS[dimension].si_unit)
        return value

    def check_magnitude(self, key: str, value: float, shown: str, si_unit: str) -> None:
        """Refuse a non-zero value outside MIN_MAGNITUDE..MAX_MAGNITUDE (SI)."""
        if value != 0.0 and not MIN_MAGNITUDE <= abs(value) <= MAX_MAGNITUDE:
            unit = f" {si_unit}" if si_unit else ""
            raise self.fail(key, f"{shown} is outside the range caselint accepts "
                                 f"({MIN_MAGNITUDE:g} to {MAX_MAGNITUDE:g}{unit}, either "
                                 "sign); check the number and its unit")

    @collects
    def finite(self, section: dict[str, Any], name: str, path: str) -> float | None:
        """A plain finite number (None when absent); the schema has checked its type."""
        if name not in section:
            return None
        try:
            value = float(section[name])
        except OverflowError:         # a whole number with hundreds of digits
            value = math.inf
        if not math.isfinite(value):
            raise self.fail(f"{path}.{name}", f"expected a finite number, got {section[name]!r}")
        self.check_magnitude(f"{path}.{name}", value, repr(section[name]), "")
        return value

    @collects
    def point(self, values: list[Any], path: str) -> tuple[float, float, float]:
        """A point [x, y, z] in metres."""
        out = []
        for i, value in enumerate(values):
            try:
                out.append(to_si(value, "length", f"{path}[{i}]"))
            except CaseFileError as exc:
                raise self.fail(exc.key, exc.message) from None
            if abs(out[-1]) > MAX_MAGNITUDE:   # tiny coordinates are as good as zero
                shown = f"'{value}'" if isinstance(value, str) else f"{value} m"
                self.check_magnitude(f"{path}[{i}]", out[-1], shown, "m")
        return (out[0], out[1], out[2])

    @collects
    def direction(self, values: list[float], path: str) -> tuple[float, float, float]:
        """A unit vector from three finite numbers, not all zero."""
        if not all(math.isfinite(v) for v in _floats(values)):
            raise self.fail(path, f"expected three finite numbers, got {values}")
        values = _floats(values)
        norm = math.hypot(*values)    # no overflow for components near 1e308
        if norm == 0.0:
            raise self.fail(path, "the direction [0, 0, 0] has no direction; give e.g. [1, 0, 0]")
        return (values[0] / norm, values[1] / norm, values[2] / norm)

    @collects
    def mesh_file(self, text: str, key: str) -> Path:
        """Absolute path of a mesh file or mesh folder named in the case file, which must
        exist (whether a reader takes a folder is found when the mesh is read)."""
        if "\0" in text:
            raise self.fail(key, "a file name cannot contain a NUL character")
        try:
            path = (self.folder / text).resolve()
            if not path.is_file() and not path.is_dir():
                raise self.fail(key, f"mesh file not found: {path}")
        except OSError as exc:        # a name too long, a loop of links, no permission
            raise self.fail(key, f"cannot use {text!r} as a mesh file: "
                                 f"{exc.strerror or exc}") from None
        return path
