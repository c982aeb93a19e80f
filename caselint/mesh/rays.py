"""Rays cast from wall faces across the mesh: how wide each passage is and how many cells span it.

A ray starts at the centroid of a wall face and runs along the face's inward normal
(``-S_f / |S_f|``; ``S_f`` points out of the owner cell, that is, out of the fluid). It
marches from cell to cell through shared faces until it reaches a boundary face: a wall
ends a *gap*, any other boundary (inlet, outlet, symmetry, opening, periodic, interface,
or a face in no group) ends the ray without one.

Inside a cell the exit face is found as for any convex polyhedron: among the faces the ray
leaves through (``d . n_out > 0``, ``n_out`` pointing out of the current cell) the one whose
plane it meets first. The parameter ``t`` is measured from the ray's origin, so the width of
a gap is ``t`` at the plane of the wall face hit, in metres, and the number of cells crossed
includes the first and the last cell. The face the ray came in through is never an exit;
``t`` never decreases along a ray. A ray that finds no exit (a degenerate cell), that crosses
:data:`MAX_STALLED` cells in a row without advancing (cycling between non-convex cells,
where the plane-based exit can point back), or that is still marching after ``max_steps``
cells is *lost*, so a damaged or non-convex mesh cannot loop forever.

:func:`march` goes on to the boundary (the width of a passage, the cells entered across
it); :func:`cells_within` stops at a distance of its own per ray (the boundary-layer
thickness) and weighs each cell by the length of the ray inside it over the cell's depth
along the ray (see :class:`Crossing`): a measure of resolution along the wall normal
through any cell type, tetrahedra and triangles included.

All rays march in lock step: one numpy step per cell crossed, over every ray still active
(and over the face slots of a cell, as many as the cell with the most faces has), never a
Python loop over rays or cells. On large meshes the compiled kernel
:mod:`caselint.mesh.kernels.ray_march` marches each ray on its own instead, with the same
arithmetic (equal results; :mod:`caselint.mesh.kernels` decides which runs).
Cells are taken as convex with planar faces; on warped cells the exit is the plane-based
estimate, which is what a cell-by-cell count needs.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.kernels import compiled, in_threads
from caselint.mesh.geometry import chunks
from caselint.mesh.topology import cell_point_table

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: A ray that ended on a wall face: a gap.
WALL = 0
#: A ray that ended on a boundary that is not a wall (inlet, outlet, symmetry, ...): no gap.
OPEN = 1
#: A ray stopped by a degenerate cell or by the step limit: neither.
LOST = 2

#: Default limit on the cells one ray may cross.
MAX_STEPS = 10_000
#: Cells a ray may cross in a row without advancing (through an edge or corner shared by
#: many cells it advances by 0 legitimately) before it counts as lost in a cycle.
MAX_STALLED = 64
#: Rays marched together: one numpy step serves them all, so the more the better, up to
#: the memory of their per-step temporaries (about 250 bytes a ray).
RAY_CHUNK = 262_144
# A face counts as an exit only if the ray is not parallel to it: d . n > this (n unit).
_PARALLEL = 1e-9


@dataclass(frozen=True)
class RayHits:
    """One ray per start face: where it ended, how far it went and how many cells it crossed.

    ``width`` (m) is the distance along the ray to the plane of the face it ended on (0 for
    lost rays); ``cells`` counts the cells it crossed, first and last included.
    """

    start_face: np.ndarray     # (R,) int64 face ids the rays start from
    hit_face: np.ndarray       # (R,) int64 boundary face reached, -1 when lost
    status: np.ndarray         # (R,) int8 WALL, OPEN or LOST
    width: np.ndarray          # (R,) float64, m
    cells: np.ndarray          # (R,) int64
    origin: np.ndarray         # (R, 3) start points (face centroids), m
    direction: np.ndarray      # (R, 3) unit directions

    @property
    def n_rays(self) -> int:
        """Number of rays."""
        return int(self.start_face.size)

    def midpoint(self, ray: int) -> np.ndarray:
        """The point halfway along ray ``ray`` (m)."""
        return self.origin[ray] + 0.5 * self.width[ray] * self.direction[ray]


def cell_face_table(mesh: "Mesh") -> np.ndarray:
    """(C, K) face ids of each cell, K the most faces of any cell, padded with -1 (cached)."""
    return mesh.cell_face_table()


def march(mesh: "Mesh", start_faces: np.ndarray, wall_face: np.ndarray,
          max_steps: int = MAX_STEPS) -> RayHits:
    """Cast one ray inward from each of ``start_faces`` (boundary faces) and march it.

    ``wall_face`` is an (F,) bool mask of the faces that end a ray as a gap (the walls);
    every other boundary face ends it without one.
    """
    if max_steps < 1:
        raise ValueError(f"max_steps must be at least 1, got {max_steps}")
    start_faces = np.asarray(start_faces, dtype=np.int64)
    wall = _wall_mask(mesh, wall_face)
    if mesh.walks is not None:              # partition by partition (Mesh.walks)
        return mesh.walks.march(start_faces, wall, max_steps)
    origin, direction, ok = inward(mesh, start_faces)
    state = RayState.at_start(mesh.owner, start_faces, 1)
    hit, status, width, cells, _ = march_on(mesh, origin, direction, ok, state, wall,
                                            max_steps)
    return RayHits(start_faces, hit, status, width, cells, origin, direction)


@dataclass(frozen=True, eq=False)
class RayState:
    """Where each of a set of rays is on its way: the cell it is in (to be crossed next),
    the face it came in through, the distance marched (m), the cells counted so far (the
    count of :func:`march`, int64; the weighted sum of :func:`cells_within`, float64), the
    cells crossed in a row without advancing, and the steps taken.

    A march resumed from a state (:func:`march_on`, :func:`within_on`) goes on exactly as
    the march that left it would have; a ray that enters a cell marked ``foreign`` stops
    there with its state written back (a partition hands it to the one owning that cell,
    :mod:`caselint.partition.exchange`).
    """

    cell: np.ndarray
    entry: np.ndarray
    t_now: np.ndarray
    counted: np.ndarray
    stuck: np.ndarray
    steps: np.ndarray

    @classmethod
    def at_start(cls, owner: np.ndarray, start_faces: np.ndarray, counted) -> "RayState":
        """Rays about to enter the owner cells of boundary ``start_faces``, having counted
        ``counted`` (1 for :func:`march`, which counts the first cell on entry; 0.0 for
        :func:`cells_within`)."""
        n = len(start_faces)
        return cls(owner[start_faces].astype(np.int64), np.array(start_faces, dtype=np.int64),
                   np.zeros(n), np.full(n, counted), np.zeros(n, dtype=np.int64),
                   np.zeros(n, dtype=np.int64))

    def arrays(self, part: slice = slice(None)) -> tuple[np.ndarray, ...]:
        """The state's arrays in the order of the kernels' arguments, for the rays ``part``
        (views: what a kernel writes into them lands in the state)."""
        return (self.cell[part], self.entry[part], self.t_now[part], self.counted[part],
                self.stuck[part], self.steps[part])


def march_on(mesh: "Mesh", origin: np.ndarray, direction: np.ndarray, active: np.ndarray,
             state: RayState, wall: np.ndarray, max_steps: int = MAX_STEPS,
             foreign: np.ndarray | None = None):
    """March rays on from ``state`` (updated in place) until each ends, as :func:`march`
    does; ``active`` False: a ray without direction, left lost. With ``foreign`` (C,) bool,
    a ray entering a foreign cell stops there, its state kept (``moved``).

    :returns: per ray the hit face, status, width, cells crossed (see :class:`RayHits`)
        and ``moved``.
    """
    n = len(active)
    hit, status = np.full(n, -1, dtype=np.int64), np.full(n, LOST, dtype=np.int8)
    width, cells = np.zeros(n), np.zeros(n, dtype=np.int64)
    moved = np.zeros(n, dtype=bool)
    if n == 0:
        return hit, status, width, cells, moved
    kernel = compiled("ray_march", mesh.n_cells)
    if kernel is not None:
        cf = mesh.cell_faces
        stop = _NONE_FOREIGN if foreign is None else foreign
        parts = in_threads(lambda p: kernel.march(
            cf.offsets, cf.faces, mesh.owner, mesh.neighbour, mesh.face_area_vectors,
            mesh.face_centroids, wall, stop, origin[p], direction[p], active[p],
            *state.arrays(p), max_steps, MAX_STALLED, _PARALLEL), n, waits=mesh.on_disk)
        for k, values in enumerate(zip(*parts)):
            (hit, status, width, cells, moved)[k][:] = np.concatenate(values)
        return hit, status, width, cells, moved
    faces = _FaceData(mesh, wall)
    ends = (hit, status, width, cells, moved)
    for sl in chunks(n, RAY_CHUNK):
        _march_chunk(faces, ends, origin, direction, state,
                     np.arange(sl.start, sl.stop)[active[sl]], max_steps, foreign)
    return hit, status, width, cells, moved


#: ``foreign`` for the compiled kernels when no cell is foreign (a whole mesh).
_NONE_FOREIGN = np.zeros(0, dtype=bool)


def inward(mesh: "Mesh", start_faces: np.ndarray):
    """Origins (face centroids), unit inward normals and whether each face has one (a
    collapsed face has none: its ray is lost) of the rays from boundary ``start_faces``."""
    if start_faces.size and np.any(mesh.neighbour[start_faces] >= 0):
        raise ValueError("rays start from boundary faces only")
    n = start_faces.size
    origin = np.asarray(mesh.face_centroids[start_faces], dtype=np.float64).reshape(n, 3)
    area = mesh.face_area_vectors[start_faces]
    norm = np.sqrt((area**2).sum(axis=1))
    ok = norm > 0
    direction = np.zeros((n, 3))
    direction[ok] = -area[ok] / norm[ok, None]
    return origin, direction, ok


class _FaceData:
    """What the marching loop reads, laid out so that one step touches few cache lines.

    The loop visits cells in no particular memory order, so every gather is a cache miss:
    each face's plane is one row ``(nx, ny, nz, c)`` and each cell's row of the per-slot
    tables (face, sign, cell across) is contiguous.
    """

    def __init__(self, mesh: "Mesh", wall: np.ndarray) -> None:
        self.table = cell_face_table(mesh)
        self.owner = mesh.owner
        self.wall = wall
        self.plane = face_planes(mesh)
        self.sign, self.across = _slot_tables(mesh, self.table)


def _wall_mask(mesh: "Mesh", wall_face: np.ndarray) -> np.ndarray:
    wall = np.asarray(wall_face, dtype=bool)
    if wall.shape != mesh.owner.shape:
        raise ValueError(f"wall_face must have one entry per face ({mesh.owner.size}), "
                         f"got shape {wall.shape}")
    return wall


def face_planes(mesh: "Mesh") -> np.ndarray:
    """(F, 4) plane ``n . x = c`` of every face, n the unit normal out of the owner; a
    collapsed face gets n = 0 and is never an exit."""
    s, xf = mesh.face_area_vectors, mesh.face_centroids
    plane = np.empty((mesh.n_faces, 4))
    for sl in chunks(mesh.n_faces):
        sv = s[sl]
        norm = np.sqrt(sv[:, 0] * sv[:, 0] + sv[:, 1] * sv[:, 1] + sv[:, 2] * sv[:, 2])
        unit = sv / np.where(norm > 0, norm, 1.0)[:, None]
        plane[sl, :3] = unit
        plane[sl, 3] = unit[:, 0] * xf[sl, 0] + unit[:, 1] * xf[sl, 1] + unit[:, 2] * xf[sl, 2]
    return plane


def _slot_tables(mesh: "Mesh", table: np.ndarray):
    """Per cell slot the face's orientation sign and the cell across it.

    The sign is +1 where the cell owns the face (its normal points out of the cell), -1
    where it is the neighbour, 0 on padding; the cell across is -1 on boundary faces.
    """
    owner, neighbour = mesh.owner, mesh.neighbour
    sign = np.zeros(table.shape, dtype=np.int8)
    across = np.full(table.shape, -1, dtype=table.dtype)
    for sl in chunks(len(table)):
        f = table[sl]
        valid = f >= 0
        fs = np.where(valid, f, 0)
        own = owner[fs] == np.arange(sl.start, sl.stop)[:, None]
        sign[sl] = np.where(valid, np.where(own, 1, -1), 0)
        across[sl] = np.where(valid, np.where(own, neighbour[fs], owner[fs]), -1)
    return sign, across


def _march_chunk(fd: _FaceData, ends: tuple, origin: np.ndarray, direction: np.ndarray,
                 state: RayState, rays: np.ndarray, max_steps: int,
                 foreign: np.ndarray | None) -> None:
    """March the rays ``rays`` (indices into ``state`` and the arrays of ``ends``: hit
    face, status, width, cells, moved) in lock step until they all stop."""
    hit_face, status, width, cells, moved = ends
    o, d = origin[rays], direction[rays]
    count, stuck = state.counted[rays], state.stuck[rays]
    idx = np.arange(rays.size)          # positions (in this chunk) of the active rays
    # per active ray: cell, entry face, distance marched, steps it may still take
    cell, entry, t_now = state.cell[rays], state.entry[rays], state.t_now[rays]
    left = max_steps - state.steps[rays]
    while idx.size:
        if left.min() <= 0:             # cells fully crossed before the step limit; LOST
            out = left <= 0
            cells[rays[idx[out]]] = count[idx[out]] - 1
            idx, cell, entry, t_now, left = (v[~out] for v in (idx, cell, entry, t_now, left))
            continue
        t_exit, f_exit, nxt, lost = _advance(fd, cell, entry, o, d, t_now, stuck, idx)
        end = ~lost & (nxt < 0)
        ray = rays[idx]
        status[ray[end]] = np.where(fd.wall[f_exit[end]], WALL, OPEN)
        hit_face[ray[end]] = f_exit[end]
        width[ray[end]] = t_exit[end]
        cells[ray[end]] = count[idx[end]]
        cells[ray[lost]] = count[idx[lost]]
        go = ~lost & ~end
        idx, cell, entry, t_now, left = idx[go], nxt[go], f_exit[go], t_exit[go], left[go] - 1
        count[idx] += 1
        if foreign is not None:
            idx, cell, entry, t_now, left = _hand_over(
                state, rays, (idx, cell, entry, t_now, left), count, stuck, max_steps,
                foreign, moved)


def _hand_over(state: RayState, rays, active: tuple, counted, stuck, max_steps: int,
               foreign, moved) -> tuple:
    """Write the state of the active rays that entered a foreign cell back into ``state``
    and mark them ``moved``; ``active`` (positions, cell, entry, distance, steps left) of
    the others. ``counted`` None: the rays count in ``state`` already."""
    idx, cell, entry, t_now, left = active
    away = foreign[cell]
    if not away.any():
        return active
    gone, ray = idx[away], rays[idx[away]]
    moved[ray] = True
    state.cell[ray], state.entry[ray], state.t_now[ray] = cell[away], entry[away], t_now[away]
    state.stuck[ray], state.steps[ray] = stuck[gone], max_steps - left[away]
    if counted is not None:
        state.counted[ray] = counted[gone]
    return tuple(v[~away] for v in active)


@dataclass(frozen=True)
class Crossing:
    """Cells a ray from each start face crosses within its own distance of the wall.

    ``cells`` adds up, over the cells the ray crosses within ``limit`` (m) of its origin,
    the length of the ray inside each cell (up to the limit) over the cell's *depth* along
    the ray, the spread of its vertices along it. A layer cell crossed along its normal
    counts 1, the cell the limit cuts the part of its depth before the limit (3.4: three
    layers and four tenths of the fourth), and a cell the ray only clips near a vertex or
    an edge little: a count that does not jump when a ray grazes a vertex, as a count of
    the cells entered would, by a whole cell for each cell touched there. ``reached`` (m) is
    how far the count went: the limit, or less where the ray ended on the boundary (up
    to which every cell it crossed counts) or was lost first (``short`` True for both).
    """

    start_face: np.ndarray     # (R,) int64
    limit: np.ndarray          # (R,) float64, m
    cells: np.ndarray          # (R,) float64
    reached: np.ndarray        # (R,) float64, m
    short: np.ndarray          # (R,) bool


def cells_within(mesh: "Mesh", start_faces: np.ndarray, limit_m,
                 max_steps: int = MAX_STEPS) -> Crossing:
    """Cast one ray inward from each of ``start_faces`` (boundary faces) and count the
    cells it crosses within ``limit_m`` (one distance, or one per face) of the face."""
    start_faces = np.asarray(start_faces, dtype=np.int64)
    n = start_faces.size
    limit = np.array(np.broadcast_to(np.asarray(limit_m, dtype=np.float64), (n,)))
    if not np.all(limit >= 0):
        raise ValueError("limit_m must be at least 0 (and not NaN)")
    if mesh.walks is not None:              # partition by partition (Mesh.walks)
        return mesh.walks.cells_within(start_faces, limit, max_steps)
    origin, direction, ok = inward(mesh, start_faces)
    state = RayState.at_start(mesh.owner, start_faces, 0.0)
    reached, short, _ = within_on(mesh, origin, direction, ok, limit, state, max_steps)
    return Crossing(start_faces, limit, state.counted, reached, short)


def within_on(mesh: "Mesh", origin: np.ndarray, direction: np.ndarray, active: np.ndarray,
              limit: np.ndarray, state: RayState, max_steps: int = MAX_STEPS,
              foreign: np.ndarray | None = None):
    """Count on from ``state`` (updated in place; ``state.counted`` the weighted cells)
    the cells rays cross within ``limit`` (m), as :func:`cells_within` does; ``active``
    and ``foreign`` as for :func:`march_on`.

    :returns: per ray how far the count went, whether it stopped short of its limit
        (see :class:`Crossing`) and ``moved``.
    """
    n = len(active)
    reached, short, moved = np.zeros(n), limit > 0, np.zeros(n, dtype=bool)
    if n == 0:
        return reached, short, moved
    kernel = compiled("ray_march", mesh.n_cells)
    if kernel is not None:
        cf = mesh.cell_faces
        stop = _NONE_FOREIGN if foreign is None else foreign
        parts = in_threads(lambda p: kernel.march_within(
            cf.offsets, cf.faces, mesh.owner, mesh.neighbour, mesh.face_area_vectors,
            mesh.face_centroids, stop, origin[p], direction[p], active[p], limit[p],
            *state.arrays(p), mesh.data.face_offsets, mesh.data.face_points, mesh.points,
            max_steps, MAX_STALLED, _PARALLEL), n, waits=mesh.on_disk)
        for k, values in enumerate(zip(*parts)):
            (reached, short, moved)[k][:] = np.concatenate(values)
        return reached, short, moved
    faces = _FaceData(mesh, np.zeros(mesh.n_faces, dtype=bool))
    for sl in chunks(n, RAY_CHUNK):
        rays = np.arange(sl.start, sl.stop)
        _within_chunk(mesh, faces, (reached, short, moved), origin, direction, limit, state,
                      rays[active[sl] & (limit[sl] > 0)], max_steps, foreign)
    return reached, short, moved


def _depths(mesh: "Mesh", cells: np.ndarray, o: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Spread of each cell's vertices along its ray's direction ``d`` (m), projections
    summed x + y + z as :mod:`caselint.mesh.kernels.ray_march` does."""
    rel = mesh.points[cell_point_table(mesh.data, mesh.cell_faces, cells)] - o[:, None, :]
    along = rel[..., 0] * d[:, 0:1] + rel[..., 1] * d[:, 1:2] + rel[..., 2] * d[:, 2:3]
    return along.max(axis=1) - along.min(axis=1)


