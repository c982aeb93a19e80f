"""The cells of the wall-layer stacks: which cells the layer rules judge.

The walks of :mod:`caselint.mesh.wall_layers` say how many layers each no-slip wall face
carries (``WallLayers.n_layers``: the thin, layer-shaped cells lined up above it) but not
which cells they are. Rules that leave the stacks to the layer rules (``aspect-ratio``:
a wall-layer cell is flat by design) need the cells: from each wall face the stack is
walked again for its ``n_layers`` cells, each step crossing from a cell to the neighbour
behind its face opposite the entry face (the face sharing no point with it, as the walk
defines it; where several qualify, as on a polyhedron whose far side is split by a
refinement, the one whose centroid lies farthest along the entry face's normal). In the
numpy reference all stacks step together, one vectorised step per layer (no loop over faces
or cells); on large meshes the compiled kernel :mod:`caselint.mesh.kernels.layer_cells`
walks each stack on its own and marks the same cells. Both stop, where asked, at the cells
of other partitions, their state handed on (:mod:`caselint.partition.stacks`).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.kernels import compiled, in_threads
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
    return mesh.cached(key, lambda: layer_cells(mesh, layers.faces, layers.cells,
                                                 layers.n_layers))


def layer_cells(mesh: "Mesh", faces: np.ndarray, cells: np.ndarray,
                n_layers: np.ndarray) -> np.ndarray:
    """(C,) bool: the first ``n_layers[i]`` cells above each wall face ``faces[i]``, whose
    cell is ``cells[i]`` (partition by partition where the mesh walks so,
    :attr:`Mesh.walks`)."""
    if mesh.walks is not None:
        return mesh.walks.layer_cells(faces, cells, n_layers)
    marked = np.zeros(mesh.n_cells, dtype=bool)
    rows = np.asarray(n_layers) >= 1
    mark_on(mesh, np.asarray(cells)[rows], np.asarray(faces)[rows],
            np.asarray(n_layers)[rows], marked)
    return marked


def mark_on(mesh: "Mesh", cell: np.ndarray, entry: np.ndarray, left: np.ndarray,
            marked: np.ndarray, foreign: np.ndarray | None = None) -> tuple[np.ndarray, ...]:
    """Walk stacks on from ``cell`` (entered through ``entry``, ``left`` cells still to
    mark, at least 1), marking their cells in ``marked`` (compiled on large meshes, else in
    lock step with numpy); with ``foreign`` (C,) bool, a walk stops where it enters a
    foreign cell (unmarked). Returns the positions of those walks and, for each, the cell
    it enters, its entry face and the cells it has left to mark."""
    cell, entry = np.array(cell, dtype=np.int64), np.array(entry, dtype=np.int64)
    left = np.array(left, dtype=np.int64)
    kernel = compiled("layer_cells", mesh.n_cells)
    if kernel is None:
        return _mark_lockstep(mesh, cell, entry, left, marked, foreign)
    moved = np.zeros(len(cell), dtype=bool)
    cf, data = mesh.cell_faces, mesh.data
    stop = _NONE if foreign is None else foreign
    # the parts write True into one array: a cell in two stacks is marked either way
    in_threads(lambda p: kernel.mark(
        cf.offsets, cf.faces, data.face_offsets, data.face_points, mesh.owner,
        mesh.neighbour, mesh.face_area_vectors, mesh.face_centroids, cell[p], entry[p],
        left[p], marked, stop, moved[p]), len(cell), waits=mesh.on_disk)
    at = np.flatnonzero(moved)
    return at, cell[at], entry[at], left[at]


#: ``foreign`` for the compiled kernel when no cell is foreign (a whole mesh).
_NONE = np.zeros(0, dtype=bool)


def _mark_lockstep(mesh: "Mesh", cell: np.ndarray, entry: np.ndarray, left: np.ndarray,
                   marked: np.ndarray, foreign: np.ndarray | None) -> tuple[np.ndarray, ...]:
    """:func:`mark_on` with numpy, all stacks a step at a time (the reference)."""
    at = np.arange(len(cell))
    stopped = []
    while cell.size:
        marked[cell] = True
        left = left - 1
        go = left > 0
        cell, entry, left, at = cell[go], entry[go], left[go], at[go]
        if not cell.size:
            break
        opposite = _opposite(mesh, cell, entry)
        nxt = np.where(mesh.owner[opposite] == cell, mesh.neighbour[opposite],
                       mesh.owner[opposite])
        keep = (opposite >= 0) & (nxt >= 0)
        cell, entry, left, at = nxt[keep], opposite[keep], left[keep], at[keep]
        if foreign is not None:
            away = foreign[cell]
            stopped.append((at[away], cell[away], entry[away], left[away]))
            cell, entry, left, at = cell[~away], entry[~away], left[~away], at[~away]
    if not stopped:
        none = np.zeros(0, dtype=np.int64)
        return none, none, none, none
    return tuple(np.concatenate(part).astype(np.int64) for part in zip(*stopped))


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
    d = mesh.face_centroids[np.where(candidate, slots, 0)] - mesh.face_centroids[entry][:, None, :]
    # summed (x + z) + y: the order numpy's einsum took here before, kept so that ties
    # between coplanar candidates (a split far side) resolve as they did; the compiled
    # kernel sums the same way
    ahead = ((d[..., 0] * inward[:, None, 0] + d[..., 2] * inward[:, None, 2])
             + d[..., 1] * inward[:, None, 1])
    pick = np.argmax(np.where(candidate, ahead, -np.inf), axis=1)
    rows = np.arange(m)
    return np.where(candidate[rows, pick], slots[rows, pick], -1)
