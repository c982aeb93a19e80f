"""Which cells each partition of a mesh owns.

Every cell is owned by exactly one partition, and every face by the partition that owns its
owner cell, so that each per-cell and per-face quantity is computed once.

Two ways to split:

- :func:`by_ranges`: consecutive ranges of caselint's cell ids. Readers number cells in a
  locality order (a Morton order of their centres, :mod:`caselint.mesh.build`), so a range
  is a compact block of space with few neighbours outside it;
- :func:`by_labels`: a partition number per cell, e.g. the processor folder each cell of a
  decomposed case came from (:func:`by_processors`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class Plan:
    """A split of ``n_cells`` cells into partitions: ``order[offsets[k]:offsets[k + 1]]``
    are the cells of partition ``k``, ascending."""

    n_cells: int
    offsets: np.ndarray
    order: np.ndarray | None = None     # None: the cells in id order (ranges)

    def __post_init__(self) -> None:
        if self.offsets.ndim != 1 or len(self.offsets) < 2 or self.offsets[0] != 0 \
                or int(self.offsets[-1]) != self.n_cells or np.any(np.diff(self.offsets) < 0):
            raise ValueError(f"partition offsets must rise from 0 to {self.n_cells}, got "
                             f"{self.offsets.tolist()[:8]}")

    @property
    def n_parts(self) -> int:
        """Number of partitions."""
        return len(self.offsets) - 1

    def cells(self, k: int) -> np.ndarray:
        """(n,) ascending ids of the cells partition ``k`` owns."""
        lo, hi = int(self.offsets[k]), int(self.offsets[k + 1])
        if self.order is None:
            return np.arange(lo, hi, dtype=np.int64)
        return self.order[lo:hi]

    def sizes(self) -> np.ndarray:
        """(K,) number of cells of each partition."""
        return np.diff(self.offsets)

    def labels(self) -> np.ndarray:
        """(C,) the partition owning each cell."""
        parts = np.repeat(np.arange(self.n_parts, dtype=np.int32), self.sizes())
        if self.order is None:
            return parts
        out = np.empty(self.n_cells, dtype=np.int32)
        out[self.order] = parts
        return out


def by_ranges(n_cells: int, n_parts: int) -> Plan:
    """``n_parts`` consecutive ranges of cell ids of (nearly) equal size; fewer when there
    are fewer cells than parts."""
    if n_parts < 1:
        raise ValueError(f"the number of partitions must be at least 1, got {n_parts}")
    n_parts = max(1, min(n_parts, n_cells))
    offsets = np.linspace(0, n_cells, n_parts + 1).round().astype(np.int64)
    return Plan(n_cells, offsets)


def by_labels(labels: np.ndarray) -> Plan:
    """One partition per distinct value of ``labels`` (C,), in ascending label order."""
    labels = np.asarray(labels)
    if labels.ndim != 1:
        raise ValueError(f"partition labels must be one per cell, got shape {labels.shape}")
    order = np.argsort(labels, kind="stable").astype(np.int64)
    _, counts = np.unique(labels, return_counts=True)
    offsets = np.zeros(len(counts) + 1, dtype=np.int64)
    np.cumsum(counts, out=offsets[1:])
    return Plan(len(labels), offsets, order)


def by_cell_budget(n_cells: int, max_cells: int) -> Plan:
    """Ranges of at most ``max_cells`` cells each (the fewest such ranges)."""
    if max_cells < 1:
        raise ValueError(f"cells per partition must be at least 1, got {max_cells}")
    return by_ranges(n_cells, -(-n_cells // max_cells) if n_cells else 1)


def by_processors(case) -> Plan:
    """One partition per ``processor<N>`` folder of a decomposed mesh-folder case, its
    cells numbered as the reader numbers the whole mesh."""
    from pathlib import Path

    from caselint.mesh.formats.face_decomposed import cell_processors

    return by_labels(cell_processors(Path(case)))


__all__ = ["Plan", "by_cell_budget", "by_labels", "by_processors", "by_ranges"]
