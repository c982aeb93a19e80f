"""2-D cases of face-based formats: one layer of cells between two ``empty`` patches.

A face-based solver describes a planar 2-D case as a 3-D mesh one cell thick whose front
and back faces belong to patches of type ``empty`` (no equations are solved across them).
Checked as 3-D, such a mesh would be judged on its arbitrary thickness (aspect ratios of
100 in thin slabs, a "gap" of one cell between front and back). caselint therefore reads
it as what it describes: a 2-D mesh in the x-y plane, on unit depth, like a 2-D element
file.

- cells: each cell becomes the polygon of its front face (the one whose normal points to
  +z), counter-clockwise seen from +z; triangles and quadrilaterals keep their shape;
- faces: every other face (internal faces and the faces of the other patches) becomes
  the edge between its two points on the front plane, its normal out of the same owner;
- points: those of the front plane, with z = 0 (``file_point_ids`` keep the file's ids);
- groups: the patches keep their names and types; the ``empty`` patches keep their names
  with no faces, so a case file may still name them.

Only when the mesh really is one cell thick in z: every cell has exactly one front and
one back face on the ``empty`` patches, those faces are normal to z, the front plane is
flat and every other face has exactly two points on it. A mesh with ``empty`` patches
that fails one of these (another axis, a wedge-shaped slab) is checked as 3-D, with a
note saying why.
"""

from __future__ import annotations

import dataclasses

import numpy as np

import caselint.mesh.topology as topology
from caselint.mesh.build import mesh_from_faces
from caselint.mesh.model import MeshData, ShapeBlock

#: Largest sine of the angle between an ``empty`` face's normal and the z axis.
NORMAL_TOLERANCE = 1e-6
#: Largest spread of z over the front plane, relative to the mesh's extent in x and y.
FLATNESS = 1e-9


def _area_vectors(data: MeshData, faces: np.ndarray) -> np.ndarray:
    """(k, 3) area vectors of ``faces`` (Newell's formula, normal out of the owner)."""
    table = topology.face_point_table(data, faces)
    p = data.points[table]                               # (k, V, 3); repeats add nothing
    q = np.roll(p, -1, axis=1)
    return 0.5 * np.cross(p, q).sum(axis=1)


def _with_note(data: MeshData, note: str) -> MeshData:
    return dataclasses.replace(data, notes=(*data.notes, note))


def flat_case(data: MeshData) -> MeshData | None:
    """The 2-D mesh of a one-cell-thick case (module docstring), ``data`` with a note when
    it has ``empty`` patches but is not such a case, None when it has none."""
    empty = [i for i, name in enumerate(data.group_names)
             if data.group_types.get(name) == "empty"]
    if not empty or data.dim != 3:
        return None
    names = ", ".join(data.group_names[i] for i in empty)
    on_empty = np.isin(data.face_group, empty)
    faces = np.flatnonzero(on_empty)
    s = _area_vectors(data, faces)
    length = np.linalg.norm(s, axis=1)
    sideways = np.hypot(s[:, 0], s[:, 1]) > NORMAL_TOLERANCE * np.maximum(length, 1e-300)
    if faces.size == 0 or bool(sideways.any()):
        return _with_note(data, f"the empty patches ({names}) are not all normal to z: "
                                "caselint checks 2-D meshes in the x-y plane, so this mesh "
                                "is checked as 3-D, one cell thick")
    front = faces[s[:, 2] > 0]
    back_count = np.bincount(data.owner[faces[s[:, 2] < 0]], minlength=data.n_cells)
    front_count = np.bincount(data.owner[front], minlength=data.n_cells)
    if bool(np.any(front_count != 1)) or bool(np.any(back_count != 1)):
        return _with_note(data, f"not every cell has one front and one back face on the empty "
                                f"patches ({names}): checked as 3-D")
    flat = _flatten(data, front, on_empty)
    if isinstance(flat, str):
        return _with_note(data, f"{flat}: checked as 3-D")
    return flat


