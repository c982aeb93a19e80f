"""Compiled half-face pairing (numba): the faces of an element mesh with owner and neighbour.

The numpy reference is :func:`caselint.mesh.pairing.pair_faces`, which sorts one packed key
per half-face. Here half-faces are put in buckets by their smallest vertex id (a counting
sort, linear), and the few half-faces of a bucket are matched by their full keys; the
result does not depend on the order within a group, so it is the reference's exactly:

- a quadrilateral's key is its two diagonals (the one through its smallest vertex first),
  a triangle's its sorted vertex ids, a 2-D edge's its two ids; a quadrilateral listing a
  vertex twice with three distinct ids is a triangle;
- a key seen once is a boundary face; twice, a face owned by the cell with the lower id
  (twice in one cell, or more than twice: every occurrence is a face of its own, listed as
  non-manifold); a pair whose two cells list the face the same way round clashes.

Per block of cells the kernels take the block's connectivity and face template (vertex
slots per face, triangles repeating their last slot), so cells of any known shape mix.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit

QUAD, TRIANGLE, EDGE = 0, 1, 2
#: Buckets larger than this are sorted by their first key before matching (smaller ones
#: compare every pair).
_SMALL = 24


@jit(inline="always")
def _cycle_bit(v, n):
    """From the smallest vertex, is the next vertex smaller than the previous one (repeats
    of the smallest skipped)? As :func:`caselint.mesh.pairing._cycle_bit`."""
    a = v[0]
    for i in range(1, n):
        if v[i] < a:
            a = v[i]
    j = 0
    while v[j] != a:
        j += 1
    f1, f2 = v[(j + 1) % n], v[(j + 2) % n]
    b1, b2 = v[(j - 1 + n) % n], v[(j - 2 + 2 * n) % n]
    nxt = f1 if f1 != a else f2
    prv = b1 if b1 != a else b2
    return nxt < prv


@jit(inline="always")
def _key(v, tri, width, p):
    """(kind, k1, k2, orientation bit) of the half-face with vertices ``v``."""
    if width == 2:
        lo, hi = min(v[0], v[1]), max(v[0], v[1])
        return EDGE, np.int64(lo) * p + hi, np.int64(0), v[0] < v[1]
    if not tri:
        a, b, c, d = v[0], v[1], v[2], v[3]
        if a == b or b == c or c == d or d == a or a == c or b == d:
            s = np.sort(v[:4].copy())
            distinct = 1 + (s[1] != s[0]) + (s[2] != s[1]) + (s[3] != s[2])
            if distinct == 3:
                u1 = s[2] if s[0] == s[1] else s[1]
                return TRIANGLE, np.int64(s[0]) * p + u1, np.int64(s[3]), _cycle_bit(v, 4)
        d02 = np.int64(min(a, c)) * p + max(a, c)
        d13 = np.int64(min(b, d)) * p + max(b, d)
        return QUAD, min(d02, d13), max(d02, d13), _cycle_bit(v, 4)
    a, b, c = v[0], v[1], v[2]
    lo, hi = min(a, b), max(a, b)
    mid = max(lo, min(hi, c))
    lo, hi = min(lo, c), max(hi, c)
    return TRIANGLE, np.int64(lo) * p + mid, np.int64(hi), _cycle_bit(v, 3)


@jit
def count_smallest(conn, template, counts):
    """Add each half-face of the block to ``counts`` at its smallest vertex id."""
    nf, width = template.shape
    for i in range(conn.shape[0]):
        for j in range(nf):
            m = conn[i, template[j, 0]]
            for k in range(1, width):
                m = min(m, conn[i, template[j, k]])
            counts[m] += 1


@jit
def fill_buckets(conn, template, tri, h0, p, cursor, bucket_h, k1, k2, flags):
    """Write the keys of the block's half-faces (global ids from ``h0``) into the bucket of
    their smallest vertex; ``cursor`` holds each bucket's next free slot."""
    nf, width = template.shape
    v = np.empty(4, dtype=conn.dtype)
    h = h0
    for i in range(conn.shape[0]):
        for j in range(nf):
            m = conn[i, template[j, 0]]
            for k in range(width):
                v[k] = conn[i, template[j, k]]
                m = min(m, v[k])
            kind, a, b, bit = _key(v, tri[j], width, p)
            at = cursor[m]
            cursor[m] = at + 1
            bucket_h[at] = h
            k1[at] = a
            k2[at] = b
            flags[at] = kind * 2 + (1 if bit else 0)
            h += 1


