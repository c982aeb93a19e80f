"""Unique faces with owner and neighbour of an element mesh, by pairing half-faces.

Every cell contributes one *half-face* per face template, in cell order. Half-faces with
the same vertex set are paired by sorting one packed ``int64`` key per half-face with
``argsort`` (far faster than ``np.unique(axis=0)``, see the design notes):

- triangles: the three sorted vertex ids, 21 bits each (below 2**21 points), else two keys;
- quadrilaterals: the diagonal through the smallest vertex (``a * P + c``), then the other
  diagonal as a second key that is checked, not sorted, unless two different
  quadrilaterals share the first key (then a two-key ``lexsort`` decides);
- 2-D edges: ``min * P + max``.

A pair becomes one face, oriented as in the cell with the lower id (its owner). A vertex
set seen once is a boundary face; seen more than twice (or twice in one cell) it is
non-manifold: every occurrence stays a separate face with no neighbour and is listed in
``nonmanifold``. Faces come out sorted by owner cell. Two cells listing a shared face the
same way round (one of them is inverted, or both are the same cell) are recorded in
``clashing``; the geometry then takes each cell's side of that face in its own orientation.

On large meshes the compiled kernels of :mod:`caselint.mesh.kernels.face_pairing` pair the
half-faces by buckets of their smallest vertex instead of a sort: the same faces, in the
same order (:mod:`caselint.mesh.kernels` decides which runs).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from caselint.mesh.kernels import compiled
from caselint.mesh.celltypes import FACES, TRIANGLE_FACES, face_index
from caselint.mesh.geometry import chunks

_TRI_PACK_LIMIT = 1 << 21


@dataclass(frozen=True, eq=False)
class ElementBlock:
    """Cells of one element type as read: cell id = ``start`` + row of ``connectivity``."""

    type: str
    connectivity: np.ndarray
    start: int

    @property
    def stop(self) -> int:
        """One past the last cell id of the block."""
        return self.start + len(self.connectivity)


@dataclass(frozen=True, eq=False)
class PairedFaces:
    """The unique faces of an element mesh, sorted by owner (see the module docstring).

    ``faces`` is ``(F, 4)`` with triangles repeating their last vertex, or ``(F, 2)`` edges.
    """

    faces: np.ndarray
    owner: np.ndarray
    neighbour: np.ndarray
    nonmanifold: np.ndarray
    clashing: np.ndarray


def pair_faces(blocks: Sequence[ElementBlock], n_points: int, dim: int) -> PairedFaces:
    """Pair the half-faces of the element ``blocks`` into faces with owner and neighbour."""
    n_cells = sum(len(b.connectivity) for b in blocks)
    kernel = compiled("face_pairing", n_cells)
    if kernel is not None and n_cells:
        return _pair_compiled(kernel, blocks, n_points, dim)
    half, hcell, tri_mask = _half_faces(blocks, dim)
    n_half = half.shape[1]
    rep = np.zeros(n_half, dtype=bool)
    # The neighbour's half of each owner's half-face: gives the neighbour cell.
    mate = np.full(n_half, -1, dtype=np.int32 if n_half < 2**31 else np.int64)
    odd = np.zeros(n_half, dtype=bool)
    clash = np.zeros(n_half, dtype=bool)
    for order, same, hidx, bit in _kind_sorts(half, tri_mask, n_points):
        _pair_runs(order, same, hidx, bit, hcell, (rep, mate, odd, clash))
    fidx = np.flatnonzero(rep)
    del rep
    faces = np.empty((len(fidx), half.shape[0]), dtype=half.dtype)
    for k in range(half.shape[0]):
        faces[:, k] = half[k, fidx]
    del half
    owner = hcell[fidx]
    mates = mate[fidx]
    del mate
    paired = mates >= 0
    neighbour = np.where(paired, hcell[np.where(paired, mates, 0)], -1)
    nonmanifold = np.flatnonzero(odd[fidx])
    clashing = np.flatnonzero(clash[fidx])
    return PairedFaces(faces, owner, neighbour, nonmanifold, clashing)


def _pair_compiled(kernel, blocks: Sequence[ElementBlock], n_points: int,
                   dim: int) -> PairedFaces:
    """:func:`pair_faces` by the compiled kernels (same result, see the module docstring)."""
    width = 4 if dim == 3 else 2
    blocks = [b for b in blocks if len(b.connectivity)]
    hcell = HalfFaceCells(blocks)
    templates = [np.ascontiguousarray(face_index(b.type)[:, :width]) for b in blocks]
    tri = [np.isin(np.arange(len(t)), TRIANGLE_FACES[b.type] if dim == 3 else ())
           for b, t in zip(blocks, templates)]
    counts = np.zeros(n_points + 1, dtype=np.int64)
    for b, t in zip(blocks, templates):
        kernel.count_smallest(b.connectivity, t, counts[1:])
    offsets = np.cumsum(counts)
    n_half = int(offsets[-1])
    index = np.int32 if n_half < 2**31 else np.int64
    bucket_h = np.empty(n_half, dtype=index)
    k1, k2 = np.empty(n_half, dtype=np.int64), np.empty(n_half, dtype=np.int64)
    flags = np.empty(n_half, dtype=np.uint8)
    cursor = offsets[:-1].copy()
    p = np.int64(max(n_points, 1))
    for b, t, tr, h0 in zip(blocks, templates, tri, hcell.offsets):
        kernel.fill_buckets(b.connectivity, t, tr, h0, p, cursor, bucket_h, k1, k2, flags)
    del cursor
    rep = np.zeros(n_half, dtype=bool)
    mate = np.full(n_half, -1, dtype=index)
    odd = np.zeros(n_half, dtype=bool)
    clash = np.zeros(n_half, dtype=bool)
    blk_off = np.append(hcell.offsets, n_half)
    kernel.match_buckets(offsets, bucket_h, k1, k2, flags, blk_off, hcell.per_cell,
                         hcell.starts, rep, mate, odd, clash)
    del bucket_h, k1, k2, flags, offsets
    n_faces = int(np.count_nonzero(rep))
    dtype = np.result_type(*[b.connectivity.dtype for b in blocks])
    faces = np.empty((n_faces, width), dtype=dtype)
    owner = np.empty(n_faces, dtype=hcell.dtype)
    neighbour = np.empty(n_faces, dtype=hcell.dtype)
    face_odd, face_clash = np.empty(n_faces, dtype=bool), np.empty(n_faces, dtype=bool)
    at = 0
    for b, t, h0 in zip(blocks, templates, hcell.offsets):   # neighbours and flags in the pass
        at = kernel.emit_faces(b.connectivity, t, h0, rep, mate, odd, clash, blk_off,
                               hcell.per_cell, hcell.starts, faces, owner, neighbour, face_odd,
                               face_clash, at, b.start)
    return PairedFaces(faces, owner, neighbour, np.flatnonzero(face_odd),
                       np.flatnonzero(face_clash))


class HalfFaceCells:
    """The cell of each half-face, computed from its index rather than looked up.

    Half-faces are cell-major per block, so half-face ``i`` of a block that starts at
    half-face ``o`` with ``k`` faces a cell belongs to cell ``start + (i - o) // k``: an
    integer division instead of a random gather from a table as long as the half-faces.
    """

    def __init__(self, blocks: Sequence[ElementBlock]) -> None:
        sizes = [len(b.connectivity) * len(FACES[b.type]) for b in blocks]
        self.offsets = np.cumsum([0, *sizes[:-1]]).astype(np.int64)
        self.per_cell = np.array([len(FACES[b.type]) for b in blocks], np.int64)
        self.starts = np.array([b.start for b in blocks], dtype=np.int64)
        self.dtype = np.int32 if sum(len(b.connectivity) for b in blocks) < 2**31 else np.int64

    def __getitem__(self, half: np.ndarray) -> np.ndarray:
        half = np.asarray(half, dtype=np.int64)
        if len(self.offsets) == 1:
            return (half // self.per_cell[0] + self.starts[0]).astype(self.dtype)
        block = np.searchsorted(self.offsets, half, side="right") - 1
        cells = (half - self.offsets[block]) // self.per_cell[block] + self.starts[block]
        return cells.astype(self.dtype)


def _half_faces(blocks: Sequence[ElementBlock],
                dim: int) -> tuple[np.ndarray, "HalfFaceCells", np.ndarray | None]:
    """All half-faces (cell-major) as a (width, H) array, the cells of them
    (:class:`HalfFaceCells`), and which are triangles."""
    width = 4 if dim == 3 else 2
    sizes = [len(b.connectivity) * len(FACES[b.type]) for b in blocks]
    dtype = np.result_type(*[b.connectivity.dtype for b in blocks])
    # One contiguous row per vertex slot: the key arithmetic reads whole columns.
    half = np.empty((width, sum(sizes)), dtype=dtype)
    any_tri = dim == 3 and any(TRIANGLE_FACES[b.type] for b in blocks)
    tri_mask = np.zeros(sum(sizes), dtype=bool) if any_tri else None
    offset = 0
    for block, size in zip(blocks, sizes):
        tpl = face_index(block.type)
        conn = block.connectivity
        n, nf = len(conn), len(tpl)
        for k in range(width):
            view = half[k, offset : offset + size].reshape(n, nf)
            for j in range(nf):
                view[:, j] = conn[:, tpl[j, k]]
        if tri_mask is not None and TRIANGLE_FACES[block.type]:
            flags = tri_mask[offset : offset + size].reshape(n, nf)
            flags[:, list(TRIANGLE_FACES[block.type])] = True
        offset += size
    return half, HalfFaceCells(blocks), tri_mask


def _kind_sorts(half: np.ndarray, tri_mask: np.ndarray | None, n_points: int):
    """Yield (order, same-as-next, global index or None, orientation bit) per kind."""
    p = np.int64(max(n_points, 1))
    if half.shape[0] == 2:
        lo = np.minimum(half[0], half[1]).astype(np.int64)
        hi = np.maximum(half[0], half[1]).astype(np.int64)
        yield (*_sort_keys(lo * p + hi, None), None, half[0] < half[1])
        return
    quad_idx = None if tri_mask is None else np.flatnonzero(~tri_mask)
    q = list(half) if quad_idx is None else [row[quad_idx] for row in half]
    dup = _chunked(_repeats, q, (bool,))[0]
    tri_parts: list[tuple[np.ndarray, ...]] = []
    if tri_mask is not None:
        t_idx = np.flatnonzero(tri_mask)
        t = [half[k, t_idx] for k in range(3)]
        tri_parts.append((*t, t_idx, _cycle_bit(t)))
    if dup.any():
        # Collapsed quadrilaterals (degenerate cells) with three distinct vertices are
        # triangles and must pair with true triangles; others keep their quad key.
        rows = np.flatnonzero(dup)
        listed = [col[rows] for col in q]
        s = np.sort(np.stack(listed, axis=1), axis=1)
        distinct = 1 + (s[:, 1] != s[:, 0]) + (s[:, 2] != s[:, 1]) + (s[:, 3] != s[:, 2])
        three = distinct == 3
        s3 = s[three]
        # One adjacent pair of the sorted ids is equal; the largest id is always distinct.
        u1 = np.where(s3[:, 0] == s3[:, 1], s3[:, 2], s3[:, 1])
        glob = rows[three] if quad_idx is None else quad_idx[rows[three]]
        bit = _cycle_bit([col[three] for col in listed])
        tri_parts.append((s3[:, 0], u1, s3[:, 3], glob, bit))
        keep = np.ones(len(q[0]), dtype=bool)
        keep[rows[three]] = False
        quad_idx = np.flatnonzero(keep) if quad_idx is None else quad_idx[keep]
        q = [row[quad_idx] for row in half]
    del dup
    if len(q[0]):
        k1, k2 = _quad_keys(q, p)
        bit = _cycle_bit(q)
        del q
        yield (*_sort_keys(k1, k2), quad_idx, bit)
    if tri_parts:
        a, b, c, idx, bit = (np.concatenate(parts) for parts in zip(*tri_parts))
        k1, k2 = _tri_keys(a, b, c, p)
        yield (*_sort_keys(k1, k2), idx, bit)


#: Half-faces per element-wise pass: temporaries stay in the processor's cache, so the
#: time per half-face does not grow with the mesh (9-14 ns at 1M against 21 ns at 5M
#: half-faces unchunked, benchmarks/README.md).
PASS = 1 << 16


def _chunked(func, columns: list[np.ndarray], dtypes: tuple) -> tuple[np.ndarray, ...]:
    """``func`` applied to slices of ``columns``, results joined into preallocated arrays."""
    n = len(columns[0])
    outs = tuple(np.empty(n, dtype=dt) for dt in dtypes)
    for sl in chunks(n, PASS):
        parts = func([col[sl] for col in columns])
        for out, part in zip(outs, parts if isinstance(parts, tuple) else (parts,)):
            out[sl] = part
    return outs


def _cycle_bit(loop: list[np.ndarray]) -> np.ndarray:
    """Which way round a face is listed: from its smallest vertex, is the next vertex
    smaller than the previous one? Repeated vertices are skipped. The two cells of a
    consistently oriented face list it with opposite bits."""
    return _chunked(_cycle_bit_pass, loop, (bool,))[0]


def _cycle_bit_pass(loop: list[np.ndarray]) -> np.ndarray:
    n = len(loop)
    a = loop[0]
    for col in loop[1:]:
        a = np.minimum(a, col)
    nxt = np.zeros_like(a)
    prv = np.zeros_like(a)
    found = np.zeros(len(a), dtype=bool)
    for j in range(n):
        here = (loop[j] == a) & ~found
        if not here.any():
            continue
        f1, f2 = loop[(j + 1) % n], loop[(j + 2) % n]
        b1, b2 = loop[(j - 1) % n], loop[(j - 2) % n]
        nxt = np.where(here, np.where(f1 != a, f1, f2), nxt)
        prv = np.where(here, np.where(b1 != a, b1, b2), prv)
        found |= here
    return nxt < prv


def _repeats(q: list[np.ndarray]) -> np.ndarray:
    """Whether a quadrilateral lists a vertex twice (a collapsed face)."""
    return ((q[0] == q[1]) | (q[1] == q[2]) | (q[2] == q[3]) | (q[3] == q[0])
            | (q[0] == q[2]) | (q[1] == q[3]))


def _quad_keys(q: list[np.ndarray], p: np.int64) -> tuple[np.ndarray, np.ndarray]:
    """The two diagonals of each quadrilateral as packed keys, smaller key first.

    The diagonal through the smallest vertex nearly always identifies the face on its
    own; the other diagonal is only compared (see :func:`_sort_keys`).
    """
    def keys(c: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
        d02 = np.minimum(c[0], c[2]).astype(np.int64) * p + np.maximum(c[0], c[2])
        d13 = np.minimum(c[1], c[3]).astype(np.int64) * p + np.maximum(c[1], c[3])
        return np.minimum(d02, d13), np.maximum(d02, d13)

    k1, k2 = _chunked(keys, q, (np.int64, np.int64))
    return k1, k2


def _tri_keys(a, b, c, p: np.int64) -> tuple[np.ndarray, np.ndarray | None]:
    """Sorted-triple key: one packed int64 below 2**21 points, else two keys."""
    a, b, c = (v.astype(np.int64) for v in (a, b, c))
    lo, hi = np.minimum(a, b), np.maximum(a, b)
    mid = np.maximum(lo, np.minimum(hi, c))
    lo, hi = np.minimum(lo, c), np.maximum(hi, c)
    if p <= _TRI_PACK_LIMIT:
        return (lo << 42) | (mid << 21) | hi, None
    return lo * p + mid, hi


def _sort_keys(k1: np.ndarray, k2: np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """Order of the keys and whether each sorted entry equals the next.

    The order among equal keys does not matter (owner and neighbour are decided by cell
    id, clashes symmetrically), so numpy's default introsort is used: on the shuffled
    1M-hex benchmark it sorts the 6M keys 2-3x faster than ``kind="stable"``.
    """
    order = np.argsort(k1)
    n = len(order)
    same = np.empty(max(n - 1, 0), dtype=bool)
    for sl in chunks(n - 1, 16 * PASS):           # cache-sized gathers of the sorted keys
        o = order[sl.start : sl.stop + 1]
        s1 = k1[o]
        run = s1[1:] == s1[:-1]
        if k2 is not None:
            s2 = k2[o]
            differ = s2[1:] != s2[:-1]
            if np.any(run & differ):              # two faces share a first key: sort both
                return _sort_both(k1, k2)
            run &= ~differ
        same[sl] = run
    return order, same


def _sort_both(k1: np.ndarray, k2: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Order by (k1, k2) and whether each sorted entry equals the next in both."""
    order = np.lexsort((k2, k1))
    s1, s2 = k1[order], k2[order]
    return order, (s1[1:] == s1[:-1]) & (s2[1:] == s2[:-1])