def _flatten(data: MeshData, front: np.ndarray, on_empty: np.ndarray) -> MeshData | str:
    """The 2-D mesh, or the reason it cannot be made."""
    front_table = topology.face_point_table(data, front)
    on_front = np.zeros(data.n_points, dtype=bool)
    on_front[front_table.ravel()] = True
    kept = np.flatnonzero(on_front)
    z = data.points[kept, 2]
    extent = float(np.ptp(data.points[kept, :2], axis=0).max(initial=0.0))
    if float(np.ptp(z)) > FLATNESS * max(extent, 1e-300):
        return f"the front plane is not flat (z spans {float(np.ptp(z)):.3g} m)"
    new_id = np.full(data.n_points, -1, dtype=np.int64)
    new_id[kept] = np.arange(len(kept))
    # cells: the front face of each, in cell order (normal +z: counter-clockwise)
    order = np.argsort(data.owner[front], kind="stable")
    cell_faces = front[order]
    sizes = np.diff(data.face_offsets)[cell_faces]
    starts = data.face_offsets[cell_faces]
    gather = np.repeat(starts, sizes) + np.arange(int(sizes.sum())) - np.repeat(
        np.cumsum(sizes) - sizes, sizes)
    polygon_points = new_id[data.face_points[gather]]
    # edges: the two front points of every other face, turned to keep the owner's side
    sides = np.flatnonzero(~on_empty)
    table = topology.face_point_table(data, sides)
    width = table.shape[1]
    size = np.diff(data.face_offsets)[sides]
    real = np.arange(width)[None, :] < size[:, None]
    marked = on_front[table] & real
    if bool(np.any(np.count_nonzero(marked, axis=1) != 2)):
        bad = int(sides[np.argmax(np.count_nonzero(marked, axis=1) != 2)])
        return f"face {bad} does not have exactly two points on the front plane"
    first = np.argmax(marked, axis=1)
    second = width - 1 - np.argmax(marked[:, ::-1], axis=1)
    rows = np.arange(len(sides))
    a, b = table[rows, first], table[rows, second]
    s = _area_vectors(data, sides)
    d = data.points[b] - data.points[a]
    flip = d[:, 1] * s[:, 0] - d[:, 0] * s[:, 1] < 0       # (dy, -dx) . S < 0
    edges = np.column_stack([np.where(flip, b, a), np.where(flip, a, b)])
    points = data.points[kept].copy()
    points[:, 2] = 0.0
    cell_offsets = np.zeros(data.n_cells + 1, dtype=np.int64)
    np.cumsum(sizes, out=cell_offsets[1:])
    flat = mesh_from_faces(
        path=data.path, points=points, dim=2,
        face_offsets=2 * np.arange(len(sides) + 1, dtype=np.int64),
        face_points=new_id[edges].ravel(), owner=data.owner[sides],
        neighbour=data.neighbour[sides], n_cells=data.n_cells,
        face_group=data.face_group[sides], group_names=data.group_names,
        group_types=data.group_types, shapes=_polygon_shapes(sizes, cell_offsets,
                                                             polygon_points),
        cell_zone=data.cell_zone, zone_names=data.zone_names,
        notes=(*data.notes, _note(data)), point_data={}, cell_data={})
    return dataclasses.replace(flat, file_point_ids=kept.astype(np.int64))


def _note(data: MeshData) -> str:
    names = ", ".join(n for n in data.group_names if data.group_types.get(n) == "empty")
    return (f"read as a 2-D mesh in the x-y plane (unit depth): {data.n_cells} cells one "
            f"layer thick between the empty patches {names}")


def _polygon_shapes(sizes: np.ndarray, offsets: np.ndarray,
                    polygon_points: np.ndarray) -> tuple[ShapeBlock, ...]:
    """Triangle and quadrilateral blocks of the 2-D cells with 3 or 4 points."""
    blocks = []
    for shape, k in (("triangle", 3), ("quad", 4)):
        cells = np.flatnonzero(sizes == k)
        if len(cells):
            conn = polygon_points[offsets[cells][:, None] + np.arange(k)[None, :]]
            blocks.append(ShapeBlock(shape, cells.astype(np.int32), conn.astype(np.int32)))
    return tuple(blocks)