def _within_chunk(mesh: "Mesh", fd: _FaceData, ends: tuple, origin: np.ndarray,
                  direction: np.ndarray, limit_all: np.ndarray, state: RayState,
                  rays: np.ndarray, max_steps: int, foreign: np.ndarray | None) -> None:
    """Count the cells the rays ``rays`` cross within their limits, in lock step, into
    ``state.counted``; ``ends``: how far each got, short, moved."""
    reached, short, moved = ends
    o, d, limit = origin[rays], direction[rays], limit_all[rays]
    stuck = state.stuck[rays]
    counted = state.counted                # added to in place, ray by ray
    idx = np.arange(rays.size)          # positions (in this chunk) of the active rays
    cell, entry, t_now = state.cell[rays], state.entry[rays], state.t_now[rays]
    left = max_steps - state.steps[rays]
    while idx.size:
        if left.min() <= 0:             # the step limit: cells crossed so far
            out = left <= 0
            reached[rays[idx[out]]] = t_now[out]
            idx, cell, entry, t_now, left = (v[~out] for v in (idx, cell, entry, t_now, left))
            continue
        t_exit, f_exit, nxt, lost = _advance(fd, cell, entry, o, d, t_now, stuck, idx)
        ray, lim = rays[idx], limit[idx]
        reached[ray[lost]] = t_now[lost]
        cut = ~lost & (t_exit >= lim)                   # the limit falls in this cell
        inside = np.where(cut, lim, t_exit) - t_now
        depth = _depths(mesh, cell, o[idx], d[idx])
        share = np.where(depth > 0, inside / np.where(depth > 0, depth, 1.0), 0.0)
        counted[ray[~lost]] += share[~lost]
        reached[ray[cut]] = lim[cut]
        short[ray[cut]] = False
        crossed = ~lost & ~cut
        ends = crossed & (nxt < 0)                      # on the boundary before the limit
        reached[ray[ends]] = t_exit[ends]
        go = crossed & ~ends
        idx, cell, entry, t_now, left = idx[go], nxt[go], f_exit[go], t_exit[go], left[go] - 1
        if foreign is not None:
            idx, cell, entry, t_now, left = _hand_over(
                state, rays, (idx, cell, entry, t_now, left), None, stuck, max_steps,
                foreign, moved)


