"""Compiled cutting of held writes into runs (numba), for the merge of a decomposed case
on disk (:class:`caselint.mesh.formats.face_decomposed_disk.Pending`).

The numpy reference is :func:`caselint.mesh.formats.face_decomposed_disk.slice_runs`: the
256th of each id (a shift), the places where it goes down, and a binary search per run
for where each 256th starts. This kernel finds the same bounds and starts in one pass over
the ids, with no array of keys (at 100M cells the reference's keys, differences and
searches were a tenth of the merge).
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
