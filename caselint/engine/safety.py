"""Cautions carried by reports of cases whose results can hurt someone."""

from __future__ import annotations

_WHAT = {
    "structural-wind": "structural wind loads",
    "fire-smoke": "fire and smoke spread",
    "life-safety": "life safety",
    "medical": "a medical application",
    "pressure-equipment": "pressure equipment",
}


def safety_note(safety: str) -> str:
    """The caution for a case's safety class; empty for ``none``."""
    if safety not in _WHAT:
        return ""
    return (
        f"This case concerns {_WHAT[safety]}. caselint checks the set-up against published "
        "guidance and common practice; it does not validate results. Local codes and "
        "standards, and review by a licensed professional engineer, govern any use of "
        "these results."
    )


def finding_caution(safety: str) -> str:
    """The short caution attached to each finding of a safety-relevant case."""
    if safety not in _WHAT:
        return ""
    return (
        f"Safety-relevant case ({safety}): resolve or justify this before the results "
        "inform a design decision; local codes and licensed professional review govern."
    )