def _advance(fd: _FaceData, cell: np.ndarray, entry: np.ndarray, o: np.ndarray, d: np.ndarray,
             t_now: np.ndarray, stuck: np.ndarray, idx: np.ndarray):
    """One step of the active rays ``idx``: the exit parameter (never behind ``t_now``), face
    and cell beyond, and which rays are lost: no exit, or no advance for more than
    :data:`MAX_STALLED` cells in a row (``stuck`` counts them)."""
    t_exit, f_exit, nxt = _exit_faces(fd, cell, entry, o[idx], d[idx])
    # a ray never goes back; one that stops advancing (cycling between non-convex cells)
    # is lost after MAX_STALLED cells
    stuck[idx] = np.where(t_exit <= t_now, stuck[idx] + 1, 0)
    lost = (f_exit < 0) | (stuck[idx] > MAX_STALLED)
    return np.maximum(t_exit, t_now), f_exit, nxt, lost


def _exit_faces(fd: _FaceData, cell: np.ndarray, entry: np.ndarray, o, d):
    """Parameter and id of the face each ray leaves its cell through (id -1 if none), and
    the cell beyond it (-1 on the boundary); all face slots of a cell at once."""
    # np.take gathers rows several times faster than fancy indexing (numpy 1.2x-2.x)
    faces = np.take(fd.table, cell, axis=0)                  # (m, K)
    present = (faces >= 0) & (faces != entry[:, None])
    p = np.take(fd.plane, np.where(present, faces, 0).ravel(), axis=0).reshape(*faces.shape, 4)
    dn = p[..., 0] * d[:, 0:1] + p[..., 1] * d[:, 1:2] + p[..., 2] * d[:, 2:3]
    # leaving this cell: along the normal if it owns the face, against it otherwise
    leaving = present & (dn * np.take(fd.sign, cell, axis=0) > _PARALLEL)
    on = p[..., 0] * o[:, 0:1] + p[..., 1] * o[:, 1:2] + p[..., 2] * o[:, 2:3]
    t = np.where(leaving, (p[..., 3] - on) / np.where(leaving, dn, 1.0), np.inf)
    k = np.argmin(t, axis=1)           # the first slot among equals, as a strict < scan
    rows = np.arange(cell.size)
    best_t = t[rows, k]
    found = best_t < np.inf
    best_f = np.where(found, faces[rows, k], -1).astype(np.int64)
    nxt = np.where(found, np.take(fd.across, cell * fd.across.shape[1] + k), -1).astype(np.int64)
    return best_t, best_f, nxt


