"""Face area vectors and centroids, cell volumes and centroids, for any polygon and polyhedron.

Faces (3-D), a polygon x_0 .. x_{k-1} with vertex mean m (Moukalled, Mangani & Darwish,
*The Finite Volume Method in Computational Fluid Dynamics*, 2016, ch. 6; Jasak 1996): the
face is fanned into triangles (m, x_i, x_{i+1}) with area vectors
``s_i = (x_i - m) x (x_{i+1} - m) / 2``. The face area vector is ``S = sum_i s_i``: the vector
area of the edge loop, exact for any face and, for a quadrilateral, equal to half the cross
product of its diagonals; the area vectors of a closed cell sum to zero. The face centroid
is the centroid of the fan triangles, ``(m + x_i + x_{i+1}) / 3``, each weighted by its area
projected on S (``s_i . S``): exact for a planar face.

Cells: pyramids on the faces about an apex x0 inside the cell: the vertex mean of a cell
of known shape, else the mean of the cell's face vertex means (for tetrahedra, hexahedra
and wedges the two are the same point):
``V = (1/3) sum_f S_f . (m_f - x0)``, with S_f taken out of the cell. This is exactly the
volume of the polyhedron whose faces are fanned about their vertex means (for a hexahedron
the volume of the trilinear cell), and independent of x0 for a closed cell; x0 only keeps
the arithmetic local. A tetrahedral split of a warped hexahedron would instead depend on
the chosen diagonals (the design notes measured up to 4e-5 relative). The centroid weights
each pyramid's centroid ``x0 + 3/4 (x_f - x0)`` by its volume; where the volume vanishes the
apex is used instead (never NaN).

2-D meshes (unit depth): a face is an edge (a, b) with ``S = (yb - ya, -(xb - xa), 0)``, the
cell "volume" is its area ``(1/2) sum_f S_f . (m_f - x0)``, and the pyramids are triangles
with centroids ``x0 + 2/3 (m_f - x0)``.

Faces are processed in chunks of equal-sized polygons (reshaped, not looped over); the
per-cell sums are ``bincount`` passes over all faces (the neighbour side is scattered, and a
bincount over the whole mesh at once is linear where one per chunk would be quadratic).
On large meshes the compiled kernels of :mod:`caselint.mesh.kernels.geometry` do the same
arithmetic in loops (equal results; :mod:`caselint.mesh.kernels` decides which runs).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.kernels import compiled, in_threads
from caselint.mesh.topology import CellFaces
from caselint.mesh.topology import cell_faces as faces_of_cells

if TYPE_CHECKING:
    from caselint.mesh.model import MeshData

#: Faces or cells per vectorised chunk: keeps temporaries small (see the design notes).
#: 16,384 keeps a chunk's temporaries (128 kB per array) in the L2 cache: on the 1M-cell
#: benchmark mesh geometry and metrics ran 20-30 % faster than with 262,144.
CHUNK = 16_384


@dataclass(frozen=True, eq=False)
class Geometry:
    """Face and cell geometry of a mesh (m, m^2, m^3; 2-D: m, m, m^2 on unit depth).

    ``apex`` is the point each cell's face pyramids are built about (see the module
    docstring); ``volumes`` are signed (<= 0 for an inverted or degenerate cell).
    """

    area_vectors: np.ndarray
    face_centroids: np.ndarray
    volumes: np.ndarray
    cell_centroids: np.ndarray
    apex: np.ndarray


def chunks(n: int, size: int | None = None):
    """Slices covering ``range(n)`` in pieces of at most ``size`` (default :data:`CHUNK`,
    read at each call so that tests can shrink it)."""
    size = CHUNK if size is None else size
    for lo in range(0, n, size):
        yield slice(lo, min(lo + size, n))


def coordinate_columns(points: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Contiguous x, y, z arrays: gathers from them are faster than from (P, 3) rows."""
    return tuple(np.ascontiguousarray(points[:, k]) for k in range(3))  # type: ignore[return-value]


def size_classes(offsets: np.ndarray, sl: slice):
    """Yield (k, rows) for the faces of slice ``sl`` with k points each, rows as ``(n, k)``
    indices into the face-point array; one class when every face has the same size."""
    start = offsets[sl.start : sl.stop]
    size = offsets[sl.start + 1 : sl.stop + 1] - start
    if not len(size):
        return
    k0 = int(size[0])
    if bool((size == k0).all()):
        yield k0, None, int(start[0]) + np.arange(len(size) * k0).reshape(-1, k0)
        return
    for k in np.unique(size):
        sel = np.flatnonzero(size == k)
        yield int(k), sel, start[sel][:, None] + np.arange(int(k))[None, :]


