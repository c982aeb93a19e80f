"""Locating values on the mesh: the worst ids, the file's names of cells, points, faces.

Cell ids inside caselint are its own (cells renumbered for speed); findings name cells by
their ids in the mesh file (:meth:`Mesh.file_cell_ids`). Face ids are caselint's own, so a
finding about faces also names the cells on either side.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.model import MAX_LISTED_IDS, Limits

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh


def worst_ids(values: np.ndarray, threshold: float | None, worse: str = "higher",
              names: np.ndarray | None = None) -> tuple[np.ndarray, int]:
    """Ids past ``threshold`` (worst first, at most 10) and how many there are.

    Ties go to the lowest id, or to the lowest of ``names`` (the file's ids of the
    entities, :meth:`Mesh.file_cell_ids`) when given. ``threshold`` None counts nothing
    but still lists the single worst id.
    """
    listed, past = worst_and_past(values, threshold, worse, names)
    return listed, int(past.size)


def worst_and_past(values: np.ndarray, threshold: float | None, worse: str = "higher",
                   names: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """:func:`worst_ids`, with all the ids past ``threshold`` (ascending) instead of their
    count, for a caller that goes on to use them."""
    sign = 1.0 if worse == "higher" else -1.0
    # "higher" on float64 values needs no negated copy of them
    badness = values if sign > 0 and values.dtype == np.float64 else sign * values
    candidates = np.empty(0, dtype=np.int64)
    if threshold is not None:
        candidates = np.flatnonzero(badness > sign * threshold)
    if candidates.size == 0:
        return _single_worst(badness, names), candidates
    return _worst_of(candidates, badness[candidates], names), candidates


def worst_and_past_within(values: np.ndarray, within: np.ndarray,
                          threshold: float | None) -> tuple[np.ndarray, np.ndarray]:
    """:func:`worst_and_past` of ``values[ids]`` (float64, worse is higher, ties to the
    lowest id) for the ids where the mask ``within`` holds, given as those ids: judged over
    all values through the mask, without a gathered copy of them (8 bytes an id)."""
    candidates = np.empty(0, dtype=np.int64)
    if threshold is not None:
        over = values > 1.0 * threshold
        over &= within
        candidates = np.flatnonzero(over)
        del over
    if candidates.size:
        return _worst_of(candidates, values[candidates], None), candidates
    if not within.any():
        return np.empty(0, dtype=np.int64), candidates
    # as _single_worst: a NaN counts as worst, ties go to the lowest id
    top = np.max(values, where=within, initial=-np.inf)
    tied = np.isnan(values) if np.isnan(top) else values == top
    tied &= within
    return np.array([int(np.argmax(tied))], dtype=np.int64), candidates


def _worst_of(candidates: np.ndarray, cand_bad: np.ndarray,
              names: np.ndarray | None) -> np.ndarray:
    """The ids past the threshold (``candidates``, ascending, with their badness), worst
    first, at most :data:`MAX_LISTED_IDS` (ties: the lowest id or name)."""
    keep = MAX_LISTED_IDS
    if candidates.size > keep:
        # the candidates worse than the keep-th worst, then the lowest ids of those tied
        # with it (candidates are in id order); a structured mesh can tie millions of
        # values, which must not all be sorted
        kth = np.partition(cand_bad, candidates.size - keep)[candidates.size - keep]
        worse_than = np.flatnonzero(cand_bad > kth)
        tied = np.flatnonzero(cand_bad == kth)
        need = keep - worse_than.size
        if names is not None and tied.size > need:
            tie_names = names[candidates[tied]]
            tied = tied[np.argpartition(tie_names, need - 1)[:need]]
        sel = np.sort(np.concatenate([worse_than, tied[:need]]))
        candidates, cand_bad = candidates[sel], cand_bad[sel]
    tie = candidates if names is None else names[candidates]
    order = np.lexsort((tie, -cand_bad))
    return candidates[order][:keep].astype(np.int64)


def id_range(ids: np.ndarray) -> slice | None:
    """``slice(a, b)`` when ``ids`` are exactly ``a, a + 1, ..., b - 1`` (a >= 0), else None:
    a caller can then take views instead of gathering (the internal faces of a mesh are
    such a range)."""
    if ids.ndim != 1 or ids.size == 0 or ids.dtype.kind not in "iu":
        return None
    first, last = int(ids[0]), int(ids[-1])
    if first < 0 or last - first + 1 != ids.size:
        return None
    # as many ids as the span, strictly rising: every id of the span, in order
    if ids.size > 1 and not bool(np.all(ids[1:] > ids[:-1])):
        return None
    return slice(first, last + 1)


def _single_worst(badness: np.ndarray, names: np.ndarray | None) -> np.ndarray:
    """The one worst id (ties: the lowest id or name; a NaN counts as worst), or none.

    One pass over the values: no sort, no id array as long as the mesh.
    """
    if badness.size == 0:
        return np.empty(0, dtype=np.int64)
    top = np.max(badness)
    tied = np.flatnonzero(np.isnan(badness) if np.isnan(top) else badness == top)
    pick = tied[np.argmin(names[tied])] if names is not None and tied.size > 1 else tied[0]
    return np.array([pick], dtype=np.int64)


def first_limit(limits: Limits) -> float | None:
    """The limit a value crosses first: the warning limit when set, else the error limit."""
    return limits.warn if limits.warn is not None else limits.error


def cell_names(mesh: "Mesh", cells: np.ndarray) -> tuple[int, ...]:
    """The file's ids of ``cells`` (caselint's own ids), in the same order, for a Where."""
    return tuple(int(c) for c in mesh.file_cell_ids(cells))


def first_cells(mesh: "Mesh", cells: np.ndarray) -> tuple[int, ...]:
    """The lowest file ids among the set ``cells``, sorted, at most ten, for a Where."""
    named = mesh.file_cell_ids(cells)
    if named.size > MAX_LISTED_IDS:
        named = np.partition(named, MAX_LISTED_IDS - 1)[:MAX_LISTED_IDS]
    return tuple(int(c) for c in np.sort(named))


def finite_point(xyz: np.ndarray) -> tuple[float, float, float] | None:
    """A point as a plain tuple, or None when a damaged entity has no finite centroid."""
    if not np.all(np.isfinite(xyz)):
        return None
    return (float(xyz[0]), float(xyz[1]), float(xyz[2]))


def cells_of_faces(mesh: "Mesh", faces: np.ndarray) -> np.ndarray:
    """Cells on either side of ``faces`` (owner then neighbour), first appearance order."""
    pairs = np.stack([mesh.owner[faces], mesh.neighbour[faces]], axis=1).ravel()
    pairs = pairs[pairs >= 0]
    _, first = np.unique(pairs, return_index=True)
    return pairs[np.sort(first)]


def touched_cell_count(mesh: "Mesh", faces: np.ndarray) -> int:
    """How many distinct cells lie on either side of ``faces`` (linear, no sort)."""
    touched = np.zeros(mesh.n_cells, dtype=bool)
    touched[mesh.owner[faces]] = True
    nbr = mesh.neighbour[faces]
    touched[nbr[nbr >= 0]] = True                                  # -1 is no cell
    return int(np.count_nonzero(touched))


def face_place(mesh: "Mesh", face: int) -> str:
    """Plain words for where a face is: between two cells, or on a boundary."""
    owner = int(mesh.file_cell_ids(mesh.owner[face]))
    neighbour = int(mesh.neighbour[face])
    if neighbour >= 0:
        neighbour = int(mesh.file_cell_ids(neighbour))
        return f"between cells {owner} and {neighbour}"
    group = int(mesh.face_group[face])
    name = f" '{mesh.group_names[group]}'" if group >= 0 else ""
    return f"on boundary{name} at cell {owner}"


def at_face(mesh: "Mesh", face: int) -> str:
    """``face 12 at (0.1, 0, 0.35) m`` for a finding's detail."""
    x = mesh.face_centroids[face]
    return f"face {face} at ({x[0]:.4g}, {x[1]:.4g}, {x[2]:.4g}) m"


def point_words(xyz: tuple[float, float, float] | None) -> str:
    """`` at (0.1, 0, 0.35) m``, or nothing for a missing point."""
    if xyz is None:
        return ""
    return " at (" + ", ".join(f"{v:.4g}" for v in xyz) + ") m"
