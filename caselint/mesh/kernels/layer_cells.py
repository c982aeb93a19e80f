"""Compiled marking of the cells in the wall-layer stacks (numba).

The numpy reference is the lock-step walk of :func:`caselint.rulekit.stacks.layer_cells`
(all stacks together, one vectorised step per layer); here each stack is walked on its
own, with the same choice of opposite face and the same arithmetic in the same order, so
the same cells are marked.
"""

from __future__ import annotations

import numpy as np

from caselint.mesh.kernels import jit
from caselint.mesh.kernels.layer_walk import _shares_point  # the wall walk's own test


@jit(inline="always")
def opposite(cf_offsets, cf_faces, face_offsets, face_points, owner, area, centroid, cell,
             entry):
    """The face of ``cell`` opposite ``entry``, or -1, as the reference's ``_opposite``
    chooses it: among the faces sharing no point with ``entry``, the one whose centroid
    lies farthest along the inward entry normal (``argmax``: the first NaN, else the
    first of equal values; a face that is no candidate counts as -inf)."""
    sg = -1.0 if owner[entry] == cell else 1.0
    n0, n1, n2 = area[entry, 0] * sg, area[entry, 1] * sg, area[entry, 2] * sg
    lo, hi = cf_offsets[cell], cf_offsets[cell + 1]
    pick, best, pick_cand = -1, -np.inf, False
    for j in range(lo, hi):
        f = cf_faces[j]
        value = -np.inf
        cand = f != entry and not _shares_point(face_offsets, face_points, f, entry)
        if cand:
            # summed (x + z) + y, the order the reference keeps
            value = (((centroid[f, 0] - centroid[entry, 0]) * n0
                      + (centroid[f, 2] - centroid[entry, 2]) * n2)
                     + (centroid[f, 1] - centroid[entry, 1]) * n1)
        if np.isnan(value):
            pick, pick_cand = j, cand
            break
        if pick < 0 or value > best:
            pick, best, pick_cand = j, value, cand
    if pick < 0 or not pick_cand:
        return -1
    return cf_faces[pick]


@jit
def mark(cf_offsets, cf_faces, face_offsets, face_points, owner, neighbour, area, centroid,
         cells, entries, n_layers, marked, foreign, moved):
    """Set ``marked`` (C,) for the first ``n_layers[i]`` cells of the stack entered at
    cell ``cells[i]`` through face ``entries[i]``. With ``foreign`` (C,) bool (empty:
    none), a stack that steps into a foreign cell stops there unmarked: its cell, entry face
    and cells still to mark are written back into ``cells``, ``entries`` and ``n_layers``
    and ``moved[i]`` is set (a partition hands it on)."""
    stops = foreign.shape[0] > 0
    for i in range(cells.shape[0]):
        cell, entry, left = cells[i], entries[i], n_layers[i]
        while left >= 1:
            marked[cell] = True
            left -= 1
            if left == 0:
                break
            opp = opposite(cf_offsets, cf_faces, face_offsets, face_points, owner, area,
                           centroid, cell, entry)
            if opp < 0:
                break
            nxt = neighbour[opp] if owner[opp] == cell else owner[opp]
            if nxt < 0:
                break
            cell, entry = nxt, opp
            if stops and foreign[cell]:
                cells[i], entries[i], n_layers[i] = cell, entry, left
                moved[i] = True
                break