def fan(cols, fp: np.ndarray):
    """Per face of ``fp`` (n, k) point ids: the vertex mean m, the fan triangles' area
    vectors s_i and the gathered vertices, as lists of x, y, z arrays."""
    k = fp.shape[1]
    X = [[c[fp[:, i]] for c in cols] for i in range(k)]
    m = [sum(X[i][a] for i in range(k)) * (1.0 / k) for a in range(3)]
    r = [[X[i][a] - m[a] for a in range(3)] for i in range(k)]
    s = [cross(r[i], r[(i + 1) % k], 0.5) for i in range(k)]
    return m, s, X


def _polygons(cols, fp: np.ndarray):
    """Area vector, centroid and vertex mean of polygons ``fp`` (n, k), k >= 3."""
    m, s, X = fan(cols, fp)
    k = fp.shape[1]
    S = [sum(s[i][a] for i in range(k)) for a in range(3)]
    wsum = np.zeros_like(m[0])
    acc = [np.zeros_like(m[0]) for _ in range(3)]
    for i in range(k):
        w = s[i][0] * S[0] + s[i][1] * S[1] + s[i][2] * S[2]
        wsum += w
        nxt = X[(i + 1) % k]
        for a in range(3):
            acc[a] += w * (X[i][a] + nxt[a] - 2.0 * m[a])
    ok = wsum > 0
    safe = np.where(ok, wsum, 1.0)
    centroid = [m[a] + np.where(ok, acc[a] / (3.0 * safe), 0.0) for a in range(3)]
    return S, centroid, m


def _short(cols, fp: np.ndarray):
    """Faces of one or two points in 3-D (damaged): no area, centroid at the vertex mean."""
    m = [sum(c[fp[:, i]] for i in range(fp.shape[1])) / fp.shape[1] for c in cols]
    return [np.zeros_like(m[0]) for _ in range(3)], m, m


def _edges(cols, fp: np.ndarray):
    """Outward normal times length, and midpoint, of edges in the x-y plane."""
    xa, ya = cols[0][fp[:, 0]], cols[1][fp[:, 0]]
    xb, yb = cols[0][fp[:, 1]], cols[1][fp[:, 1]]
    S = [yb - ya, xa - xb, np.zeros_like(xa)]
    mid = [(xa + xb) * 0.5, (ya + yb) * 0.5, np.zeros_like(xa)]
    return S, mid, mid


def cross(a, b, scale=1.0):
    """a x b (times ``scale``) on lists of x, y, z arrays."""
    return [
        (a[1] * b[2] - a[2] * b[1]) * scale,
        (a[2] * b[0] - a[0] * b[2]) * scale,
        (a[0] * b[1] - a[1] * b[0]) * scale,
    ]


