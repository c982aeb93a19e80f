"""Grading by extent and place: a measurement's per-entity values with their places, and
the distribution of a graded quantity that a check carries (:mod:`caselint.engine.extent`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Callable

from caselint.values import Worse

if TYPE_CHECKING:
    from caselint.model import Measurement
    from caselint.values import Limits


@dataclass(frozen=True, eq=False)
class Extent:
    """The per-entity values behind a measurement, each with its place, for grading by
    extent and place (see :class:`Grade`).

    ``values`` (N,) are finite per-entity values (faces, cells, wall faces), ``places`` (N,)
    their place codes (indices into :data:`PLACES`). ``measure(subset, limits)`` returns the
    located measurement of the entities ``subset`` (indices into ``values``) against
    ``limits``: their worst value, where it is, how many are past the limits; the engine
    calls it for each place it grades. ``weights`` (N,), when given, weigh the shares (wall
    face areas: a share of the wall area); ``entity`` names one entity ("face", "cell").
    Compared by identity: it holds arrays.
    """

    values: Any
    places: Any
    entity: str
    measure: Callable[[Any, "Limits"], "Measurement"]
    weights: Any = None
    weight_words: str = ""

    def __post_init__(self) -> None:
        import numpy as np

        if np.shape(self.values) != np.shape(self.places) or np.ndim(self.values) != 1:
            raise ValueError(f"an extent needs one place per value, got shapes "
                             f"{np.shape(self.values)} and {np.shape(self.places)}")
        if self.weights is not None and np.shape(self.weights) != np.shape(self.values):
            raise ValueError(f"an extent's weights must match its values, got shapes "
                             f"{np.shape(self.weights)} and {np.shape(self.values)}")


@dataclass(frozen=True)
class PlaceSpread:
    """The entities of a distribution in one place: how many, the worst value, and the share
    beyond each limit (pairs of limit and percent)."""

    place: str
    count: int
    worst: float | None
    beyond: tuple[tuple[float, float], ...] = ()


@dataclass(frozen=True)
class Distribution:
    """How a graded quantity is spread over the mesh, for a report to show beyond the maximum.

    ``percentiles`` are pairs (p, value) over all entities (by weight when ``weighted``);
    ``beyond`` pairs (limit, percent of all entities past it) for each limit of the rule's
    place grades; ``places`` the same per place; ``worst_place`` where the worst value sits.
    """

    entity: str
    count: int
    percentiles: tuple[tuple[float, float], ...]
    beyond: tuple[tuple[float, float], ...]
    places: tuple[PlaceSpread, ...]
    worst_place: str
    worse: Worse = "higher"
    weighted: str = ""
    label: str = ""
