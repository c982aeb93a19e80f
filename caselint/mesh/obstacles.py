"""Structured hexahedral blocks with solid obstacles cut out: fins, a building, a slot.

For tests and examples that need walls inside the domain. A cell of the tensor grid
``xs x ys x zs`` whose centre lies inside an obstacle box is removed; the faces between
kept cells and an obstacle's cells form that obstacle's boundary group, the outer faces
of kept cells the side groups (six, or four in 2-D). Builds a ``meshio.Mesh`` like
:func:`caselint.mesh.blocks.structured_hex` (cell sets and gmsh physical groups), with
unused points dropped. Vectorised over cells; loops run over the sides and the obstacles only.
"""

from __future__ import annotations

from typing import Mapping, Sequence

import meshio
import numpy as np

from caselint.mesh.blocks import HEX_SIDES, QUAD_SIDES, structured_hex, structured_quad
from caselint.mesh.celltypes import face_index

Box = Sequence[tuple[float, float]]
# Outward face template of a cell on each side (xmin, xmax, ymin, ymax[, zmin, zmax]).
_SIDE_FACE = {"hexahedron": (5, 3, 2, 4, 0, 1), "quad": (3, 1, 0, 2)}


def carved_hex(xs, ys, zs, obstacles: Mapping[str, Sequence[Box]], *,
               names: Sequence[str] = HEX_SIDES) -> meshio.Mesh:
    """Hexahedral block on ``xs x ys x zs`` without the cells inside the obstacle boxes.

    ``obstacles`` maps a group name to boxes ``((x0, x1), (y0, y1), (z0, z1))`` (m); the
    faces around the removed cells of a group are named by it.
    """
    return _carve(structured_hex(xs, ys, zs), (xs, ys, zs), obstacles, names)


def carved_quad(xs, ys, obstacles: Mapping[str, Sequence[Box]], *,
                names: Sequence[str] = QUAD_SIDES) -> meshio.Mesh:
    """2-D quadrilateral block on ``xs x ys`` without the cells inside ``((x0, x1), (y0, y1))``."""
    return _carve(structured_quad(xs, ys), (xs, ys), obstacles, names)


def _carve(full: meshio.Mesh, axes, obstacles: Mapping[str, Sequence[Box]],
           names: Sequence[str]) -> meshio.Mesh:
    """Remove the obstacle cells of a structured block (x fastest) and group their faces."""
    axes = [np.asarray(v, dtype=np.float64) for v in axes]
    counts = [len(v) - 1 for v in axes]
    cell_type = full.cells[0].type
    cells_all = full.cells[0].data
    centres = [(v[1:] + v[:-1]) / 2 for v in axes]
    index = [g.ravel() for g in np.meshgrid(*[np.arange(n) for n in counts[::-1]],
                                            indexing="ij")][::-1]     # i, j (, k)
    label = np.full(cells_all.shape[0], -1, dtype=np.int64)   # -1: fluid, else group index
    group_names = list(names) + list(obstacles)
    for n, boxes in enumerate(obstacles.values()):             # a few obstacles
        for box in boxes:
            hit = np.ones(label.size, dtype=bool)
            for axis, (lo, hi) in enumerate(box):
                c = centres[axis][index[axis]]
                hit &= (c > lo) & (c < hi)
            label[hit] = len(names) + n
    kept = label < 0
    tpl = face_index(cell_type)
    faces, groups = [], []
    stride = 1
    for axis, n in enumerate(counts):                          # two or three axes
        for end, sign in ((0, -1), (n - 1, 1)):
            side = 2 * axis + (sign > 0)
            coord = index[axis]
            group = np.where(kept & (coord == end), side, -1)
            inner = np.flatnonzero(kept & (coord != end))
            beyond = label[inner + sign * stride]
            group[inner] = np.where(beyond >= 0, beyond, -1)
            mine = group >= 0
            faces.append(cells_all[mine][:, tpl[_SIDE_FACE[cell_type][side]]])
            groups.append(group[mine])
        stride *= n
    bnd, side_of = np.concatenate(faces), np.concatenate(groups)
    cells = cells_all[kept]
    used, new = np.unique(np.concatenate([cells.ravel(), bnd.ravel()]), return_inverse=True)
    cells, bnd = new[: cells.size].reshape(cells.shape), new[cells.size:].reshape(bnd.shape)
    present = [g for g in range(len(group_names)) if np.any(side_of == g)]
    sets = {group_names[g]: [np.zeros(0, dtype=np.int64), np.flatnonzero(side_of == g)]
            for g in present}
    tags = [np.zeros(len(cells), dtype=np.int64), side_of + 1]
    face_type, face_dim = ("quad", 2) if cell_type == "hexahedron" else ("line", 1)
    return meshio.Mesh(
        full.points[used], [(cell_type, cells), (face_type, bnd)],
        cell_data={"gmsh:physical": tags, "gmsh:geometrical": [t.copy() for t in tags]},
        field_data={group_names[g]: np.array([g + 1, face_dim]) for g in present},
        cell_sets=sets,
    )