def face_geometry(mesh: "MeshData") -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(F, 3) area vectors, centroids and vertex means of every face."""
    cols = coordinate_columns(mesh.points)
    n = mesh.n_faces
    out = [np.empty((n, 3)) for _ in range(3)]
    for sl in chunks(n):
        for k, sel, rows in size_classes(mesh.face_offsets, sl):
            fp = mesh.face_points[rows]
            if mesh.dim == 2:
                parts = _edges(cols, fp) if k == 2 else _short(cols, fp)
            else:
                parts = _polygons(cols, fp) if k >= 3 else _short(cols, fp)
            target = np.arange(sl.start, sl.stop) if sel is None else sl.start + sel
            for arr, vec in zip(out, parts):
                for a in range(3):
                    if sel is None:
                        arr[sl, a] = vec[a]
                    else:
                        arr[target, a] = vec[a]
    return out[0], out[1], out[2]


def compute_geometry(mesh: "MeshData", cell_faces: CellFaces | None = None) -> Geometry:
    """Face and cell geometry of ``mesh`` (see the module docstring for the formulas);
    ``cell_faces`` are its cells' face lists when known (the compiled kernels sum per cell
    over them; :func:`caselint.mesh.topology.cell_faces` else)."""
    kernel = compiled("geometry", mesh.n_cells)
    n_cells, n_int, dim = mesh.n_cells, mesh.n_internal, mesh.dim
    # the neighbour sees -S; an orientation clash (both cells list the face the same way
    # round) means its own cell definition sees +S
    sign = np.full(n_int, -1.0)
    clash = mesh.report.clashing
    sign[clash[clash < n_int]] = 1.0
    if kernel is not None:
        if cell_faces is None:
            cell_faces = faces_of_cells(mesh)
        cf = (cell_faces.offsets, cell_faces.faces, cell_faces.owned)
        area, fcent, fmean = (np.empty((mesh.n_faces, 3)) for _ in range(3))
        in_threads(lambda p: kernel.face_geometry(
            mesh.face_offsets, mesh.face_points, mesh.points, dim == 3, p.start, p.stop, area,
            fcent, fmean), mesh.n_faces)
        # cell by cell over each cell's faces (owner and neighbour sides summed apart, as
        # the two bincounts of the numpy path): no per-cell tables of the sums
        apex = np.empty((n_cells, 3))
        shape = mesh.cell_shape()
        in_threads(lambda p: kernel.face_mean_apex(*cf, fmean, shape, p.start, p.stop, apex),
                   n_cells)
        del shape
        for block in mesh.shapes:       # cells of known shape: their vertex mean
            in_threads(lambda p, b=block: kernel.vertex_mean_apex(
                b.connectivity[p], b.cells[p], mesh.points, apex), len(block.cells))
        volumes, cent = np.empty(n_cells), np.empty((n_cells, 3))
        in_threads(lambda p: kernel.cell_volumes_centroids(
            *cf, sign, area, fcent, fmean, apex, dim, p.start, p.stop, volumes, cent), n_cells)
        return Geometry(area, fcent, volumes, cent, apex)
    area, fcent, fmean = face_geometry(mesh)
    apex = _apex(mesh, fmean)
    acc = _pyramid_sums(mesh, area, fcent, fmean, apex, sign)
    del fmean
    # a copy: a view would keep all five rows of the sums alive with the mesh
    volumes = acc[0].copy()
    # Pyramids that cancel out (a collapsed cell) leave no usable centroid: use the apex.
    good = np.abs(volumes) > 1e-12 * acc[4]
    frac = dim / (dim + 1.0)
    safe = np.where(good, volumes, 1.0)
    cent = np.empty((n_cells, 3))
    for a in range(3):
        cent[:, a] = apex[:, a] + np.where(good, frac * acc[a + 1] / safe, 0.0)
    return Geometry(area, fcent, volumes, cent, apex)


def _apex(mesh: "MeshData", fmean: np.ndarray) -> np.ndarray:
    """(C, 3) the vertex mean of cells of known shape, else the mean of the face means."""
    n_cells, n_int = mesh.n_cells, mesh.n_internal
    owner, nbr = mesh.owner, mesh.neighbour[:n_int]
    count = (np.bincount(owner, minlength=n_cells)
             + np.bincount(nbr, minlength=n_cells)).astype(np.float64)
    apex = np.empty((n_cells, 3))
    for a in range(3):
        total = (np.bincount(owner, weights=fmean[:, a], minlength=n_cells)
                 + np.bincount(nbr, weights=fmean[:n_int, a], minlength=n_cells))
        apex[:, a] = total / np.maximum(count, 1.0)
    cols = coordinate_columns(mesh.points)
    for block in mesh.shapes:
        for sl in chunks(len(block.cells)):
            rows = block.connectivity[sl]
            for a in range(3):
                # summed vertex after vertex (as the compiled kernel does), not pairwise
                total = cols[a][rows[:, 0]]
                for j in range(1, rows.shape[1]):
                    total = total + cols[a][rows[:, j]]
                apex[block.cells[sl], a] = total / rows.shape[1]
    return apex


def _pyramid_sums(mesh: "MeshData", area, fcent, fmean, apex, sign) -> np.ndarray:
    """(5, C) per-cell sums of pyramid volume, volume x centroid offset (x, y, z), |volume|:
    owner sides, then neighbour sides (with ``sign`` on their area vectors)."""
    n_cells, n_int, dim = mesh.n_cells, mesh.n_internal, mesh.dim
    owner, nbr = mesh.owner, mesh.neighbour[:n_int]
    acc = np.zeros((5, n_cells))
    own = _pyramid_terms(area, fcent, fmean, apex, owner, dim)
    for j in range(5):
        acc[j] += np.bincount(owner, weights=own[j], minlength=n_cells)
    del own
    if n_int:
        side = _pyramid_terms(area[:n_int] * sign[:, None], fcent[:n_int], fmean[:n_int],
                              apex, nbr, dim)
        for j in range(5):
            acc[j] += np.bincount(nbr, weights=side[j], minlength=n_cells)
    return acc


def _pyramid_terms(S, xf, m, apex, cells, dim) -> list[np.ndarray]:
    """Pyramid volume, volume times centroid offset (x, y, z), and |volume|, per face."""
    out = [np.empty(len(cells)) for _ in range(5)]
    for sl in chunks(len(cells)):
        x0 = apex[cells[sl]]
        d = m[sl] - x0
        v = (S[sl, 0] * d[:, 0] + S[sl, 1] * d[:, 1] + S[sl, 2] * d[:, 2]) / dim
        out[0][sl] = v
        for a in range(3):
            out[a + 1][sl] = v * (xf[sl, a] - x0[:, a])
        out[4][sl] = np.abs(v)
    return out
