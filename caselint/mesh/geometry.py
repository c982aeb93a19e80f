"""Face area vectors and centroids, cell volumes and centroids, vectorised in chunks.

Faces (3-D): the area vector of a face (p0, p1, p2, p3) is half the cross product of its
diagonals, ``S = (p2 - p0) x (p3 - p1) / 2``. It is the vector area of any surface spanning
the face's edge loop, so a padded triangle (a, b, c, c) gets its exact area and the area
vectors of a closed cell sum to zero. The face centroid is the area-weighted centroid of
the fan of triangles about the vertex mean ``m``, each triangle weighted by its area
vector projected on ``S`` (exact for any planar face).

Cells: face-pyramid decomposition about the cell's vertex mean ``x0``,
``V = (1/3) sum_f S_f . (m_f - x0)``. With ``m_f`` the face vertex mean this is exactly the
volume of the polyhedron whose faces are fanned about their vertex means, which for a
hexahedron equals the volume of the trilinear cell (bilinear faces) and for wedges and
pyramids matches Verdict's decomposition about the quadrilateral face centres. It is
independent of ``x0`` (the area vectors of a cell sum to zero); ``x0`` only keeps the
arithmetic local. A tetrahedral split of a warped hexahedron would instead depend on the
chosen diagonals (the design notes measured up to 4e-5 relative). The cell centroid
weights each pyramid's centroid, ``x0 + 3/4 (x_f - x0)``, by its volume; where the volume
vanishes the vertex mean is used instead (never NaN).

2-D meshes (unit depth): a face is an edge (a, b) with ``S = (yb - ya, -(xb - xa), 0)``,
the cell "volume" is its area ``(1/2) sum_f S_f . (m_f - x0)``, and the pyramids are
triangles with centroids ``x0 + 2/3 (m_f - x0)``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.model import Mesh

#: Faces or cells per vectorised chunk: keeps temporaries small (see the design notes).
#: 16,384 keeps a chunk's temporaries (128 kB per array) in the L2 cache: on the 1M-cell
#: benchmark mesh geometry and metrics ran 20-30 % faster than with 262,144.
CHUNK = 16_384


@dataclass(frozen=True)
class Geometry:
    """Geometry of a mesh (see :class:`caselint.mesh.model.Mesh`)."""

    area_vectors: np.ndarray
    face_centroids: np.ndarray
    volumes: np.ndarray
    cell_centroids: np.ndarray
    vertex_means: np.ndarray


def chunks(n: int, size: int | None = None):
    """Slices covering ``range(n)`` in pieces of at most ``size`` (default :data:`CHUNK`,
    read at each call so that tests can shrink it)."""
    size = CHUNK if size is None else size
    for lo in range(0, n, size):
        yield slice(lo, min(lo + size, n))


def coordinate_columns(points: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Contiguous x, y, z arrays: gathers from them are faster than from (P, 3) rows."""
    return tuple(np.ascontiguousarray(points[:, k]) for k in range(3))  # type: ignore[return-value]


def vertex_means(mesh: "Mesh") -> np.ndarray:
    """(C, 3) mean of the vertices of each cell."""
    cols = coordinate_columns(mesh.points)
    out = np.empty((mesh.n_cells, 3))
    for block in mesh.cell_blocks:
        conn = block.connectivity
        for sl in chunks(len(conn)):
            rows = conn[sl]
            for k in range(3):
                out[block.start + sl.start : block.start + sl.stop, k] = cols[k][rows].mean(axis=1)
    return out


def _face_chunk_3d(cols, f):
    """Area vector, fan centroid and vertex mean of quadrilateral (or padded) faces."""
    X = [[c[f[:, i]] for c in cols] for i in range(4)]
    m = [(X[0][k] + X[1][k] + X[2][k] + X[3][k]) * 0.25 for k in range(3)]
    d1 = [X[2][k] - X[0][k] for k in range(3)]
    d2 = [X[3][k] - X[1][k] for k in range(3)]
    S = _cross(d1, d2, 0.5)
    r = [[X[i][k] - m[k] for k in range(3)] for i in range(4)]
    wsum = np.zeros_like(m[0])
    acc = [np.zeros_like(m[0]) for _ in range(3)]
    for i in range(4):
        a, b = r[i], r[(i + 1) % 4]
        s = _cross(a, b, 0.5)
        w = s[0] * S[0] + s[1] * S[1] + s[2] * S[2]
        wsum += w
        for k in range(3):
            acc[k] += w * (a[k] + b[k])
    ok = wsum > 0
    safe = np.where(ok, wsum, 1.0)
    centroid = [m[k] + np.where(ok, acc[k] / (3.0 * safe), 0.0) for k in range(3)]
    return S, centroid, m


