"""Plane cuts through cells: the polygon each cell shows on a plane, for pictures of where
the problems are.

For every cell given, the edges of its faces are intersected with the plane ``n . (x - o)
= 0``; the crossing points (and points lying on the plane) are the corners of the cell's
cut, ordered by their angle about their mean in the plane's own axes (u, v). That is the
exact cut of a convex cell with planar faces; a non-convex cell is drawn as the convex
polygon of its crossing points. Cells the plane misses, or touches in fewer than three
distinct points, have no cut. 2-D meshes need no cut: their cells are polygons in the
x-y plane already and :func:`plane_cut` returns them.

Vectorised over cells with padded tables (a face padded by repeating its last point gives
a zero-length edge, which never crosses the plane), never a loop over cells.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh


@dataclass(frozen=True, eq=False)
class Cut:
    """Polygons of the cells a plane cuts: cell ``cells[i]`` has the corners
    ``points[offsets[i]:offsets[i + 1]]`` (in-plane coordinates u, v, metres from
    ``origin``); ``u`` and ``v`` are the plane's unit axes in space."""

    cells: np.ndarray
    offsets: np.ndarray
    points: np.ndarray
    origin: np.ndarray
    u: np.ndarray
    v: np.ndarray

    def polygon(self, i: int) -> np.ndarray:
        """(k, 2) corners of the i-th cut polygon."""
        return self.points[self.offsets[i]:self.offsets[i + 1]]

    def to_space(self, uv: np.ndarray) -> np.ndarray:
        """In-plane coordinates back to points in space (m)."""
        uv = np.asarray(uv, dtype=np.float64)
        return self.origin + uv[..., :1] * self.u + uv[..., 1:2] * self.v

    def areas(self) -> np.ndarray:
        """(n,) area of each cut polygon (shoelace formula)."""
        p = self.points
        nxt = np.arange(len(p)) + 1
        nxt[self.offsets[1:] - 1] = self.offsets[:-1]
        cross = p[:, 0] * p[nxt, 1] - p[nxt, 0] * p[:, 1]
        if not len(self.cells):
            return np.zeros(0)
        return 0.5 * np.abs(np.add.reduceat(cross, self.offsets[:-1]))


def plane_axes(normal) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Unit normal n and in-plane axes u, v (right-handed: u x v = n); u lies in the x-y
    plane unless the normal is vertical, so a horizontal axis reads left to right."""
    n = np.asarray(normal, dtype=np.float64)
    norm = float(np.linalg.norm(n))
    if not norm > 0:
        raise ValueError(f"a plane needs a non-zero normal, got {normal!r}")
    n = n / norm
    up = np.array([0.0, 0.0, 1.0]) if abs(n[2]) < 0.9 else np.array([0.0, 1.0, 0.0])
    u = np.cross(up, n)
    u /= np.linalg.norm(u)
    return n, u, np.cross(n, u)


def coordinate_axes(axis: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Normal along coordinate ``axis`` and in-plane axes read as a drawing reads them:
    x-normal (y, z), y-normal (x, z), z-normal (x, y)."""
    eye = np.eye(3)
    u, v = {0: (1, 2), 1: (0, 2), 2: (0, 1)}[axis]
    return eye[axis], eye[u], eye[v]


def plane_cut(mesh: "Mesh", origin, normal, cells: np.ndarray | None = None,
              chunk: int = 4096, axes: tuple | None = None) -> Cut:
    """The cut polygons of ``cells`` (all when None) by the plane through ``origin`` with
    ``normal`` (see the module docstring); ``axes`` (n, u, v) replace the plane's own
    (:func:`plane_axes`). In 2-D the plane is the x-y plane itself."""
    origin = np.asarray(origin, dtype=np.float64)
    if mesh.dim == 2:                        # in-plane coordinates are x and y themselves
        origin = np.zeros(3)
        n, u, v = coordinate_axes(2)
    elif axes is not None:
        n, u, v = (np.asarray(a, dtype=np.float64) for a in axes)
    else:
        n, u, v = plane_axes(normal)
    cells = np.arange(mesh.n_cells) if cells is None else np.asarray(cells, dtype=np.int64)
    parts = [_cut_chunk(mesh, cells[lo:lo + chunk], origin, n, u, v)
             for lo in range(0, len(cells), chunk)]
    kept = [p[0] for p in parts]
    sizes = [p[1] for p in parts]
    pts = [p[2] for p in parts]
    cut_cells = np.concatenate(kept) if kept else np.zeros(0, dtype=np.int64)
    size = np.concatenate(sizes) if sizes else np.zeros(0, dtype=np.int64)
    offsets = np.concatenate([[0], np.cumsum(size)]).astype(np.int64)
    points = np.concatenate(pts) if pts else np.zeros((0, 2))
    return Cut(cut_cells, offsets, points, origin, u, v)