def hit_angles_deg(mesh: "Mesh", hits: RayHits) -> np.ndarray:
    """(R,) angle (deg) between each ray and the normal of the face it ended on; 90 if lost.

    0 is a head-on hit, as across a channel; near 90 the ray grazes the far wall, as in a
    corner whose walls meet at an acute angle.
    """
    out = np.full(hits.n_rays, 90.0)
    ended = np.flatnonzero(hits.hit_face >= 0)
    s = mesh.face_area_vectors[hits.hit_face[ended]]
    d = hits.direction[ended]
    # S of a boundary face points out of the mesh, so an arriving ray has d . S > 0;
    # atan2 keeps small angles precise (see the design notes)
    dot = (s * d).sum(axis=1)
    cross = np.sqrt((np.cross(d, s) ** 2).sum(axis=1))
    out[ended] = np.minimum(np.degrees(np.arctan2(cross, dot)), 90.0)
    return out


def wall_rays(mesh: "Mesh", wall_groups: tuple[str, ...], max_steps: int = MAX_STEPS) -> RayHits:
    """Rays from every face of the named wall groups, ending on any of them (cached on the mesh)."""
    names = tuple(sorted(set(wall_groups)))

    def build() -> RayHits:
        index = [mesh.group_names.index(g) for g in names if g in mesh.group_names]
        wall = np.isin(mesh.face_group, np.asarray(index, dtype=np.int32)) & (mesh.neighbour < 0)
        return march(mesh, np.flatnonzero(wall), wall, max_steps)

    return mesh.cached(f"rays.walls:{'|'.join(names)}:{max_steps}", build)
