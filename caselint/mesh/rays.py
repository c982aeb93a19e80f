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
    n = start_faces.size
    origin, direction, ok = _inward(mesh, start_faces)
    out = RayHits(
        start_face=start_faces,
        hit_face=np.full(n, -1, dtype=np.int64),
        status=np.full(n, LOST, dtype=np.int8),
        width=np.zeros(n),
        cells=np.zeros(n, dtype=np.int64),
        origin=origin,
        direction=direction,
    )
    if n == 0:
        return out
    wall = _wall_mask(mesh, wall_face)
    kernel = compiled("ray_march", mesh.n_cells)
    if kernel is not None:
        cf = mesh.cell_faces
        parts = in_threads(lambda p: kernel.march(
            cf.offsets, cf.faces, mesh.owner, mesh.neighbour, mesh.face_area_vectors,
            mesh.face_centroids, wall, start_faces[p],
            out.origin[p], out.direction[p], ok[p], max_steps, MAX_STALLED, _PARALLEL), n)
        for k, values in enumerate(zip(*parts)):
            (out.hit_face, out.status, out.width, out.cells)[k][:] = np.concatenate(values)
        return out
    faces = _FaceData(mesh, wall)
    for sl in chunks(n, RAY_CHUNK):
        _march_chunk(faces, out, np.arange(sl.start, sl.stop)[ok[sl]], max_steps)
    return out


def _inward(mesh: "Mesh", start_faces: np.ndarray):
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


def _march_chunk(fd: _FaceData, out: RayHits, rays: np.ndarray, max_steps: int) -> None:
    """March the rays ``rays`` (indices into ``out``) in lock step until they all stop."""
    o = out.origin[rays]
    d = out.direction[rays]
    entry = out.start_face[rays]
    cell = fd.owner[entry]
    t_now = np.zeros(rays.size)
    count = np.ones(rays.size, dtype=np.int64)
    stuck = np.zeros(rays.size, dtype=np.int64)
    idx = np.arange(rays.size)          # positions (in this chunk) of the active rays
    for _ in range(max_steps):
        if idx.size == 0:
            return
        t_exit, f_exit, nxt, lost = _advance(fd, cell, entry, o, d, t_now, stuck, idx)
        ends = ~lost & (nxt < 0)
        ray = rays[idx]
        out.status[ray[ends]] = np.where(fd.wall[f_exit[ends]], WALL, OPEN)
        out.hit_face[ray[ends]] = f_exit[ends]
        out.width[ray[ends]] = t_exit[ends]
        out.cells[ray[ends]] = count[idx[ends]]
        out.cells[ray[lost]] = count[idx[lost]]
        go = ~lost & ~ends
        idx = idx[go]
        cell, entry, t_now = nxt[go], f_exit[go], t_exit[go]
        count[idx] += 1
    out.cells[rays[idx]] = count[idx] - 1   # cells fully crossed before the step limit; LOST


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
    origin, direction, ok = _inward(mesh, start_faces)
    out = Crossing(start_faces, limit, np.zeros(n), np.zeros(n), limit > 0)
    if n == 0:
        return out
    kernel = compiled("ray_march", mesh.n_cells)
    if kernel is not None:
        cf = mesh.cell_faces
        parts = in_threads(lambda p: kernel.march_within(
            cf.offsets, cf.faces, mesh.owner, mesh.neighbour, mesh.face_area_vectors,
            mesh.face_centroids, start_faces[p],
            origin[p], direction[p], ok[p], limit[p], mesh.data.face_offsets,
            mesh.data.face_points, mesh.points, max_steps, MAX_STALLED, _PARALLEL), n)
        for k, values in enumerate(zip(*parts)):
            (out.cells, out.reached, out.short)[k][:] = np.concatenate(values)
        return out
    faces = _FaceData(mesh, np.zeros(mesh.n_faces, dtype=bool))
    for sl in chunks(n, RAY_CHUNK):
        rays = np.arange(sl.start, sl.stop)
        _within_chunk(mesh, faces, out, origin, direction, rays[ok[sl] & (limit[sl] > 0)],
                      max_steps)
    return out


def _depths(mesh: "Mesh", cells: np.ndarray, o: np.ndarray, d: np.ndarray) -> np.ndarray:
    """Spread of each cell's vertices along its ray's direction ``d`` (m), projections
    summed x + y + z as :mod:`caselint.mesh.kernels.ray_march` does."""
    rel = mesh.points[cell_point_table(mesh.data, mesh.cell_faces, cells)] - o[:, None, :]
    along = rel[..., 0] * d[:, 0:1] + rel[..., 1] * d[:, 1:2] + rel[..., 2] * d[:, 2:3]
    return along.max(axis=1) - along.min(axis=1)


def _within_chunk(mesh: "Mesh", fd: _FaceData, out: Crossing, origin: np.ndarray,
                  direction: np.ndarray, rays: np.ndarray, max_steps: int) -> None:
    """Count the cells the rays ``rays`` cross within their limits, in lock step."""
    o, d, limit = origin[rays], direction[rays], out.limit[rays]
    entry = out.start_face[rays]
    cell = fd.owner[entry]
    t_now = np.zeros(rays.size)
    stuck = np.zeros(rays.size, dtype=np.int64)
    idx = np.arange(rays.size)          # positions (in this chunk) of the active rays
    for _ in range(max_steps):
        if idx.size == 0:
            return
        t_exit, f_exit, nxt, lost = _advance(fd, cell, entry, o, d, t_now, stuck, idx)
        ray, lim = rays[idx], limit[idx]
        out.reached[ray[lost]] = t_now[lost]
        cut = ~lost & (t_exit >= lim)                   # the limit falls in this cell
        inside = np.where(cut, lim, t_exit) - t_now
        depth = _depths(mesh, cell, o[idx], d[idx])
        share = np.where(depth > 0, inside / np.where(depth > 0, depth, 1.0), 0.0)
        out.cells[ray[~lost]] += share[~lost]
        out.reached[ray[cut]] = lim[cut]
        out.short[ray[cut]] = False
        crossed = ~lost & ~cut
        ends = crossed & (nxt < 0)                      # on the boundary before the limit
        out.reached[ray[ends]] = t_exit[ends]
        go = crossed & ~ends
        idx = idx[go]
        cell, entry, t_now = nxt[go], f_exit[go], t_exit[go]
    out.reached[rays[idx]] = t_now                     # the step limit: cells crossed so far


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
