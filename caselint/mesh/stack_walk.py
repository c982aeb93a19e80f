"""The numpy walk of the wall layer stacks: all stacks in lock step, one vectorised step
per layer (never a Python loop over faces), the reference of the compiled walk
:mod:`caselint.mesh.kernels.layer_walk`, which does the same arithmetic in the same order.
What a stack is and where it ends: :mod:`caselint.mesh.wall_layers`.
"""

from __future__ import annotations

from dataclasses import dataclass, fields
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


@dataclass(frozen=True, eq=False)
class StackState:
    """The walks of a set of stacks so far, one row per wall face: what they found (the
    fields up to ``jump_normal``, see :class:`~caselint.mesh.wall_layers.WallLayers` and
    :func:`walk_lockstep`; with the heights walked, what the stacks are made from), and
    where each walk is:
    the cell it enters next, through the face ``entry`` (its centroid ``x_in``, unit
    normal into the cell ``nin``, area ``a_in``), the distance walked from the wall
    ``top``, the last layer's height ``h_last``, whether the stack still grows
    (``in_stack``); the cells walked (``n_walked``) count the steps taken.

    A walk resumed from a state goes on exactly as the walk that left it would have; a
    walk that enters a cell marked ``foreign`` stops there with its state written back
    (a partition hands it to the one owning that cell, :mod:`caselint.partition.exchange`).
    The place of a walk that ended is left as it was.
    """

    n_wall: np.ndarray            # (n, 3)
    centre: np.ndarray
    first: np.ndarray
    layered_first: np.ndarray
    n_layers: np.ndarray
    n_walked: np.ndarray
    end: np.ndarray
    core_cell: np.ndarray
    core_origin: np.ndarray       # (n, 3)
    core_normal: np.ndarray       # (n, 3)
    facing: np.ndarray
    jump_at: np.ndarray
    jump_cell: np.ndarray
    jump_origin: np.ndarray       # (n, 3)
    jump_normal: np.ndarray       # (n, 3)
    cell: np.ndarray
    entry: np.ndarray
    x_in: np.ndarray              # (n, 3)
    nin: np.ndarray               # (n, 3)
    a_in: np.ndarray
    top: np.ndarray
    h_last: np.ndarray
    in_stack: np.ndarray

    @classmethod
    def at_walls(cls, mesh: "Mesh", faces: np.ndarray, extent) -> "StackState":
        """Walks about to enter the cells behind boundary ``faces``; ``extent(cells, origin,
        normal)`` the largest distance of each cell's vertices from its origin along its
        normal (:func:`extent`, or the compiled one)."""
        n = len(faces)
        cells0 = mesh.owner[faces].astype(np.int64)
        n_wall = unit_normals(mesh, faces, -np.ones(n))      # area vectors point out of the domain
        xf = mesh.face_centroids[faces]
        centre = dot(mesh.cell_centroids[cells0] - xf, n_wall)
        first = extent(cells0, xf, n_wall)      # the wall cell's height if it has no layer shape
        none = np.full(n, -1, dtype=np.int64)
        return cls(n_wall, centre, first, np.zeros(n, dtype=bool),
                   np.zeros(n, dtype=np.int64), np.zeros(n, dtype=np.int64),
                   np.full(n, END_LIMIT, dtype=np.int8), none, np.zeros((n, 3)),
                   np.zeros((n, 3)), np.zeros(n, dtype=bool), none.copy(), none.copy(),
                   np.zeros((n, 3)), np.zeros((n, 3)), cells0, faces.astype(np.int64), xf,
                   n_wall.copy(), mesh.face_areas[faces], np.zeros(n), np.zeros(n),
                   np.ones(n, dtype=bool))

    def arrays(self, rows=slice(None)) -> tuple[np.ndarray, ...]:
        """The arrays in field order (the compiled walk's arguments), of ``rows`` (a slice
        gives views: what a kernel writes lands in the state)."""
        return tuple(getattr(self, f.name)[rows] for f in fields(self))

    def take(self, rows: np.ndarray) -> "StackState":
        """The state of ``rows`` (indices or a mask: a copy)."""
        return StackState(*self.arrays(rows))

    def copy(self) -> "StackState":
        """A copy of the state."""
        return StackState(*(a.copy() for a in self.arrays()))