def face_traces(mesh: "Mesh", faces: np.ndarray, cut: Cut) -> list[np.ndarray]:
    """The segments (2, 2) in the cut's in-plane coordinates where ``faces`` cross its
    plane (3-D), or the edges themselves (2-D); faces the plane misses give none."""
    faces = np.asarray(faces, dtype=np.int64)
    if not len(faces):
        return []
    pts = mesh.face_point_table(faces)                                   # (m, V)
    xyz = mesh.points - cut.origin
    if mesh.dim == 2:
        ends = xyz[pts[:, [0, -1]]]
        return [np.column_stack([e @ cut.u, e @ cut.v]) for e in ends]
    n = np.cross(cut.u, cut.v)
    a, b = pts, np.roll(pts, -1, axis=1)
    da, db = xyz[a] @ n, xyz[b] @ n
    crossing = da * db < 0
    t = np.where(crossing, da / np.where(crossing, da - db, 1.0), 0.0)
    p = xyz[a] + t[..., None] * (xyz[b] - xyz[a])
    out = []
    for row in np.flatnonzero(crossing.sum(axis=1) >= 2):   # a few wall faces near the cut
        q = p[row][crossing[row]][:2]
        out.append(np.column_stack([q @ cut.u, q @ cut.v]))
    return out


def _cut_chunk(mesh: "Mesh", cells: np.ndarray, origin, n, u, v):
    """(cells kept, corner count per cell, corners in u, v) for one chunk of cells."""
    faces = np.take(mesh.cell_face_table(), cells, axis=0)              # (m, K)
    m, k = faces.shape
    pts = mesh.face_point_table(np.where(faces >= 0, faces, 0).ravel()).reshape(m, k, -1)
    pts = np.where((faces >= 0)[:, :, None], pts, pts[:, :1, :1])       # pad: a dead edge
    a, b = pts, np.roll(pts, -1, axis=2)                                # edges a -> b
    xyz = mesh.points - origin
    da, db = xyz[a] @ n, xyz[b] @ n
    if mesh.dim == 2:                        # the cell's own corners: every edge start
        hit = faces[:, :, None] >= 0
        hit = np.broadcast_to(hit, a.shape)
        t = np.zeros(a.shape)
    else:
        crossing = (da * db < 0)
        on_plane = (da == 0) & ~crossing
        hit = crossing | on_plane
        t = np.where(crossing, da / np.where(crossing, da - db, 1.0), 0.0)
    p = xyz[a] + t[..., None] * (xyz[b] - xyz[a])                       # (m, K, V, 3)
    owner = np.broadcast_to(np.arange(m)[:, None, None], a.shape)[hit]
    q = p[hit]
    if not len(q):
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64), np.zeros((0, 2))
    uv = np.column_stack([q @ u, q @ v])
    centre = np.zeros((m, 2))
    counts = np.bincount(owner, minlength=m).astype(np.float64)
    for axis in range(2):
        centre[:, axis] = np.bincount(owner, weights=uv[:, axis], minlength=m) / np.maximum(
            counts, 1.0)
    rel = uv - centre[owner]
    angle = np.arctan2(rel[:, 1], rel[:, 0])
    # the same point comes from both faces at an edge: round to drop repeats per cell
    scale = max(float(np.abs(uv).max()), 1e-30)
    key = np.round(uv / scale, 9)
    order = np.lexsort((key[:, 1], key[:, 0], angle, owner))
    owner, uv, key, angle = owner[order], uv[order], key[order], angle[order]
    new = np.ones(len(owner), dtype=bool)
    new[1:] = (owner[1:] != owner[:-1]) | np.any(key[1:] != key[:-1], axis=1)
    owner, uv = owner[new], uv[new]
    size = np.bincount(owner, minlength=m)
    keep = size >= 3
    mask = keep[owner]
    return cells[keep], size[keep], uv[mask]
