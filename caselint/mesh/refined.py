"""Hexahedral blocks refined 2:1 inside a box: polyhedral meshes with hanging faces.

For tests, examples and benchmarks that need what octree meshers make. The coarse block
is the tensor grid ``xs x ys x zs``; every coarse cell whose centre lies inside the box
``refine`` is split into 2 x 2 x 2 fine hexahedra. A coarse cell next to a refined one
keeps its shape but sees four fine faces where the neighbour was split (a *hanging*
face): it becomes a polyhedron with more than six faces, and a coarse face whose edge
touches a refined cell carries that edge's midpoint (a five- to eight-point polygon),
so every cell is closed and shares its edges' points with its neighbours.

Built on the fine lattice (twice the coarse resolution) with numpy, no loop over cells:
every lattice face between two different cells is a face; between two unrefined coarse
cells the four lattice faces of a coarse face are one polygon. Cells that keep six
four-point faces are hexahedra (their shape is recorded); the rest are polyhedra.
Boundary faces are grouped by box side (``xmin`` ... ``zmax``). Faces come as face-based
solver files keep them: internal faces by owner, then neighbour; boundary faces by group.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from caselint.mesh.blocks import HEX_SIDES
from caselint.mesh.build import mesh_from_faces
from caselint.mesh.model import MeshData, ShapeBlock

Box = Sequence[tuple[float, float]]


def _fine_axis(coarse: np.ndarray) -> np.ndarray:
    """Coordinates of the fine lattice: the coarse ones and the midpoints between them."""
    out = np.empty(2 * len(coarse) - 1)
    out[0::2] = coarse
    out[1::2] = 0.5 * (coarse[1:] + coarse[:-1])
    return out


def refined_block(xs, ys, zs, refine: Box, *, path: str = "<refined block>") -> MeshData:
    """A hexahedral block on ``xs x ys x zs`` whose cells inside ``refine`` (a box
    ``((x0, x1), (y0, y1), (z0, z1))``, m) are split 2:1 (see the module docstring)."""
    axes = [np.asarray(v, dtype=np.float64) for v in (xs, ys, zs)]
    n = np.array([len(a) - 1 for a in axes])
    centres = [0.5 * (a[1:] + a[:-1]) for a in axes]
    inside = [(c > lo) & (c < hi) for c, (lo, hi) in zip(centres, refine)]
    refined = inside[0][:, None, None] & inside[1][None, :, None] & inside[2][None, None, :]
    n_coarse = int(np.count_nonzero(~refined))
    # cell id of every fine lattice position (i, j, k): one id per unrefined coarse cell
    coarse_id = np.full(n, -1, dtype=np.int64)
    coarse_id.T[~refined.T] = np.arange(n_coarse)          # x fastest
    fine_shape = 2 * n
    cellmap = np.repeat(np.repeat(np.repeat(coarse_id, 2, 0), 2, 1), 2, 2)
    fine_pos = np.repeat(np.repeat(np.repeat(refined, 2, 0), 2, 1), 2, 2)
    n_fine = int(np.count_nonzero(fine_pos))
    cellmap.T[fine_pos.T] = n_coarse + np.arange(n_fine)
    lattice = fine_shape + 1

    def pid(i, j, k):
        return i + lattice[0] * (j + lattice[1] * k)

    # lattice points used by a fine cell: a hanging edge's midpoint among them
    fine_used = np.zeros(lattice, dtype=bool)
    for di in (0, 1):
        for dj in (0, 1):
            for dk in (0, 1):
                fine_used[di:di + fine_shape[0], dj:dj + fine_shape[1],
                          dk:dk + fine_shape[2]] |= fine_pos
    sizes, face_points, owner, neighbour, group = (
        np.concatenate(col) for col in zip(*(_axis_faces(axis, cellmap, fine_pos, fine_used, pid)
                                            for axis in range(3))))
    # faces in the order face-based solver files keep: internal faces by owner then
    # neighbour, boundary faces by group then owner (locality for everything that follows)
    inner = neighbour >= 0
    order = np.lexsort((neighbour, owner, np.where(inner, -1, group)))
    starts = np.concatenate([[0], np.cumsum(sizes)])[:-1][order]
    sizes = sizes[order]
    face_points = face_points[np.repeat(starts - np.concatenate([[0], np.cumsum(sizes)])[:-1],
                                        sizes) + np.arange(int(sizes.sum()))]
    owner, neighbour, group = owner[order], neighbour[order], group[order]
    offsets = np.concatenate([[0], np.cumsum(sizes)])
    used, face_points = np.unique(face_points, return_inverse=True)
    fine_coords = [_fine_axis(a) for a in axes]
    ii, jj, kk = np.unravel_index(used, tuple(lattice), order="F")
    points = np.column_stack([fine_coords[0][ii], fine_coords[1][jj], fine_coords[2][kk]])
    n_cells = n_coarse + n_fine
    shapes = _hex_shapes(n_cells, owner, neighbour, sizes, cellmap, fine_pos, refined,
                         pid, used)
    return mesh_from_faces(path=path, points=points, dim=3, face_offsets=offsets,
                           face_points=face_points, owner=owner, neighbour=neighbour,
                           n_cells=n_cells, face_group=group, group_names=HEX_SIDES,
                           shapes=shapes)


def _polygons(axis: int, lo: tuple[np.ndarray, ...], span: int, pid, keep_mid, flip):
    """Sizes and point ids (CSR) of axis-normal lattice squares of side ``span`` at lattice
    corners ``lo``: counter-clockwise seen from +axis, reversed where ``flip``; edge
    midpoints (span 2) only where ``keep_mid`` says."""
    u, v = (axis + 1) % 3, (axis + 2) % 3
    steps = [(0, 0), (1, 0), (2, 0), (2, 1), (2, 2), (1, 2), (0, 2), (0, 1)] if span == 2 \
        else [(0, 0), (1, 0), (1, 1), (0, 1)]
    ids = []
    for du, dv in steps:
        idx = list(lo)
        idx[u] = idx[u] + du
        idx[v] = idx[v] + dv
        ids.append(pid(*idx))
    ids = np.stack(ids, axis=1)
    mask = np.ones(ids.shape, dtype=bool)
    if span == 2:
        mask[:, 1::2] = keep_mid(ids[:, 1::2])
    ids = np.where(flip[:, None], ids[:, ::-1], ids)
    mask = np.where(flip[:, None], mask[:, ::-1], mask)
    return np.count_nonzero(mask, axis=1), ids[mask]


def _axis_faces(axis, cellmap, fine_pos, fine_used, pid):
    """Faces normal to ``axis``: sizes and points (CSR), owner, neighbour, boundary group."""
    shape = np.array(cellmap.shape)
    pad = [(0, 0)] * 3
    pad[axis] = (1, 1)
    cells = np.pad(cellmap, pad, constant_values=-1)
    fine = np.pad(fine_pos, pad, constant_values=False)
    take = [slice(None)] * 3
    take[axis] = slice(0, shape[axis] + 1)
    left, lfine = cells[tuple(take)], fine[tuple(take)]
    take[axis] = slice(1, shape[axis] + 2)
    right, rfine = cells[tuple(take)], fine[tuple(take)]
    differ = left != right
    coarse = ~lfine & ~rfine
    # a coarse face is represented by the lattice face at its even corner
    idx = np.indices(left.shape)
    even = np.ones(left.shape, dtype=bool)
    for a in range(3):
        if a != axis:
            even &= idx[a] % 2 == 0
    flat_used = fine_used.ravel(order="F")
    parts = []
    for span, sel in ((2, differ & coarse & even), (1, differ & ~coarse)):
        where = np.nonzero(sel)
        lcell, rcell = left[where], right[where]
        flip = lcell < 0                       # min-side boundary: owner is the cell on +axis
        sizes, points = _polygons(axis, where, span, pid, lambda ids: flat_used[ids], flip)
        owner = np.where(flip, rcell, lcell)
        nbr = np.where(flip, -1, rcell)
        group = np.where(flip, 2 * axis, np.where(rcell < 0, 2 * axis + 1, -1))
        parts.append((sizes, points, owner, nbr, group.astype(np.int32)))
    return tuple(np.concatenate(col) for col in zip(*parts))


def _hex_shapes(n_cells, owner, neighbour, sizes, cellmap, fine_pos, refined, pid, used):
    """Hexahedron corners of the cells with six four-point faces (all fine cells and the
    coarse cells away from the refinement)."""
    count = np.bincount(owner, minlength=n_cells) + np.bincount(
        neighbour[neighbour >= 0], minlength=n_cells)
    big = np.zeros(n_cells, dtype=bool)
    big[owner[sizes != 4]] = True
    big[neighbour[(sizes != 4) & (neighbour >= 0)]] = True
    plain = (count == 6) & ~big
    new_id = np.full(int(used.max()) + 1, -1, dtype=np.int64)
    new_id[used] = np.arange(len(used))
    blocks = []
    corner = ((0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0), (0, 0, 1), (1, 0, 1), (1, 1, 1), (0, 1, 1))
    for span, pos in ((2, ~refined), (1, fine_pos)):
        ijk = np.nonzero(pos)
        lo = [span * w for w in ijk] if span == 2 else list(ijk)
        cells = cellmap[tuple(lo)]
        conn = np.stack([new_id[pid(lo[0] + span * a, lo[1] + span * b, lo[2] + span * c)]
                         for a, b, c in corner], axis=1)
        keep = plain[cells]
        blocks.append((cells[keep], conn[keep]))
    cells = np.concatenate([b[0] for b in blocks])
    conn = np.concatenate([b[1] for b in blocks])
    order = np.argsort(cells)
    return (ShapeBlock("hexahedron", cells[order].astype(np.int32), conn[order]),)