def _face_chunk_2d(cols, f):
    """Outward normal times length, and midpoint, of edges in the x-y plane."""
    xa, ya = cols[0][f[:, 0]], cols[1][f[:, 0]]
    xb, yb = cols[0][f[:, 1]], cols[1][f[:, 1]]
    S = [yb - ya, xa - xb, np.zeros_like(xa)]
    mid = [(xa + xb) * 0.5, (ya + yb) * 0.5, np.zeros_like(xa)]
    return S, mid, mid


def _cross(a, b, scale=1.0):
    return [
        (a[1] * b[2] - a[2] * b[1]) * scale,
        (a[2] * b[0] - a[0] * b[2]) * scale,
        (a[0] * b[1] - a[1] * b[0]) * scale,
    ]


def compute_geometry(mesh: "Mesh") -> Geometry:
    """Face and cell geometry of ``mesh`` (see the module docstring for the formulas)."""
    cols = coordinate_columns(mesh.points)
    faces, owner, neighbour = mesh.faces, mesh.owner, mesh.neighbour
    n_faces, n_cells, dim = len(owner), mesh.n_cells, mesh.dim
    xbar = vertex_means(mesh)
    xb = coordinate_columns(xbar)
    area = np.empty((n_faces, 3))
    fcent = np.empty((n_faces, 3))
    # Per-cell sums of pyramid volume, volume x centroid offset, and |pyramid volume|.
    acc = np.zeros((5, n_cells))
    face_chunk = _face_chunk_3d if dim == 3 else _face_chunk_2d
    for sl in chunks(n_faces):
        S, xf, m = face_chunk(cols, faces[sl])
        for k in range(3):
            area[sl, k] = S[k]
            fcent[sl, k] = xf[k]
        own = owner[sl]
        _accumulate(acc, own, _pyramid_terms(S, xf, m, [c[own] for c in xb], dim), 1.0, True)
        nbr = neighbour[sl]
        inner = np.flatnonzero(nbr >= 0)
        if len(inner):
            nbr = nbr[inner]
            part = ([v[inner] for v in S], [v[inner] for v in xf], [v[inner] for v in m])
            _accumulate(acc, nbr, _pyramid_terms(*part, [c[nbr] for c in xb], dim), -1.0, True)
    # A neighbour listing its face the same way round as the owner (an orientation clash)
    # must see it with +S, not -S: undo the reversal for those faces.
    clash = mesh.clashing_faces
    if len(clash):
        S, xf, m = face_chunk(cols, faces[clash])
        nbr = neighbour[clash]
        _accumulate(acc, nbr, _pyramid_terms(S, xf, m, [c[nbr] for c in xb], dim), 2.0, False)
    volumes = acc[0]
    # Pyramids that cancel out (a collapsed cell) leave no usable centroid: use x0.
    good = np.abs(volumes) > 1e-12 * acc[4]
    frac = dim / (dim + 1.0)
    safe = np.where(good, volumes, 1.0)
    cent = np.empty((n_cells, 3))
    for k in range(3):
        cent[:, k] = xbar[:, k] + np.where(good, frac * acc[k + 1] / safe, 0.0)
    return Geometry(area, fcent, volumes, cent, xbar)


def _accumulate(acc: np.ndarray, cells: np.ndarray, terms, sign: float, magnitude: bool) -> None:
    """Add ``sign`` x the signed per-face terms to their cells (and |volume| if asked)."""
    # Faces come sorted by owner, so a chunk's owners span a short id range: one bincount
    # over that range. Neighbours are scattered over all cells; a bincount as long as the
    # mesh per chunk would make the pass quadratic (5M cells: seconds), so they are added
    # one by one (np.add.at, linear).
    lo, hi = int(cells.min()), int(cells.max()) + 1
    compact = hi - lo <= 4 * len(cells)
    local = cells - lo
    for j, term in enumerate(terms):
        if j == 4 and not magnitude:
            continue
        factor = sign if j < 4 else 1.0
        if compact:
            weight = np.bincount(local, weights=term, minlength=hi - lo)
            acc[j, lo:hi] += factor * weight if factor != 1.0 else weight
        else:
            np.add.at(acc[j], cells, factor * term if factor != 1.0 else term)


def _pyramid_terms(S, xf, m, x0, dim):
    """Pyramid volume, volume times centroid offset (x, y, z), and |volume|, per face."""
    v = (S[0] * (m[0] - x0[0]) + S[1] * (m[1] - x0[1]) + S[2] * (m[2] - x0[2])) / dim
    return [v, v * (xf[0] - x0[0]), v * (xf[1] - x0[1]), v * (xf[2] - x0[2]), np.abs(v)]
