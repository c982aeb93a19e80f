"""What a rule sees: the case, its mesh (loaded on first use), its grades and parameters."""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Callable

from caselint.model import Grade, Limits

if TYPE_CHECKING:
    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh


@dataclass
class RuleContext:
    """The inputs of one rule run.

    ``mesh`` is read and its topology built only when a rule first asks for it, and is
    shared by every rule of the case. ``today`` is the date waivers are judged on.
    ``limits`` are the main grade's and ``grades`` every grade of the rule by name, with
    the rule-set and case-file overrides applied; ``params`` holds the rule's parameters,
    checked by the engine against their declarations. ``read_mesh`` reads another mesh
    file (a grid study's) the way the case's mesh was read (same reader, memory limit).
    """

    case: "Case"
    limits: Limits
    params: dict[str, Any] = field(default_factory=dict)
    today: dt.date = field(default_factory=dt.date.today)
    grades: dict[str, Grade] = field(default_factory=dict)
    read_mesh: Callable[..., "Mesh"] | None = None
    _load_mesh: Callable[[], "Mesh"] | None = None
    _mesh: "Mesh | None" = None

    @property
    def mesh(self) -> "Mesh":
        """The case's mesh in metres, with topology and geometry computed lazily."""
        if self._mesh is None:
            if self._load_mesh is None:
                raise RuntimeError("this rule context has no mesh")
            self._mesh = self._load_mesh()
        return self._mesh

    def grade(self, name: str) -> Limits:
        """The resolved limits of the grade ``name`` of the rule."""
        if name not in self.grades:
            raise KeyError(f"the rule has no grade {name!r}; it has {', '.join(self.grades)}")
        return self.grades[name].limits