@jit(inline="always")
def _cell_of(h, blk_off, blk_nf, blk_start):
    b = 0
    while b + 2 < blk_off.shape[0] and h >= blk_off[b + 1]:
        b += 1
    return blk_start[b] + (h - blk_off[b]) // blk_nf[b]


_TAKEN = 128


@jit
def match_buckets(offsets, bucket_h, k1, k2, flags, blk_off, blk_nf, blk_start, rep, mate,
                  odd, clash):
    """Pair the half-faces of every bucket (see the module docstring). ``flags`` (kind * 2
    + orientation bit) is used as scratch: bit 7 marks half-faces already grouped."""
    for v in range(offsets.shape[0] - 1):
        lo, hi = offsets[v], offsets[v + 1]
        crowded = hi - lo > _SMALL
        if crowded:                 # a vertex of many faces: sort its bucket by k1
            order = np.argsort(k1[lo:hi]) + lo
            bucket_h[lo:hi] = bucket_h[order]
            k2[lo:hi] = k2[order]
            flags[lo:hi] = flags[order]
            k1[lo:hi] = k1[order]
        for i in range(lo, hi):
            if flags[i] & _TAKEN:
                continue
            a1, a2, kind = k1[i], k2[i], flags[i] >> 1
            count = 1
            other = -1
            for j in range(i + 1, hi):
                if k1[j] != a1:
                    if crowded:
                        break
                    continue
                if k2[j] == a2 and (flags[j] & 127) >> 1 == kind:
                    flags[j] |= _TAKEN
                    count += 1
                    other = j
            h1 = bucket_h[i]
            if count == 1:
                rep[h1] = True
                continue
            if count == 2:
                h2 = bucket_h[other]
                c1 = _cell_of(h1, blk_off, blk_nf, blk_start)
                c2 = _cell_of(h2, blk_off, blk_nf, blk_start)
                if c1 != c2:
                    own, rest = (h2, h1) if c2 < c1 else (h1, h2)
                    rep[own] = True
                    mate[own] = rest
                    clash[own] = (flags[i] & 1) == (flags[other] & 1)
                    continue
            # twice in one cell, or more than two: every occurrence is a face of its own
            rep[h1] = odd[h1] = True
            for j in range(i + 1, hi):
                if k1[j] == a1 and k2[j] == a2 and (flags[j] & 127) >> 1 == kind:
                    rep[bucket_h[j]] = odd[bucket_h[j]] = True


@jit
def emit_faces(conn, template, h0, rep, mate, odd, clash, blk_off, blk_nf, blk_start, faces,
               owner, neighbour, face_odd, face_clash, at, cell0):
    """Write the block's representative half-faces (in half-face order) from row ``at`` of
    ``faces``, ``owner``, ``neighbour`` (the cell of the mate, -1 without one) and the
    non-manifold and clash flags; returns the next free row."""
    nf, width = template.shape
    h = h0
    for i in range(conn.shape[0]):
        for j in range(nf):
            if rep[h]:
                for k in range(width):
                    faces[at, k] = conn[i, template[j, k]]
                owner[at] = cell0 + i
                m = mate[h]
                neighbour[at] = _cell_of(m, blk_off, blk_nf, blk_start) if m >= 0 else -1
                face_odd[at] = odd[h]
                face_clash[at] = clash[h]
                at += 1
            h += 1
    return at
