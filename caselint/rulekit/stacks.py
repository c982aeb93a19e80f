"""The cells of the wall-layer stacks: which cells the layer rules judge.

The walks of :mod:`caselint.mesh.wall_layers` say how many layers each no-slip wall face
carries (``WallLayers.n_layers``: the thin, layer-shaped cells lined up above it) but not
which cells they are. Rules that leave the stacks to the layer rules (``aspect-ratio``:
a wall-layer cell is flat by design) need the cells: from each wall face the stack is
walked again for its ``n_layers`` cells, each step crossing from a cell to the neighbour
behind its face opposite the entry face (the face sharing no point with it, as the walk
defines it; where several qualify, as on a polyhedron whose far side is split by a
refinement, the one whose centroid lies farthest along the entry face's normal). All
stacks step together, one vectorised step per layer; no loop over faces or cells.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.rulekit.walls import walls

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.mesh.analysis import Mesh


def stack_cells(ctx: "RuleContext") -> np.ndarray:
    """(C,) bool: the cells in the layer stacks over the case's no-slip walls (none
    when the case has no such wall, or is inviscid)."""
    found = walls(ctx)
    mesh = ctx.mesh
    if isinstance(found, str):
        return np.zeros(mesh.n_cells, dtype=bool)
    layers = found.layers
    key = f"rulekit.stacks:{hash(layers.faces.tobytes())}:{layers.faces.size}"
    return mesh.cached(key, lambda: _walk(mesh, layers.faces, layers.cells, layers.n_layers))


def _walk(mesh: "Mesh", faces: np.ndarray, cells: np.ndarray, n_layers: np.ndarray) -> np.ndarray:
    """Mark the first ``n_layers[i]`` cells above each wall face ``faces[i]``."""
    marked = np.zeros(mesh.n_cells, dtype=bool)
    rows = n_layers >= 1
    cell, entry, left = cells[rows], faces[rows], n_layers[rows].astype(np.int64)
    while cell.size:
        marked[cell] = True
        left = left - 1
        go = left > 0
        cell, entry, left = cell[go], entry[go], left[go]
        if not cell.size:
            break
        opposite = _opposite(mesh, cell, entry)
        nxt = np.where(mesh.owner[opposite] == cell, mesh.neighbour[opposite],
                       mesh.owner[opposite])
        keep = (opposite >= 0) & (nxt >= 0)
        cell, entry, left = nxt[keep], opposite[keep], left[keep]
    return marked


def _opposite(mesh: "Mesh", cells: np.ndarray, entry: np.ndarray) -> np.ndarray:
    """Each cell's face opposite its entry face (-1 where none shares no point with it)."""
    slots = np.take(mesh.cell_face_table(), cells, axis=0)                 # (m, K)
    valid = (slots >= 0) & (slots != entry[:, None])
    entry_points = mesh.face_point_table(entry)                            # (m, Ve)
    m, k = slots.shape
    points = mesh.face_point_table(np.where(valid, slots, 0).ravel()).reshape(m, k, -1)
    shared = (points[:, :, :, None] == entry_points[:, None, None, :]).any(axis=(2, 3))
    candidate = valid & ~shared
    # the entry normal points into the cell: out of it when the cell owns the entry face
    inward = mesh.face_area_vectors[entry] * np.where(
        mesh.owner[entry] == cells, -1.0, 1.0)[:, None]
    ahead = np.einsum("mkj,mj->mk", mesh.face_centroids[np.where(candidate, slots, 0)]
                      - mesh.face_centroids[entry][:, None, :], inward)
    pick = np.argmax(np.where(candidate, ahead, -np.inf), axis=1)
    rows = np.arange(m)
    return np.where(candidate[rows, pick], slots[rows, pick], -1)