def walk_lockstep(mesh: "Mesh", s: StackState, walled: np.ndarray, max_aspect: float,
                  min_ratio: float, jump_ratio: float, cos_turn: float, max_cells: int,
                  reach_m: float, foreign: np.ndarray | None = None,
                  cell_ids: np.ndarray | None = None):
    """March every stack of ``s`` on, one cell per step, updating ``s`` (see
    :mod:`caselint.mesh.wall_layers`).

    Besides the stack, each walk keeps its last *jump*: the layer (index, cell, entry face
    centroid and normal) that grew by more than ``jump_ratio``, forgotten when a later
    layer grows by more than ``1 / min_ratio`` (the stack's cells above it are then not of
    one height); :func:`caselint.mesh.wall_layers.stacks_from` cuts a stack there. A walk
    entering a cell of ``foreign`` (C,) bool stops there (``moved``); core and jump cells
    are recorded as ``cell_ids[cell]`` (the cell's own id when None).

    :returns: the (n, most cells walked) heights of the cells walked in this call (0 for
        the others) and ``moved``.
    """
    n = len(s.cell)
    owner, neighbour = mesh.owner, mesh.neighbour
    xf, areas = mesh.face_centroids, mesh.face_areas
    named = (lambda c: c) if cell_ids is None else (lambda c: cell_ids[c])
    uneven = 1.0 / min_ratio
    moved = np.zeros(n, dtype=bool)
    walked_rows, walked_at, walked_h = [], [], []
    top, h_last, in_stack = s.top, s.h_last, s.in_stack       # per row, kept up to date

    # State of the active stacks; the entry face's centroid and width carry over a step.
    act, cell, entry, nin = np.arange(n), s.cell.copy(), s.entry.copy(), s.nin.copy()
    x_in, a_in = s.x_in.copy(), s.a_in.copy()
    while act.size:
        step = s.n_walked[act]               # a walk has walked one cell a step
        live = step < max_cells
        if not live.all():
            act, cell, entry, step = act[live], cell[live], entry[live], step[live]
            nin, x_in, a_in = nin[live], x_in[live], a_in[live]
            continue
        start = step == 0
        opp, shaped = opposite(mesh, cell, entry, x_in, nin)
        mine = owner[opp] == cell
        a_out = areas[opp]
        x_out = np.take(xf, opp, axis=0)      # take and compress: see _opposite
        nout = np.take(mesh.face_area_vectors, opp, axis=0) * (
            np.where(mine, 1.0, -1.0) / np.where(a_out > 0, a_out, 1.0))[:, None]
        h = dot(x_out - x_in, nin)
        straight = dot(nout, np.take(s.n_wall, act, axis=0)) >= cos_turn
        ok = shaped & straight & (h > 0)
        width = np.sqrt(a_in) if mesh.dim == 3 else a_in
        flat = ok & (h < max_aspect * width)
        thin = flat & (start | (h >= min_ratio * h_last[act]))
        lead = ok & start
        s.first[act[lead]] = h[lead]
        s.layered_first[act[lead]] = True
        walked_rows.append(act[ok])
        walked_at.append(step[ok])
        walked_h.append(h[ok])
        s.n_walked[act[ok]] += 1

        stacking = in_stack[act]
        layer = stacking & thin
        later = layer & ~start
        q = h / np.where(later, h_last[act], 1.0)
        jumped = later & (q > jump_ratio)
        rows = act[jumped]
        s.jump_at[rows] = s.n_layers[rows]
        s.jump_cell[rows] = named(cell[jumped])
        s.jump_origin[rows] = x_in[jumped]
        s.jump_normal[rows] = nin[jumped]
        s.jump_at[act[later & ~jumped & (q > uneven)]] = -1
        s.n_layers[act[layer]] += 1
        h_last[act[layer]] = h[layer]
        stops = stacking & ~thin
        reason = np.where(~shaped | (ok & ~flat), END_CORE,
                          np.where(ok, END_SHRINK, np.where(~straight, END_TURN, END_DEGENERATE)))
        reason[start] = NO_STACK
        s.end[act[stops]] = reason[stops]
        at_core = stops & (reason == END_CORE)
        s.core_cell[act[at_core]] = named(cell[at_core])
        s.core_origin[act[at_core]] = x_in[at_core]
        s.core_normal[act[at_core]] = nin[at_core]
        in_stack[act[stops]] = False

        on_boundary = ok & (neighbour[opp] < 0)
        closing = stacking & thin & on_boundary
        s.end[act[closing]] = END_BOUNDARY
        s.facing[act[closing]] = walled[opp[closing]]
        in_stack[act[closing]] = False
        top[act[ok]] += h[ok]
        # past its stack, a walk goes on only while it is within reach of the wall
        go = ok & ~on_boundary & (in_stack[act] | (top[act] < reach_m))
        nxt = np.where(mine, neighbour[opp], owner[opp])
        act, cell, entry, nin = act[go], nxt[go], opp[go], np.compress(go, nout, axis=0)
        x_in, a_in = np.compress(go, x_out, axis=0), a_out[go]
        if foreign is not None:
            away = foreign[cell]
            if away.any():
                rows = act[away]
                moved[rows] = True
                s.cell[rows], s.entry[rows], s.nin[rows] = cell[away], entry[away], nin[away]
                s.x_in[rows], s.a_in[rows] = x_in[away], a_in[away]
                stay = ~away
                act, cell, entry, nin = act[stay], cell[stay], entry[stay], nin[stay]
                x_in, a_in = x_in[stay], a_in[stay]

    heights = np.zeros((n, int(s.n_walked.max(initial=0))))
    if walked_rows:
        heights[np.concatenate(walked_rows), np.concatenate(walked_at)] = np.concatenate(walked_h)
    return heights, moved
