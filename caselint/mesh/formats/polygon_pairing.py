"""Faces of cells given by their own polygons (polyhedra), paired into a face-based mesh.

A polyhedral VTU or VTK file lists, for every polyhedron, its faces as polygons; ordinary
cells (tetrahedra, hexahedra, ...) give theirs through their node templates. Each such
*half-face* belongs to one cell. Two half-faces with the same point cycle are one internal
face; a half-face that no other matches is a boundary face. Boundary polygons of the file
(triangles, quadrilaterals, polygons) name the boundary faces they cover.

Matching, vectorised per polygon size ``k``: every cycle is written in a canonical form
(rotated to start at its smallest point id, then turned so that the second point is the
smaller of that point's two neighbours); rows are sorted (two packed int64 keys for
``k <= 4``, all columns otherwise) and equal neighbours in the sorted order are the same
polygon. A pair whose cycles run the same way round in both cells is *clashing*: one
cell lists the face inwards. Where a polyhedron is involved (its faces are listed by the
file, often carelessly turned) the owner comes from the geometry: the cell whose centre
lies behind the face; between two cells of known shape it stays as found and is reported,
as in an element file (an inverted element is a finding, not something to repair). Three
or more half-faces with one cycle are kept as separate boundary
faces and reported as non-manifold.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class HalfFaces:
    """Polygons of one size ``k`` with the cell each belongs to (points out of the cell)."""

    points: np.ndarray       # (n, k)
    cells: np.ndarray        # (n,)
    #: Faces listed by the file (polyhedra): a clash may be settled by the geometry.
    listed: bool = False


@dataclass(frozen=True, eq=False)
class PairedPolygons:
    """Faces in CSR form, internal faces first (by owner, then neighbour), then boundary
    faces (by owner); ids of clashing and non-manifold faces."""

    offsets: np.ndarray
    points: np.ndarray
    owner: np.ndarray
    neighbour: np.ndarray
    clashing: np.ndarray
    nonmanifold: np.ndarray


def canonical(rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(n, k) cycles rotated to start at their smallest id and turned so the second id is
    the smaller neighbour of the first; and whether each was turned. One masked copy per
    rotation (k of them) rather than a gather with computed indices: faster and smaller."""
    n, k = rows.shape
    if n == 0:
        return rows.copy(), np.zeros(0, dtype=bool)
    start = np.argmin(rows, axis=1)
    out = rows.copy()
    for shift in range(1, k):
        at = start == shift
        if at.any():
            out[at] = np.roll(rows[at], -shift, axis=1)
    turned = out[:, 1] > out[:, k - 1]
    if turned.any():
        out[turned, 1:] = out[turned, :0:-1]
    return out, turned


def sort_rows(rows: np.ndarray, n_points: int) -> np.ndarray:
    """Order sorting the (n, k) rows lexicographically."""
    k = rows.shape[1]
    r = rows.astype(np.int64)
    p = np.int64(max(n_points, 1))
    if k <= 4:
        key1 = r[:, 0] * p + r[:, 1]
        key2 = r[:, 2] * p + (r[:, 3] if k == 4 else 0)
        return np.lexsort((key2, key1))
    return np.lexsort(r.T[::-1])


