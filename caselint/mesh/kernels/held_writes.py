"""Compiled kernels of the merge of a decomposed case on disk (numba)
(:mod:`caselint.mesh.formats.face_decomposed_disk`).

- :func:`slice_runs` cuts held writes into runs
  (:class:`~caselint.mesh.formats.face_decomposed_disk.Pending`); its numpy reference,
  :func:`caselint.mesh.formats.face_decomposed_disk.slice_runs`, takes the 256th of each
  id (a shift), the places where it goes down, and a binary search per run for where each
  256th starts. This kernel finds the same bounds and starts in one pass over the ids,
  with no array of keys (at 100M cells the reference's keys, differences and searches
  were a tenth of the merge).
- :func:`face_point_writes` makes a folder's writes of face points; its numpy reference,
  :func:`caselint.mesh.formats.face_decomposed_disk.face_point_writes`, builds them from a
  ramp and three repeats over every point of every face and a gather (at 100M cells about
  80 s of a 440 s merge, sampled); this kernel writes each face's points in one loop.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit


@jit
def slice_runs(index, shift, slices):
    """Bounds of the runs of ``index`` in which ``index >> shift`` never goes down, and
    for each run the position (from its start) of the first id of each part ``0 ..
    slices`` at or past it (``slices + 1`` of them), as the reference gives them; empty
    arrays when there are more than ``slices`` runs."""
    n = index.shape[0]
    runs = 1
    for i in range(1, n):
        if (index[i] >> shift) < (index[i - 1] >> shift):
            runs += 1
            if runs > slices:
                return np.zeros(0, dtype=np.int64), np.zeros((0, slices + 1), dtype=np.int64)
    bounds = np.empty(runs + 1, dtype=np.int64)
    starts = np.empty((runs, slices + 1), dtype=np.int64)
    bounds[0] = 0
    r = 0
    for i in range(1, n):
        if (index[i] >> shift) < (index[i - 1] >> shift):
            r += 1
            bounds[r] = i
    bounds[runs] = n
    for r in range(runs):
        lo, hi = bounds[r], bounds[r + 1]
        at = lo
        for k in range(slices + 1):
            while at < hi and (index[at] >> shift) < k:
                at += 1
            starts[r, k] = at - lo
    return bounds, starts


@jit
def face_point_writes(local_offsets, local_points, face_ids, offsets, point_ids, dst, values):
    """For each face ``f`` with ``face_ids[f] > 0`` (kept, 1-based), in order: the places
    ``offsets[face_ids[f] - 1] + 0, 1, ...`` of its points in the merged face points into
    ``dst`` and the points themselves, ``point_ids[local_points[...]]``, into ``values``
    (both as long as the kept faces' points, which the caller counts); returns the count
    written."""
    k = 0
    for f in range(face_ids.shape[0]):
        g = face_ids[f]
        if g <= 0:
            continue
        start = offsets[g - 1]
        lo = local_offsets[f]
        for j in range(local_offsets[f + 1] - lo):
            dst[k] = start + j
            values[k] = point_ids[local_points[lo + j]]
            k += 1
    return k
