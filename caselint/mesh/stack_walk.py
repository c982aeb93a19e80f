"""The numpy walk of the wall layer stacks: all stacks in lock step, one vectorised step
per layer (never a Python loop over faces), the reference of the compiled walk
:mod:`caselint.mesh.kernels.layer_walk`, which does the same arithmetic in the same order.
What a stack is and where it ends: :mod:`caselint.mesh.wall_layers`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.geometry import chunks
from caselint.mesh.topology import cell_point_table

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: How a stack ended (``WallLayers.end``).
NO_STACK = 0      #: the wall cell is no layer cell (a tetrahedron, or as tall as wide)
END_CORE = 1      #: the next cell is a core cell: not layer-shaped, or not thin
END_TURN = 2      #: the next cell's layer direction turns by more than ``turn_deg``
END_BOUNDARY = 3  #: the last layer's opposite face is on the boundary
END_LIMIT = 4     #: the stack reached ``max_cells``
END_DEGENERATE = 5  #: the next layer-shaped cell has a non-positive height
END_SHRINK = 6    #: the next cell is thinner than ``min_ratio`` times the last layer
END_MIDDLE = 7    #: the stack reached a facing wall and was cut at the middle of the passage
END_WORDS = {
    NO_STACK: "no layer cell at the wall", END_CORE: "core cell", END_TURN: "layer direction turns",
    END_BOUNDARY: "another boundary", END_LIMIT: "walk limit", END_DEGENERATE: "degenerate cell",
    END_SHRINK: "layers shrink", END_MIDDLE: "middle of a passage",
}


def opposite(mesh: "Mesh", cells: np.ndarray, entry: np.ndarray, x_in: np.ndarray,
              n_in: np.ndarray):
    """The face of each cell opposite its entry face, and whether it has one.

    Candidates are the cell's faces that share no point with the entry face: exactly the
    opposite face of a hexahedron, of a wedge entered through a triangle and of a 2-D
    quadrilateral, none for tetrahedra, pyramids and wedges entered through a
    quadrilateral. Among several (a polyhedron with a split top face, a hexahedron whose
    sides are split by a refinement), the first one crossed by the ray from the entry face
    centroid along the entry normal ``n_in`` (into the cell) is taken.
    """
    slots = np.take(mesh.cell_face_table(), cells, axis=0)                      # (m, K)
    valid = (slots >= 0) & (slots != entry[:, None])
    table = mesh.face_point_table
    entry_pts = table(entry)                                           # (m, Ve)
    m, k = slots.shape
    pts = table(np.where(valid, slots, 0).ravel()).reshape(m, k, -1)   # (m, K, V)
    shared = (pts[:, :, :, None] == entry_pts[:, None, None, :]).any(axis=(2, 3))
    cand = valid & ~shared
    f = np.where(cand, slots, 0)
    s = np.take(mesh.face_area_vectors, f.ravel(), axis=0).reshape(m, k, 3)
    xf = np.take(mesh.face_centroids, f.ravel(), axis=0).reshape(m, k, 3)
    sign = np.where(mesh.owner[f] == cells[:, None], 1.0, -1.0)
    dn = dot(s, n_in[:, None, :]) * sign
    reach = dot(s, xf - x_in[:, None, :]) * sign
    leaving = cand & (dn > 0)
    t = np.where(leaving, reach / np.where(leaving, dn, 1.0), np.inf)
    # a candidate the ray does not leave through ranks after every one it does
    score = np.where(leaving, t, np.where(cand, np.finfo(float).max, np.inf))
    j = np.argmin(score, axis=1)
    rows = np.arange(m)
    shaped = cand[rows, j]
    opp = np.where(shaped, slots[rows, j], entry).astype(np.int64)
    return opp, shaped


def extent(mesh: "Mesh", cells: np.ndarray, origin: np.ndarray, normal: np.ndarray) -> np.ndarray:
    """Largest distance of each cell's vertices from ``origin`` along unit ``normal`` (m)."""
    out = np.zeros(len(cells))
    for sl in chunks(len(cells)):
        pts = mesh.points[cell_point_table(mesh.data, mesh.cell_faces, cells[sl])]
        out[sl] = dot(pts - origin[sl][:, None, :], normal[sl][:, None, :]).max(axis=1)
    return out


def dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Dot product over the last axis (of length 3), summed x + y + z in that order: the
    compiled walk (:mod:`caselint.mesh.kernels.layer_walk`) sums the same way."""
    return a[..., 0] * b[..., 0] + a[..., 1] * b[..., 1] + a[..., 2] * b[..., 2]


def unit_normals(mesh: "Mesh", faces: np.ndarray, sign: np.ndarray) -> np.ndarray:
    s = mesh.face_area_vectors[faces]
    area = mesh.face_areas[faces]
    return s * (sign / np.where(area > 0, area, 1.0))[:, None]


@dataclass(frozen=True)
class Walked:
    """What the walks found, per wall face (see :class:`WallLayers`)."""

    n_wall: np.ndarray
    centre: np.ndarray
    first: np.ndarray
    layered_first: np.ndarray
    n_layers: np.ndarray
    n_walked: np.ndarray
    heights: np.ndarray
    end: np.ndarray
    core_cell: np.ndarray
    core_origin: np.ndarray
    core_normal: np.ndarray
    facing: np.ndarray
    jump_at: np.ndarray
    jump_cell: np.ndarray
    jump_origin: np.ndarray
    jump_normal: np.ndarray


def walk_lockstep(mesh: "Mesh", faces: np.ndarray, walled: np.ndarray, max_aspect: float,
                  min_ratio: float, jump_ratio: float, cos_turn: float, max_cells: int,
                  reach_m: float) -> Walked:
    """March every stack one cell per step (see :mod:`caselint.mesh.wall_layers`).

    Besides the stack, each walk keeps its last *jump*: the layer (index, cell, entry face
    centroid and normal) that grew by more than ``jump_ratio``, forgotten when a later
    layer grows by more than ``1 / min_ratio`` (the stack's cells above it are then not of
    one height); :func:`caselint.mesh.wall_layers._stacks` cuts a stack there.
    """
    n = len(faces)
    owner, neighbour = mesh.owner, mesh.neighbour
    xf, areas = mesh.face_centroids, mesh.face_areas

    cells0 = owner[faces]
    n_wall = unit_normals(mesh, faces, -np.ones(n))      # area vectors point out of the domain
    centre = dot(mesh.cell_centroids[cells0] - xf[faces], n_wall)
    first = extent(mesh, cells0, xf[faces], n_wall)
    layered_first = np.zeros(n, dtype=bool)

    columns: list[np.ndarray] = []
    n_walked = np.zeros(n, dtype=np.int64)
    n_layers = np.zeros(n, dtype=np.int64)
    in_stack = np.ones(n, dtype=bool)
    end = np.full(n, END_LIMIT, dtype=np.int8)
    core_cell = np.full(n, -1, dtype=np.int64)
    core_origin = np.zeros((n, 3))
    core_normal = np.zeros((n, 3))
    h_last = np.zeros(n)                     # height of each stack's last layer so far
    facing = np.zeros(n, dtype=bool)
    jump_at = np.full(n, -1, dtype=np.int64)
    jump_cell = np.full(n, -1, dtype=np.int64)
    jump_origin = np.zeros((n, 3))
    jump_normal = np.zeros((n, 3))
    uneven = 1.0 / min_ratio

    # State of the active stacks; the entry face's centroid and width carry over a step.
    act, cell, entry, nin = np.arange(n), cells0.copy(), faces.copy(), n_wall.copy()
    x_in = xf[faces]
    a_in = areas[faces]
    top = np.zeros(n)                        # distance from the wall walked so far, per stack
    for step in range(max_cells):
        if act.size == 0:
            break
        opp, shaped = opposite(mesh, cell, entry, x_in, nin)
        mine = owner[opp] == cell
        a_out = areas[opp]
        x_out = np.take(xf, opp, axis=0)      # take and compress: see _opposite
        nout = np.take(mesh.face_area_vectors, opp, axis=0) * (
            np.where(mine, 1.0, -1.0) / np.where(a_out > 0, a_out, 1.0))[:, None]
        h = dot(x_out - x_in, nin)
        straight = dot(nout, np.take(n_wall, act, axis=0)) >= cos_turn
        ok = shaped & straight & (h > 0)
        width = np.sqrt(a_in) if mesh.dim == 3 else a_in
        flat = ok & (h < max_aspect * width)
        grows = (h >= min_ratio * h_last[act]) if step else np.ones(act.size, dtype=bool)
        thin = flat & grows
        if step == 0:
            first[ok] = h[ok]
            layered_first[ok] = True
        column = np.zeros(n)
        column[act[ok]] = h[ok]
        columns.append(column)
        n_walked[act[ok]] += 1

        stacking = in_stack[act]
        layer = stacking & thin
        if step:
            q = h / np.where(layer, h_last[act], 1.0)
            jumped = layer & (q > jump_ratio)
            rows = act[jumped]
            jump_at[rows] = n_layers[rows]
            jump_cell[rows] = cell[jumped]
            jump_origin[rows] = x_in[jumped]
            jump_normal[rows] = nin[jumped]
            jump_at[act[layer & ~jumped & (q > uneven)]] = -1
        n_layers[act[layer]] += 1
        h_last[act[layer]] = h[layer]
        stops = stacking & ~thin
        reason = np.where(~shaped | (ok & ~flat), END_CORE,
                          np.where(ok, END_SHRINK, np.where(~straight, END_TURN, END_DEGENERATE)))
        if step == 0:
            reason[:] = NO_STACK
        end[act[stops]] = reason[stops]
        at_core = stops & (reason == END_CORE)
        core_cell[act[at_core]] = cell[at_core]
        core_origin[act[at_core]] = x_in[at_core]
        core_normal[act[at_core]] = nin[at_core]
        in_stack[act[stops]] = False

        on_boundary = ok & (neighbour[opp] < 0)
        closing = stacking & thin & on_boundary
        end[act[closing]] = END_BOUNDARY
        facing[act[closing]] = walled[opp[closing]]
        in_stack[act[closing]] = False
        top[act[ok]] += h[ok]
        # past its stack, a walk goes on only while it is within reach of the wall
        go = ok & ~on_boundary & (in_stack[act] | (top[act] < reach_m))
        nxt = np.where(mine, neighbour[opp], owner[opp])
        act, cell, entry, nin = act[go], nxt[go], opp[go], np.compress(go, nout, axis=0)
        x_in, a_in = np.compress(go, x_out, axis=0), a_out[go]

    walked = int(n_walked.max(initial=0))    # the last step may have walked no cell
    heights = np.column_stack(columns[:walked]) if walked else np.zeros((n, 0))
    return Walked(n_wall, centre, first, layered_first, n_layers, n_walked, heights, end,
                  core_cell, core_origin, core_normal, facing, jump_at, jump_cell, jump_origin,
                  jump_normal)
