"""Builders of simple meshes (``meshio.Mesh``) for tests, examples and benchmarks.

Structured hexahedral and quadrilateral blocks from 1-D coordinate arrays, geometric
grading, splitting hexahedra into tetrahedra, renumbering, and writing gmsh 2.2 files.
Boundary elements carry their side name both as a meshio cell set and as a gmsh physical
group (``gmsh:physical`` cell data with ``field_data`` names), so they survive a write in
either family of formats. All builders are vectorised.
"""

from __future__ import annotations

import contextlib
import io
import os

import meshio
import numpy as np

from caselint.mesh.celltypes import face_index

HEX_SIDES = ("xmin", "xmax", "ymin", "ymax", "zmin", "zmax")
QUAD_SIDES = ("xmin", "xmax", "ymin", "ymax")
# Outward hexahedron face template (caselint.mesh.celltypes.FACES) on each side.
_HEX_SIDE_FACE = (5, 3, 2, 4, 0, 1)
_QUAD_SIDE_EDGE = ((3, 0), (1, 2), (0, 1), (2, 3))

#: Six tetrahedra around the diagonal 0-6 (Kuhn split): conforming between any hexahedra
#: numbered alike, as in :func:`structured_hex`.
SIX_TETS = ((0, 1, 2, 6), (0, 2, 3, 6), (0, 3, 7, 6), (0, 7, 4, 6), (0, 4, 5, 6), (0, 5, 1, 6))
#: Five tetrahedra: four corners cut off and a central one; the mirrored pattern is used
#: on odd cells so that a checkerboard parity gives a conforming mesh.
FIVE_TETS = (
    ((1, 2, 0, 5), (3, 0, 2, 7), (4, 5, 0, 7), (6, 7, 2, 5), (0, 2, 7, 5)),
    ((0, 1, 3, 4), (2, 3, 1, 6), (5, 4, 6, 1), (7, 6, 4, 3), (1, 6, 3, 4)),
)


def graded(x0: float, x1: float, n: int, ratio: float) -> np.ndarray:
    """``n + 1`` coordinates from x0 to x1 whose successive spacings multiply by ``ratio``."""
    if n < 1 or ratio <= 0:
        raise ValueError(f"graded() needs n >= 1 and ratio > 0, got n={n}, ratio={ratio}")
    if ratio == 1.0:
        return np.linspace(x0, x1, n + 1)
    first = (x1 - x0) * (ratio - 1.0) / (ratio**n - 1.0)
    x = np.empty(n + 1)
    x[0] = x0
    x[1:] = x0 + np.cumsum(first * ratio ** np.arange(n))
    x[-1] = x1
    return x


def _grouped(points, volume_type, volume, faces, face_type, names) -> meshio.Mesh:
    """A meshio mesh with one volume block and one boundary block named by side."""
    side = np.concatenate([np.full(len(f), k, dtype=np.int64) for k, f in enumerate(faces)])
    bnd = np.concatenate(faces)
    sets = {name: [np.zeros(0, dtype=np.int64), np.flatnonzero(side == k)]
            for k, name in enumerate(names)}
    tags = [np.zeros(len(volume), dtype=np.int64), side + 1]
    return meshio.Mesh(
        points, [(volume_type, volume), (face_type, bnd)],
        cell_data={"gmsh:physical": tags, "gmsh:geometrical": [t.copy() for t in tags]},
        field_data={name: np.array([k + 1, 2 if face_type == "quad" else 1])
                    for k, name in enumerate(names)},
        cell_sets=sets,
    )