def _pair_runs(order, same, hidx, bit, hcell, marks) -> None:
    """Mark representatives, neighbours, non-manifold and clashing half-faces from runs."""
    rep, mate, odd, clash = marks
    n = len(order)
    if n == 0:
        return
    start = np.ones(n, dtype=bool)
    start[1:] = ~same
    starts = np.flatnonzero(start)
    lengths = np.diff(np.append(starts, n))
    single = order[starts[lengths == 1]]
    rep[single if hidx is None else hidx[single]] = True
    crowd = order[np.repeat(lengths > 2, lengths)]
    bad = [crowd if hidx is None else hidx[crowd]]
    pairs = starts[lengths == 2]
    del starts, lengths
    for sl in chunks(len(pairs), 16 * PASS):     # cache-sized temporaries
        pair = pairs[sl]
        first, second = order[pair], order[pair + 1]
        # Both cells list a consistently oriented face in opposite directions.
        clashing = bit[first] == bit[second]
        if hidx is not None:
            first, second = hidx[first], hidx[second]
        c1, c2 = hcell[first], hcell[second]
        swap = c2 < c1
        selfish = c1 == c2
        keep = ~selfish
        own = np.where(swap, second, first)[keep]
        rep[own] = True
        mate[own] = np.where(swap, first, second)[keep]
        clash[own] = clashing[keep]
        bad += [first[selfish], second[selfish]]
    bad = np.concatenate(bad)
    rep[bad] = True
    odd[bad] = True
