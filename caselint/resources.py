"""Where the data shipped beside the code lives: rule sets and example cases.

In a wheel, ``rules/`` and ``examples/`` of the source tree are copied into the package
(``caselint/rule_sets`` and ``caselint/examples``, see pyproject.toml). In a source
checkout or an editable install they are found at the top of the tree instead.
"""

from __future__ import annotations

from pathlib import Path

_PACKAGE_DIR = Path(__file__).resolve().parent
_IN_WHEEL = {"rules": "rule_sets", "examples": "examples"}


def shipped_dir(name: str) -> Path:
    """Folder of shipped data ``name`` (``"rules"`` or ``"examples"``)."""
    inside = _PACKAGE_DIR / _IN_WHEEL[name]
    if inside.is_dir():
        return inside
    checkout = _PACKAGE_DIR.parent / name
    if checkout.is_dir():
        return checkout
    raise FileNotFoundError(f"caselint's shipped folder {name!r} is missing from {_PACKAGE_DIR}")