def structured_hex(xs, ys, zs, *, names=HEX_SIDES) -> meshio.Mesh:
    """Hexahedral block on the tensor grid ``xs x ys x zs`` (x fastest), sides grouped."""
    xs, ys, zs = (np.asarray(v, dtype=np.float64) for v in (xs, ys, zs))
    nx, ny, nz = len(xs) - 1, len(ys) - 1, len(zs) - 1
    if min(nx, ny, nz) < 1 or len(names) != 6:
        raise ValueError("structured_hex needs >= 2 coordinates per axis and 6 side names")
    z, y, x = np.meshgrid(zs, ys, xs, indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    k, j, i = np.meshgrid(np.arange(nz), np.arange(ny), np.arange(nx), indexing="ij")
    base = (i + (nx + 1) * (j + (ny + 1) * k)).ravel()
    dx, dy, dz = 1, nx + 1, (nx + 1) * (ny + 1)
    offsets = np.array([0, dx, dx + dy, dy, dz, dz + dx, dz + dx + dy, dz + dy])
    hexes = base[:, None] + offsets[None, :]
    at = [i.ravel() == 0, i.ravel() == nx - 1, j.ravel() == 0, j.ravel() == ny - 1,
          k.ravel() == 0, k.ravel() == nz - 1]
    tpl = face_index("hexahedron")
    faces = [hexes[at[s]][:, tpl[_HEX_SIDE_FACE[s]]] for s in range(6)]
    return _grouped(points, "hexahedron", hexes, faces, "quad", names)


def structured_parity(nx: int, ny: int, nz: int) -> np.ndarray:
    """Checkerboard parity (i + j + k) % 2 of the cells of a :func:`structured_hex` block."""
    k, j, i = np.meshgrid(np.arange(nz), np.arange(ny), np.arange(nx), indexing="ij")
    return ((i + j + k) % 2).ravel()


def structured_quad(xs, ys, *, names=QUAD_SIDES) -> meshio.Mesh:
    """2-D quadrilateral block on ``xs x ys`` (z = 0, counter-clockwise), edges grouped."""
    xs, ys = (np.asarray(v, dtype=np.float64) for v in (xs, ys))
    nx, ny = len(xs) - 1, len(ys) - 1
    if min(nx, ny) < 1 or len(names) != 4:
        raise ValueError("structured_quad needs >= 2 coordinates per axis and 4 side names")
    y, x = np.meshgrid(ys, xs, indexing="ij")
    points = np.column_stack([x.ravel(), y.ravel(), np.zeros(x.size)])
    j, i = np.meshgrid(np.arange(ny), np.arange(nx), indexing="ij")
    base = (i + (nx + 1) * j).ravel()
    quads = base[:, None] + np.array([0, 1, nx + 2, nx + 1])[None, :]
    at = [i.ravel() == 0, i.ravel() == nx - 1, j.ravel() == 0, j.ravel() == ny - 1]
    edges = [quads[at[s]][:, list(_QUAD_SIDE_EDGE[s])] for s in range(4)]
    return _grouped(points, "quad", quads, edges, "line", names)


def hex_to_tets(hexes, scheme: int = 6, parity=None) -> np.ndarray:
    """Split ``(n, 8)`` hexahedra into ``(n * scheme, 4)`` positive tetrahedra (5 or 6 each)."""
    hexes = np.asarray(hexes)
    if scheme == 6:
        return hexes[:, np.array(SIX_TETS)].reshape(-1, 4)
    if scheme != 5:
        raise ValueError(f"scheme must be 5 or 6, got {scheme}")
    odd = np.zeros(len(hexes), bool) if parity is None else np.asarray(parity).astype(bool)
    tets = np.where(odd[:, None, None], hexes[:, np.array(FIVE_TETS[1])],
                    hexes[:, np.array(FIVE_TETS[0])])
    return tets.reshape(-1, 4)


def tetrahedralise(m: meshio.Mesh, scheme: int = 6, parity=None) -> meshio.Mesh:
    """Split the hexahedra of ``m`` into tetrahedra and its boundary quads to match them."""
    blocks, factor = [], []
    for block in m.cells:
        if block.type == "hexahedron":
            blocks.append(("tetra", hex_to_tets(block.data, scheme, parity)))
            factor.append(scheme)
        else:
            blocks.append((block.type, block.data))
            factor.append(1)
    tets = np.concatenate([d for t, d in blocks if t == "tetra"])
    p = np.int64(len(m.points))
    pairs = ((0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3))
    edges = np.concatenate([tets[:, [a, b]] for a, b in pairs])
    edge_keys = np.unique(edges.min(axis=1).astype(np.int64) * p + edges.max(axis=1))
    for n, (ctype, data) in enumerate(blocks):
        if ctype == "quad":
            a, b, c, d = data.T.astype(np.int64)
            use_ac = np.isin(np.minimum(a, c) * p + np.maximum(a, c), edge_keys)
            t1 = np.where(use_ac[:, None], np.stack([a, b, c], 1), np.stack([a, b, d], 1))
            t2 = np.where(use_ac[:, None], np.stack([a, c, d], 1), np.stack([b, c, d], 1))
            blocks[n] = ("triangle", np.stack([t1, t2], axis=1).reshape(-1, 3))
            factor[n] = 2
    return _expanded(m, blocks, factor)


def _expanded(m: meshio.Mesh, blocks, factor) -> meshio.Mesh:
    """``m`` with new blocks where each old cell became ``factor`` consecutive cells."""
    data = {key: [np.repeat(np.asarray(v), f) for v, f in zip(vals, factor)]
            for key, vals in m.cell_data.items()}
    sets = {}
    for name, per_block in m.cell_sets.items():
        sets[name] = [None if ids is None else
                      (np.asarray(ids, np.int64)[:, None] * f + np.arange(f)).ravel()
                      for ids, f in zip(per_block, factor)]
    return meshio.Mesh(m.points, blocks, cell_data=data, field_data=dict(m.field_data),
                       cell_sets=sets)


def shuffled(m: meshio.Mesh, seed: int = 0) -> meshio.Mesh:
    """``m`` with points and the cells of every block in a random order (same geometry)."""
    rng = np.random.default_rng(seed)
    new_of_old = rng.permutation(len(m.points))
    points = np.empty_like(m.points)
    points[new_of_old] = m.points
    perms = [rng.permutation(len(b.data)) for b in m.cells]
    blocks = [(b.type, new_of_old[b.data[perm]]) for b, perm in zip(m.cells, perms)]
    data = {k: [np.asarray(v)[perm] for v, perm in zip(vals, perms)]
            for k, vals in m.cell_data.items()}
    sets = {}
    for name, per_block in m.cell_sets.items():
        out = []
        for ids, perm in zip(per_block, perms):
            inverse = np.empty_like(perm)
            inverse[perm] = np.arange(len(perm))
            out.append(None if ids is None else np.sort(inverse[np.asarray(ids, np.int64)]))
        sets[name] = out
    return meshio.Mesh(points, blocks, cell_data=data, field_data=dict(m.field_data),
                       cell_sets=sets)


def write_gmsh22(m: meshio.Mesh, path: str | os.PathLike[str], *, binary: bool = False) -> None:
    """Write ``m`` as a gmsh 2.2 file keeping physical names; meshio's chatter is swallowed."""
    tags = dict(m.cell_data)
    for key in ("gmsh:physical", "gmsh:geometrical"):
        tags.setdefault(key, [np.zeros(len(b.data), dtype=np.int64) for b in m.cells])
    out = meshio.Mesh(m.points, [(b.type, b.data) for b in m.cells],
                      cell_data={k: tags[k] for k in ("gmsh:physical", "gmsh:geometrical")},
                      field_data=dict(m.field_data))
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        meshio.write(str(path), out, file_format="gmsh22", binary=binary)