def _runs(sorted_rows: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start and length of each run of equal rows."""
    n = len(sorted_rows)
    new = np.ones(n, dtype=bool)
    if n > 1:
        new[1:] = np.any(sorted_rows[1:] != sorted_rows[:-1], axis=1)
    starts = np.flatnonzero(new)
    return starts, np.diff(np.append(starts, n))


def pair_polygons(groups: dict[int, list[HalfFaces]], points: np.ndarray,
                  n_cells: int) -> PairedPolygons:
    """Pair the half-faces of every size into faces (see the module docstring)."""
    internal, boundary = [], []
    for k in sorted(groups):
        ids = np.int32 if len(points) < 2**31 else np.int64
        rows = np.concatenate([h.points for h in groups[k]]).astype(ids)
        cells = np.concatenate([h.cells for h in groups[k]]).astype(np.int64)
        listed = np.concatenate([np.full(len(h.cells), h.listed) for h in groups[k]])
        canon, turned = canonical(rows)
        order = sort_rows(canon, len(points))
        starts, lengths = _runs(canon[order])
        one = order[starts[lengths == 1]]
        two = starts[lengths == 2]
        a, b = order[two], order[two + 1]
        swap = cells[b] < cells[a]
        a, b = np.where(swap, b, a), np.where(swap, a, b)
        clash = turned[a] == turned[b]
        settle = clash & (listed[a] | listed[b])
        many = np.concatenate([order[s:s + n] for s, n in zip(starts[lengths > 2],
                                                              lengths[lengths > 2])]
                              ) if np.any(lengths > 2) else np.zeros(0, dtype=np.int64)
        internal.append((rows[a], cells[a], cells[b], clash, settle))
        boundary.append((rows[one], cells[one], np.zeros(len(one), bool)))
        boundary.append((rows[many], cells[many], np.ones(len(many), bool)))
    return _assemble(internal, boundary, points, n_cells)


def _assemble(internal, boundary, points, n_cells) -> PairedPolygons:
    """CSR faces from the per-size pieces, internal first, clashing faces turned to their
    owner by geometry."""
    parts_in = [part for part in internal if len(part[0])]
    parts_bd = [(r, o, m) for r, o, m in boundary if len(r)]
    owner = np.concatenate([p[1] for p in parts_in] + [p[1] for p in parts_bd]
                           or [np.zeros(0, np.int64)])
    neighbour = np.concatenate([p[2] for p in parts_in] + [np.full(len(p[1]), -1)
                                                         for p in parts_bd]
                               or [np.zeros(0, np.int64)])
    sizes = np.concatenate([np.full(len(p[0]), p[0].shape[1]) for p in parts_in + parts_bd]
                           or [np.zeros(0, np.int64)])
    flat = np.concatenate([p[0].ravel() for p in parts_in + parts_bd]
                          or [np.zeros(0, np.int64)])
    clash, settle = (np.concatenate([p[i] for p in parts_in] + [np.zeros(len(p[1]), bool)
                                                              for p in parts_bd]
                                    or [np.zeros(0, bool)]) for i in (3, 4))
    many = np.concatenate([np.zeros(len(p[1]), bool) for p in parts_in]
                          + [p[2] for p in parts_bd] or [np.zeros(0, bool)])
    offsets = np.zeros(len(sizes) + 1, dtype=np.int64)
    np.cumsum(sizes, out=offsets[1:])
    n_int = sum(len(p[0]) for p in parts_in)
    if settle.any():
        owner, neighbour = _owner_by_geometry(points, offsets, flat, owner, neighbour,
                                              np.flatnonzero(settle), n_cells)
        clash &= ~settle
    # internal faces by (owner, neighbour), boundary faces by owner: stable and local
    inner = np.lexsort((neighbour[:n_int], owner[:n_int]))
    outer = n_int + np.argsort(owner[n_int:], kind="stable")
    order = np.concatenate([inner, outer])
    sizes = sizes[order]
    new_offsets = np.zeros(len(sizes) + 1, dtype=np.int64)
    np.cumsum(sizes, out=new_offsets[1:])
    gather = np.repeat(offsets[:-1][order], sizes) + (
        np.arange(int(new_offsets[-1])) - np.repeat(new_offsets[:-1], sizes))
    where = np.empty(len(order), dtype=np.int64)
    where[order] = np.arange(len(order))
    return PairedPolygons(new_offsets, flat[gather], owner[order], neighbour[order],
                          np.sort(where[np.flatnonzero(clash)]),
                          np.sort(where[np.flatnonzero(many)]))


def _owner_by_geometry(points, offsets, flat, owner, neighbour, faces, n_cells):
    """Owner and neighbour of clashing ``faces`` chosen so that the face's normal points
    away from the owner's centre (mean of its faces' points; the face cycle is kept)."""
    sizes = np.diff(offsets)
    every = np.arange(len(sizes))
    coords = points[flat[_face_slots(offsets, every)]]
    face_sum = np.add.reduceat(coords, offsets[:-1], axis=0) if len(coords) else coords
    cell_sum = np.zeros((n_cells, 3))
    cell_count = np.zeros(n_cells)
    for side in (owner, neighbour):
        keep = side >= 0
        np.add.at(cell_sum, side[keep], face_sum[keep])
        np.add.at(cell_count, side[keep], sizes[keep])
    centre = cell_sum / np.maximum(cell_count, 1.0)[:, None]
    here = points[flat[_face_slots(offsets, faces)]]
    nxt = points[flat[_face_slots(offsets, faces, shift=1)]]
    starts = np.concatenate([[0], np.cumsum(sizes[faces])[:-1]])
    mean = np.add.reduceat(here, starts, axis=0) / sizes[faces][:, None]
    normal = np.add.reduceat(np.cross(here, nxt), starts, axis=0)      # Newell, times 2
    behind = np.einsum("ij,ij->i", mean - centre[owner[faces]], normal) >= 0
    owner, neighbour = owner.copy(), neighbour.copy()
    flip = faces[~behind]
    owner[flip], neighbour[flip] = neighbour[flip], owner[flip]
    return owner, neighbour


def _face_slots(offsets: np.ndarray, faces: np.ndarray, shift: int = 0) -> np.ndarray:
    """Positions in the CSR point array of the points of ``faces`` (each face's points
    rotated by ``shift``)."""
    sizes = np.diff(offsets)[faces]
    ramp = np.arange(int(sizes.sum())) - np.repeat(np.cumsum(sizes) - sizes, sizes)
    return np.repeat(offsets[faces], sizes) + (ramp + shift) % np.repeat(sizes, sizes)


def match_polygons(faces_offsets: np.ndarray, face_points: np.ndarray,
                   polygons: list[tuple[np.ndarray, np.ndarray]], n_points: int
                   ) -> np.ndarray:
    """For each boundary polygon of the file, the face with its point set (any orientation),
    or -1. ``polygons`` is a list of ((n, k) points, (n,) polygon index) per size k."""
    total = sum(len(ix) for _, ix in polygons)
    out = np.full(total, -1, dtype=np.int64)
    sizes = np.diff(faces_offsets)
    for rows, index in polygons:
        if not len(rows):
            continue
        k = rows.shape[1]
        ids = np.flatnonzero(sizes == k)
        table = face_points[faces_offsets[ids][:, None] + np.arange(k)[None, :]]
        both = np.concatenate([canonical(table.astype(np.int64))[0],
                               canonical(rows.astype(np.int64))[0]])
        source = np.concatenate([ids, -1 - np.arange(len(rows))])
        order = sort_rows(both, n_points)
        ordered, src = both[order], source[order]
        new = np.ones(len(order), dtype=bool)
        new[1:] = np.any(ordered[1:] != ordered[:-1], axis=1)
        run = np.cumsum(new) - 1
        # a run of equal rows holds at most one face (faces are distinct polygons)
        face_of_run = np.full(int(run[-1]) + 1, -1, dtype=np.int64)
        face_of_run[run[src >= 0]] = src[src >= 0]
        polygon = src < 0
        out[index[-1 - src[polygon]]] = face_of_run[run[polygon]]
    return out
