"""Physical quantities of the case file, turned into SI floats with pint.

A quantity is written either as a plain number, which is taken to be in SI units
(m, s, kg/m^3, Pa*s, m^2/s, m/s), or as text with a unit (``"2.5 m/s"``, ``"30 km/h"``,
``"1.81e-5 Pa*s"``, ``"5 mm"``). Text without a unit (``"2e-4"``) is a plain SI number.

Text is read by pint, whose registry is built once, on first use. Parsing pint's unit
definitions takes ~0.1 s, so the parsed definitions are kept in caselint's cache folder
(:func:`caselint.cachedir.cache_dir`) by pint's own disk cache; a cache that cannot be used
(``CASELINT_CACHE_DIR=off``, a read-only, damaged or shared folder) gives a registry
built from the definitions as if there were no cache.
"""

from __future__ import annotations

import contextlib
import functools
import math
import os
import re
import shutil
import stat
import sys
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from caselint.errors import CaseFileError
from caselint.manifest.case import LENGTH_UNITS

#: ``file`` of the errors raised here; the loader fills in the real file and line.
UNKNOWN_FILE = "<case file>"



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
    """The one pint UnitRegistry of caselint, built on first use (see the module docstring)."""
    from caselint.cachedir import cache_dir

    return build_registry(cache_dir())


def build_registry(cache_folder: Path | None) -> Any:
    """A new pint UnitRegistry, its parsed definitions kept under ``cache_folder`` if usable.

    None, or any trouble with the folder, gives a registry built without a disk cache.
    """
    import pint

    if cache_folder is not None:
        try:
            registry = _cached_registry(pint, Path(cache_folder))
        except Exception:  # noqa: BLE001 - the cache is an optimisation; pint parses instead
            registry = None
        if registry is not None:
            return registry
    return pint.UnitRegistry(cache_folder=None)


def registry_folder_name() -> str | None:
    """Name of the cache sub-folder for the running pint, flexparser and Python; None if unknown.

    pint keys its cache files by its own version and the definition files' content; the
    files are pickles of flexparser objects, so flexparser's version and Python's belong
    in the key as well.
    """
    import flexparser
    import pint

    versions = (pint.__version__, flexparser.__version__)
    if any(not v or v == "unknown" for v in versions):
        return None
    py = f"{sys.version_info[0]}.{sys.version_info[1]}"
    return f"units-pint-{versions[0]}-flexparser-{versions[1]}-py{py}"


def _cached_registry(pint: Any, cache_folder: Path) -> Any:
    """The registry read through the versioned sub-folder of ``cache_folder``, or None.

    A missing sub-folder is filled in a private temporary folder and renamed into place,
    so concurrent runs never read half-written entries. pint's entries are pickles, so
    they are read only from a folder owned by this user and writable by no one else.
    """
    name = registry_folder_name()
    if name is None:
        return None
    folder = cache_folder / name
    if not folder.is_dir():
        _fill(pint, cache_folder, folder)
    if not folder.is_dir() or not _private(folder):
        return None
    try:
        return pint.UnitRegistry(cache_folder=folder)
    except Exception:  # noqa: BLE001 - a damaged entry: remove it, so the next run rebuilds it
        shutil.rmtree(folder, ignore_errors=True)
        return None


def _fill(pint: Any, cache_folder: Path, folder: Path) -> None:
    """Write pint's parsed definitions to ``folder`` (atomically); failures leave it absent."""
    try:
        cache_folder.mkdir(parents=True, exist_ok=True)
        tmp = tempfile.mkdtemp(prefix=".units-", dir=cache_folder)   # mode 0700
    except OSError:
        return
    # Failures (a full disk, a read-only folder, another process renaming its folder into
    # place first) leave no cache, or theirs.
    try:
        with contextlib.suppress(Exception):
            pint.UnitRegistry(cache_folder=tmp)
            os.rename(tmp, folder)
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def _private(folder: Path) -> bool:
    """True when ``folder`` belongs to this user and no one else may write to it (POSIX)."""
    info = folder.stat()
    if hasattr(os, "getuid") and info.st_uid != os.getuid():
        return False
    return not info.st_mode & (stat.S_IWGRP | stat.S_IWOTH)


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
