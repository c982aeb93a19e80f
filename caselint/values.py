"""The plain values every other record is made of: grades' limits, locations, severities.

A leaf module of the data model (:mod:`caselint.model` re-exports all of it): the records
of rules, grades, extents and reports are built on these.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

Outcome = Literal["pass", "fail", "skipped", "waived", "error"]
Severity = Literal["error", "warning", "note"]
Worse = Literal["higher", "lower"]

OUTCOMES: tuple[str, ...] = ("pass", "fail", "skipped", "waived", "error")
#: Places of a mesh entity for grading by place (codes are indices into this tuple): inside a
#: region of interest of the case file, in the band of cells near a no-slip wall, elsewhere.
PLACES: tuple[str, ...] = ("elsewhere", "near-wall", "region")
#: The places judged strictly: where the flow is resolved ("fine where the flow is resolved,
#: a compromise elsewhere" is common practice).
STRICT_PLACES: tuple[str, ...] = ("region", "near-wall")
SEVERITIES: tuple[str, ...] = ("error", "warning", "note")
#: Rank of each severity; a larger number is more severe.
SEVERITY_RANK: dict[str, int] = {"note": 0, "warning": 1, "error": 2}

#: How many cell or face ids a finding lists; the count is always given in full.
MAX_LISTED_IDS = 10
#: Keys of a rule's entry in a rule set or case file that are not parameters.
ENTRY_KEYS: tuple[str, ...] = ("enabled", "warn", "error", "severity", "grades")


def _require_finite(record: Any, names: tuple[str, ...]) -> None:
    """Refuse NaN and infinity in the named optional number fields of a record."""
    for name in names:
        value = getattr(record, name)
        if value is not None and not math.isfinite(value):
            raise ValueError(f"{type(record).__name__}.{name} must be finite, got {value!r}")


@dataclass(frozen=True)
class Limits:
    """Warning and error limits of a graded rule; ``None`` disables that grade."""

    warn: float | None = None
    error: float | None = None

    def __post_init__(self) -> None:
        _require_finite(self, ("warn", "error"))


@dataclass(frozen=True)
class Where:
    """Where a finding is: a scope (boundary or region) and a few cells, faces and a point."""

    boundary: str | None = None
    region: str | None = None
    cells: tuple[int, ...] = ()
    cell_count: int | None = None
    faces: tuple[int, ...] = ()
    face_count: int | None = None
    point: tuple[float, float, float] | None = None
    key: str | None = None       # case-file key path the finding concerns, e.g. "time.step"
    line: int | None = None      # its 1-based line in the case file (filled in by the engine)
    place: str | None = None     # grading by place: the places judged, e.g. "elsewhere"

    def __post_init__(self) -> None:
        if len(self.cells) > MAX_LISTED_IDS or len(self.faces) > MAX_LISTED_IDS:
            raise ValueError(
                f"a finding lists at most {MAX_LISTED_IDS} ids; got {len(self.cells)} cells "
                f"and {len(self.faces)} faces (give the full number as a count)"
            )
        if self.point is not None and not all(math.isfinite(v) for v in self.point):
            raise ValueError(f"a finding's point must be finite, got {self.point}")

    def to_dict(self) -> dict[str, Any]:
        """Plain-data form with empty fields left out.

        Listed ids always come with their full count (the count defaults to the number
        listed), so a reader never mistakes a capped list for all of them.
        """
        out: dict[str, Any] = {}
        for key in ("boundary", "region", "key", "line", "place"):
            if getattr(self, key) is not None:
                out[key] = getattr(self, key)
        for kind, ids, count in (("cells", self.cells, self.cell_count),
                                 ("faces", self.faces, self.face_count)):
            if ids or count is not None:
                out[kind] = [int(i) for i in ids]
                out[f"{kind[:-1]}_count"] = int(count if count is not None else len(ids))
        if self.point is not None:
            out["point"] = [float(v) for v in self.point]
        return out
