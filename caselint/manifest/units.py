"""Physical quantities of the case file, turned into SI floats with pint.

A quantity is written either as a plain number, which is taken to be in SI units
(m, s, kg/m^3, Pa*s, m^2/s, m/s), or as text with a unit (``"2.5 m/s"``, ``"30 km/h"``,
``"1.81e-5 Pa*s"``, ``"5 mm"``). Text without a unit (``"2e-4"``) is a plain SI number.
The pint registry is built once, on first use, because building it takes ~0.1 s.
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from typing import Any

from caselint.errors import CaseFileError

#: ``file`` of the errors raised here; the loader fills in the real file and line.
UNKNOWN_FILE = "<case file>"

#: Length units accepted for ``mesh.units``, with their size in metres (exact by definition).
LENGTH_UNITS: dict[str, float] = {
    "m": 1.0,
    "cm": 1e-2,
    "mm": 1e-3,
    "um": 1e-6,
    "in": 0.0254,
    "ft": 0.3048,
}


@dataclass(frozen=True)
class Dimension:
    """A kind of quantity: how messages name it, its pint dimensionality, SI unit, example."""

    noun: str
    dimensionality: str
    si_unit: str
    example: str


#: The dimensions ``to_si`` knows, by the name the loader passes.
DIMENSIONS: dict[str, Dimension] = {
    "length": Dimension("a length", "[length]", "m", "0.3 m"),
    "velocity": Dimension("a velocity", "[length] / [time]", "m/s", "2.5 m/s"),
    "density": Dimension("a density", "[mass] / [length] ** 3", "kg/m^3", "1.2 kg/m^3"),
    "dynamic_viscosity": Dimension(
        "a dynamic viscosity", "[mass] / [length] / [time]", "Pa*s", "1.81e-5 Pa*s"),
    "kinematic_viscosity": Dimension(
        "a kinematic viscosity", "[length] ** 2 / [time]", "m^2/s", "1.5e-5 m^2/s"),
    "diffusivity": Dimension("a diffusivity", "[length] ** 2 / [time]", "m^2/s", "2.2e-5 m^2/s"),
    "time": Dimension("a time", "[time]", "s", "2e-4 s"),
    "frequency": Dimension("a frequency", "1 / [time]", "Hz", "40 Hz"),
    "volume_flow": Dimension("a volume flow rate", "[length] ** 3 / [time]", "m^3/s", "0.85 m^3/s"),
}

# Names for what a wrongly dimensioned value actually is, so the message can say "a mass".
_WHAT_IT_IS: dict[str, str] = {
    "[length]": "a length",
    "[time]": "a time",
    "[mass]": "a mass",
    "[temperature]": "a temperature",
    "[length] ** 2": "an area",
    "[length] ** 3": "a volume",
    "[length] / [time]": "a velocity",
    "[length] / [time] ** 2": "an acceleration",
    "[mass] / [length] ** 3": "a density",
    "[mass] / [length] / [time]": "a dynamic viscosity",
    "[length] ** 2 / [time]": "a kinematic viscosity or diffusivity",
    "[mass] / [length] / [time] ** 2": "a pressure",
    "1 / [time]": "a frequency",
}


@functools.cache
def unit_registry() -> Any:
    """The one pint UnitRegistry of caselint, built on first use."""
    import pint

    return pint.UnitRegistry()


def _error(key_path: str, message: str) -> CaseFileError:
    return CaseFileError(UNKNOWN_FILE, message, key=key_path)


def to_si(value: Any, dimension: str, key_path: str) -> float:
    """Convert a number (already SI) or a quantity text to an SI float of ``dimension``.

    Raises CaseFileError (file ``UNKNOWN_FILE``, no line: the caller locates it) naming
    ``key_path`` and the expected dimension for a wrong dimension, unreadable text or
    a value that is not finite.
    """
    dim = DIMENSIONS[dimension]
    expected = f"expected {dim.noun} such as '{dim.example}'"
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        raise _error(key_path, f"{expected}, got {value!r}")
    if isinstance(value, str):
        result = _parse_text(value, dim, key_path, expected)
    else:
        try:
            result = float(value)
        except OverflowError:         # a whole number with hundreds of digits
            result = math.inf
    if not math.isfinite(result):
        raise _error(key_path, f"{expected}; got {value!r}, which is not a finite number")
    return result


def _parse_text(text: str, dim: Dimension, key_path: str, expected: str) -> float:
    try:
        return float(text)            # text without a unit is a plain SI number
    except ValueError:
        pass
    _refuse_runaway(text, dim, key_path, expected)
    ureg = unit_registry()
    try:
        quantity = ureg.parse_expression(text)
    except Exception as exc:  # pint raises many kinds (undefined unit, tokenizer, syntax)
        raise _error(key_path, f"cannot read {text!r} as {dim.noun}: {_pint_reason(exc)}; "
                               f"{expected}") from None
    try:
        if not isinstance(quantity, ureg.Quantity):
            return float(quantity)        # a bare expression such as "3*2"
        if quantity.dimensionless:
            return float(quantity.to("dimensionless").magnitude)
    except (OverflowError, TypeError, ValueError):
        return math.inf                   # too large for a float: to_si reports it
    wanted = ureg.get_dimensionality(dim.dimensionality)
    if quantity.dimensionality != wanted:
        found = str(quantity.dimensionality)
        what = _WHAT_IT_IS.get(found, f"of dimension {found}")
        raise _error(key_path, f"{expected}, got {text!r}, which is {what}")
    try:
        return float(quantity.to_base_units().magnitude)
    except Exception as exc:  # offset units (degC) cannot be multiplied out
        raise _error(key_path, f"cannot convert {text!r} to {dim.si_unit}: {exc}") from None


#: Longest quantity text read; "1.81e-5 kg/(m*s)" needs 16 characters.
MAX_TEXT = 100
_POWER = re.compile(r"\*\*|\^")
_EXPONENT = re.compile(r"\s*(?:\(\s*[-+]?\d{1,2}(?:\.\d+)?\s*\)|[-+]?\d{1,2}(?:\.\d+)?)")


def _refuse_runaway(text: str, dim: Dimension, key_path: str, expected: str) -> None:
    """Refuse text whose arithmetic would run away before pint returns.

    pint evaluates numbers exactly, so ``10**10**10`` or ``((9**99)**99)**99`` would
    compute integers of billions of digits (a hang). A power may only raise a unit name
    or a group without digits (``m^2``, ``(m/s)**2``) to a short number.
    """
    def fail(why: str) -> CaseFileError:
        shown = text if len(text) <= 40 else text[:40] + "..."
        return _error(key_path, f"cannot read {shown!r} as {dim.noun}: {why}; {expected}")

    if len(text) > MAX_TEXT:
        raise fail(f"longer than {MAX_TEXT} characters")
    for match in _POWER.finditer(text):
        base = text[: match.start()].rstrip()
        if base.endswith(")"):
            depth, i = 0, len(base) - 1
            while i >= 0:
                depth += {")": 1, "(": -1}.get(base[i], 0)
                if depth == 0:
                    break
                i -= 1
            group_ok = i >= 0 and not any(c.isdigit() for c in base[i:])
        else:
            group_ok = bool(base) and base[-1].isalpha()
        exponent = _EXPONENT.match(text, match.end())
        if not group_ok or exponent is None or _POWER.match(text[exponent.end():].lstrip()):
            raise fail("a power (** or ^) may only raise a unit to a short number, as in 'm^2'")


def _pint_reason(exc: Exception) -> str:
    name = type(exc).__name__
    if name == "UndefinedUnitError":
        units = getattr(exc, "unit_names", None) or ()
        if isinstance(units, str):
            units = (units,)
        return "unknown unit " + ", ".join(f"'{u}'" for u in units) if units else "unknown unit"
    return str(exc) or name


def scale_to_m(units: str) -> float:
    """Metres per mesh length unit (``mesh.units``); KeyError for an unknown unit."""
    return LENGTH_UNITS[units]
