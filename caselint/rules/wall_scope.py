"""What the near-wall rules share: the wall boundaries of a case with their layer stacks,
locating the worst wall faces, and area-weighted distributions for the report.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.wall_layers import WallLayers, wall_layers
from caselint.model import MAX_LISTED_IDS, Where
from caselint.rules.mesh_quality import cell_names, finite_point, worst_ids

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.mesh.analysis import Mesh


@dataclass(frozen=True)
class Walls:
    """The case's wall boundaries (sorted by name) and the stacks above their faces."""

    names: tuple[str, ...]
    rows: tuple[np.ndarray, ...]      # per boundary, rows of ``layers`` (its faces)
    layers: WallLayers

    def items(self):
        """(boundary name, rows) pairs."""
        return zip(self.names, self.rows)


def walls(ctx: "RuleContext", reach_m: float = 0.0) -> Walls | str:
    """The wall boundaries with faces in the mesh and their stacks, or a skip reason.

    The walks go past each stack up to ``reach_m`` from the wall (none further by default).
    """
    named = sorted(n for n, role in ctx.case.mesh.boundaries.items() if role == "wall")
    if not named:
        return "no boundary has role wall in mesh.boundaries"
    mesh = ctx.mesh
    groups = [(n, mesh.group_faces(n)) for n in named if n in mesh.group_names]
    groups = [(n, f) for n, f in groups if f.size]
    if not groups:
        return f"the wall boundaries ({', '.join(named)}) have no faces in the mesh"
    layers = wall_layers(mesh, np.concatenate([f for _, f in groups]), reach_m=reach_m)
    rows = tuple(layers.rows_of(np.sort(f)) for _, f in groups)
    return Walls(tuple(n for n, _ in groups), rows, layers)


def locate(mesh: "Mesh", faces: np.ndarray, values: np.ndarray, threshold: float | None,
           worse: str, boundary: str) -> tuple[Where, int, int]:
    """Where of the faces past ``threshold`` (worst first), the worst's index and the count."""
    local, count = worst_ids(values, threshold, worse)
    worst = int(local[0])
    if count:
        bad = values > threshold if worse == "higher" else values < threshold
        cells = np.unique(mesh.owner[faces[bad]])
        listed_cells = mesh.owner[faces[local]]
        _, first = np.unique(listed_cells, return_index=True)
        listed_cells = listed_cells[np.sort(first)][:MAX_LISTED_IDS]
    else:
        cells = listed_cells = np.zeros(0, dtype=np.int64)
    where = Where(
        boundary=boundary,
        faces=tuple(int(f) for f in faces[local]) if count else (),
        face_count=count,
        cells=cell_names(mesh, listed_cells),
        cell_count=int(cells.size),
        point=finite_point(mesh.face_centroids[faces[worst]]),
    )
    return where, worst, count


def at_face(mesh: "Mesh", face: int) -> str:
    """``face 12 at (0.1, 0, 0.35) m`` for a finding's detail."""
    x = mesh.face_centroids[face]
    return f"face {face} at ({x[0]:.4g}, {x[1]:.4g}, {x[2]:.4g}) m"


def area_quantile(values: np.ndarray, areas: np.ndarray, q: float) -> float:
    """The smallest value below or at which a fraction ``q`` of the total area lies."""
    order = np.lexsort((np.arange(len(values)), values))
    cum = np.cumsum(areas[order])
    total = cum[-1]
    if total <= 0:
        return float(np.quantile(values, q))
    k = int(np.searchsorted(cum, q * total, side="left"))
    return float(values[order[min(k, len(values) - 1)]])


def area_share(mask: np.ndarray, areas: np.ndarray) -> float:
    """Percentage of the total area where ``mask`` holds (by count when areas vanish)."""
    total = float(areas.sum())
    if total <= 0:
        return 100.0 * float(np.count_nonzero(mask)) / max(len(mask), 1)
    return 100.0 * float(areas[mask].sum()) / total


def distribution(values: np.ndarray, areas: np.ndarray) -> str:
    """``5 % of the area below 0.41, median 0.5, 95 % below 0.62, largest 0.66``."""
    p5, p50, p95 = (area_quantile(values, areas, q) for q in (0.05, 0.5, 0.95))
    return (f"5 % of the area below {p5:.3g}, median {p50:.3g}, 95 % below {p95:.3g}, "
            f"smallest {values.min():.3g}, largest {values.max():.3g}")


def fmt(value: float, digits: int = 3) -> str:
    """A number for a sentence: ``6.67e5`` rather than ``6.67e+05``."""
    text = f"{value:.{digits}g}"
    if "e" in text:
        mantissa, exponent = text.split("e")
        text = f"{mantissa}e{int(exponent)}"
    return text


def settled(values):
    """``values`` (finite) rounded to 10 significant digits, vectorised.

    Ratios of lengths carry round-off of order 1e-14; a mesh designed exactly at a limit
    (layers growing by 1.2 against a limit of 1.2) must not cross it by round-off.
    """
    v = np.asarray(values, dtype=np.float64)
    nonzero = v != 0
    exponent = np.floor(np.log10(np.abs(np.where(nonzero, v, 1.0))))
    scale = 10.0 ** (9 - exponent)
    out = np.where(nonzero, np.round(v * scale) / scale, 0.0)
    return float(out) if out.ndim == 0 else out


def number(params: dict, name: str, *, allow_none: bool = False) -> float | None:
    """A numeric rule parameter; ``ValueError`` naming it when it is not a number."""
    value = params[name]
    if value is None and allow_none:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not np.isfinite(value):
        raise ValueError(f"parameter {name} must be a finite number, got {value!r}")
    return float(value)
