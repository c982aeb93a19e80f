"""VTK unstructured grids with polyhedra, turned into the face-based mesh.

Shared by the VTU reader (:mod:`caselint.mesh.formats.vtu_files`) and the legacy VTK
reader (:mod:`caselint.mesh.formats.vtk_legacy`), which parse their files into a
:class:`VtkGrid`. Cells by VTK type:

- volume cells: tetrahedron (10), voxel (11, read as a hexahedron), hexahedron (12),
  wedge (13), pyramid (14) and their quadratic forms (24-27, 29, by their corner nodes;
  curved edges ignored), which keep their shape; pentagonal and hexagonal prisms (15,
  16) and polyhedra (42, given by their faces), which are general polyhedra unless their
  faces make one of the four shapes (:mod:`caselint.mesh.shapes`);
- boundary polygons: triangle (5), polygon (7), pixel (8, read as a quadrilateral), quad
  (9) and the quadratic triangle and quadrilaterals (22, 23, 28) by their corners: they
  name the boundary faces they lie on;
- vertices and lines (1-4, 21) are left out (a note says how many); any other type is an
  error naming it.

Boundary groups come from an integer cell-data array on the boundary polygons: the
case's ``tag_array`` (names from ``tags``), else ``gmsh:physical`` with names from the
field data (``name -> [tag, dimension]``, as meshio writes them). Numeric point data and
cell data defined on the volume cells are kept as fields. The volume cells are numbered
in file order without the polygons; ``file_cell_ids`` gives each its index in the file.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.build import mesh_from_faces
from caselint.mesh.celltypes import FACES, N_NODES
from caselint.mesh.formats.polygon_pairing import HalfFaces, match_polygons, pair_polygons
from caselint.mesh.model import MeshData, ReadReport, ShapeBlock
from caselint.mesh.readers import ReadOptions, checked_points

#: VTK type -> (shape, node order of its corners in meshio/VTK order of that shape).
SHAPED: dict[int, tuple[str, tuple[int, ...]]] = {
    10: ("tetra", (0, 1, 2, 3)), 24: ("tetra", (0, 1, 2, 3)),
    11: ("hexahedron", (0, 1, 3, 2, 4, 5, 7, 6)),
    12: ("hexahedron", tuple(range(8))), 25: ("hexahedron", tuple(range(8))),
    29: ("hexahedron", tuple(range(8))),
    13: ("wedge", tuple(range(6))), 26: ("wedge", tuple(range(6))),
    14: ("pyramid", tuple(range(5))), 27: ("pyramid", tuple(range(5))),
}
#: VTK type -> node order of the corners of a boundary polygon (7: all nodes).
POLYGONS: dict[int, tuple[int, ...] | None] = {
    5: (0, 1, 2), 22: (0, 1, 2), 9: (0, 1, 2, 3), 23: (0, 1, 2, 3), 28: (0, 1, 2, 3),
    8: (0, 1, 3, 2), 7: None,
}
PRISMS = {15: 5, 16: 6}          # pentagonal and hexagonal prism: sides of the base
POLYHEDRON = 42
IGNORED = {1, 2, 3, 4, 21}       # vertices and lines
TYPE_NAMES = {1: "vertex", 2: "poly-vertex", 3: "line", 4: "poly-line", 21: "quadratic edge"}


@dataclass(eq=False)
class VtkGrid:
    """An unstructured grid as read: cells in CSR (``offsets`` has C + 1 entries) and, for
    polyhedra, each cell's faces (``cell_faces`` CSR into the face list ``face_offsets`` /
    ``face_points``; empty for other cells)."""

    path: str
    points: np.ndarray
    types: np.ndarray
    offsets: np.ndarray
    connectivity: np.ndarray
    cell_faces: np.ndarray | None = None
    face_offsets: np.ndarray | None = None
    face_points: np.ndarray | None = None
    cell_data: dict[str, np.ndarray] = field(default_factory=dict)
    point_data: dict[str, np.ndarray] = field(default_factory=dict)
    field_data: dict[str, np.ndarray] = field(default_factory=dict)


def face_stream_cells(path: str, stream: np.ndarray, starts: np.ndarray):
    """Decode VTK polyhedron face streams ``[n_faces, n_0, ids..., n_1, ids..., ...]``
    starting at ``starts`` (one per polyhedron) into (cell_faces CSR over the
    polyhedra, face offsets, face points, where each stream ended). Vectorised over the
    cells, one pass per face rank (polyhedra have a few dozen faces at most)."""
    stream = np.asarray(stream, dtype=np.int64)
    starts = np.asarray(starts, dtype=np.int64)
    if len(starts) and (int(starts.max()) >= len(stream) or int(starts.min()) < 0):
        raise MeshReadError(path, "a polyhedron's face list starts beyond the face data")
    n_faces = stream[starts] if len(starts) else starts
    if len(n_faces) and int(n_faces.min()) < 1:
        raise MeshReadError(path, "a polyhedron declares fewer than one face")
    cell_faces = np.zeros(len(starts) + 1, dtype=np.int64)
    np.cumsum(n_faces, out=cell_faces[1:])
    face_start = np.zeros(int(cell_faces[-1]), dtype=np.int64)
    face_size = np.zeros(int(cell_faces[-1]), dtype=np.int64)
    pos = starts + 1
    for rank in range(int(n_faces.max(initial=0))):
        live = np.flatnonzero(n_faces > rank)
        at = pos[live]
        if int(at.max(initial=-1)) >= len(stream):
            raise MeshReadError(path, "the polyhedron face data ends inside a face (truncated)")
        size = stream[at]
        if len(size) and int(size.min()) < 3:
            raise MeshReadError(path, "a polyhedron face has fewer than three points")
        slot = cell_faces[live] + rank
        face_start[slot], face_size[slot] = at + 1, size
        pos[live] = at + 1 + size
    if len(pos) and int(pos.max()) > len(stream):
        raise MeshReadError(path, "the polyhedron face data ends inside a face (truncated)")
    face_offsets = np.zeros(len(face_size) + 1, dtype=np.int64)
    np.cumsum(face_size, out=face_offsets[1:])
    ramp = np.arange(int(face_offsets[-1])) - np.repeat(face_offsets[:-1], face_size)
    return cell_faces, face_offsets, stream[np.repeat(face_start, face_size) + ramp], pos


def grid_data(grid: VtkGrid, options: ReadOptions) -> MeshData:
    """The face-based mesh of a grid (see the module docstring)."""
    from caselint.mesh.limits import check_memory, face_mesh_counts
    from caselint.mesh.shapes import with_shapes

    path, types = grid.path, np.asarray(grid.types, dtype=np.int64)
    n_points = len(grid.points)
    known = set(SHAPED) | set(POLYGONS) | set(PRISMS) | IGNORED | {POLYHEDRON}
    unknown = sorted(set(np.unique(types).tolist()) - known)
    if unknown:
        raise MeshReadError(path, f"cells of VTK type {', '.join(map(str, unknown))} are not "
                                  "supported (caselint reads linear and quadratic cells, "
                                  "prisms and polyhedra)")
    # a polyhedron's entries may be its face stream (legacy files), not point ids
    nodes = np.repeat(types != POLYHEDRON, np.diff(grid.offsets))
    conn = np.asarray(grid.connectivity, dtype=np.int64)[nodes]
    if len(conn) and (int(conn.min()) < 0 or int(conn.max()) >= n_points):
        bad = int(conn.min()) if int(conn.min()) < 0 else int(conn.max())
        raise MeshReadError(path, f"a cell refers to point {bad}; the file has {n_points} points")
    volume = np.isin(types, list(SHAPED) + list(PRISMS) + [POLYHEDRON])
    file_ids = np.flatnonzero(volume)
    if not len(file_ids):
        raise MeshReadError(path, "no volume cells (tetrahedra, hexahedra, wedges, pyramids, "
                                  "prisms or polyhedra)")
    cell_of = np.full(len(types), -1, dtype=np.int64)
    cell_of[file_ids] = np.arange(len(file_ids))
    n_cells = len(file_ids)
    halves: dict[int, list[HalfFaces]] = {}
    shapes = []
    for vtk_type, (shape, order) in SHAPED.items():
        rows = np.flatnonzero(types == vtk_type)
        if not len(rows):
            continue
        corners = _nodes(grid, rows, order, path, vtk_type)
        shapes.append((shape, cell_of[rows], corners))
        for template in FACES[shape]:
            k = 3 if template[3] == template[2] else 4
            halves.setdefault(k, []).append(HalfFaces(corners[:, list(template[:k])],
                                                      cell_of[rows]))
    for vtk_type, sides in PRISMS.items():
        rows = np.flatnonzero(types == vtk_type)
        if len(rows):
            _prism_halves(halves, _nodes(grid, rows, tuple(range(2 * sides)), path, vtk_type),
                          cell_of[rows], sides)
    poly = np.flatnonzero(types == POLYHEDRON)
    if len(poly):
        _polyhedron_halves(halves, grid, poly, cell_of[poly], n_points)
    n_half = sum(len(h.cells) for parts in halves.values() for h in parts)
    check_memory(path, face_mesh_counts(n_cells, n_half // 2), "the cells read",
                 options.memory_limit, cells=n_cells)
    points = checked_points(path, grid.points, options.scale_to_m)
    paired = pair_polygons(halves, points, n_cells)
    names, face_group, unmatched, internal, multi = _groups(grid, types, paired, options,
                                                            n_points)
    shape_blocks = _shape_blocks(shapes)
    ignored = {TYPE_NAMES[t]: int(np.count_nonzero(types == t)) for t in IGNORED
               if np.any(types == t)}
    notes = tuple(f"{n} {name} cells left out" for name, n in sorted(ignored.items()))
    quadratic = int(np.count_nonzero(np.isin(types, [22, 23, 24, 25, 26, 27, 28, 29])))
    if quadratic:
        notes += (f"{quadratic} quadratic cells read by their corner nodes; curved edges "
                  "ignored",)
    data = mesh_from_faces(
        path=path, points=points, dim=3, face_offsets=paired.offsets,
        face_points=paired.points, owner=paired.owner, neighbour=paired.neighbour,
        n_cells=n_cells, face_group=face_group, group_names=names, shapes=shape_blocks,
        notes=notes, point_data=_point_fields(grid, n_points),
        cell_data=_cell_fields(grid, file_ids))
    report = ReadReport(nonmanifold=paired.nonmanifold, clashing=paired.clashing,
                        unmatched=unmatched, internal=internal, multi_group=multi)
    data = dataclasses.replace(
        data, report=report,
        file_cell_ids=None if len(file_ids) == len(types) else file_ids.astype(np.int64))
    return with_shapes(data)


def _nodes(grid: VtkGrid, rows: np.ndarray, order: tuple[int, ...], path: str,
           vtk_type: int) -> np.ndarray:
    """(n, len(order)) nodes of cells ``rows`` (all of one type), in ``order``."""
    start = grid.offsets[rows]
    count = grid.offsets[rows + 1] - start
    need = max(order) + 1
    if int(count.min()) < need:
        raise MeshReadError(grid.path, f"a cell of VTK type {vtk_type} has {int(count.min())} "
                                       f"nodes, expected at least {need}")
    return np.asarray(grid.connectivity)[start[:, None] + np.asarray(order)[None, :]].astype(
        np.int64)


def _prism_halves(halves, nodes: np.ndarray, cells: np.ndarray, sides: int) -> None:
    """Faces of pentagonal / hexagonal prisms: bottom ``0..n-1`` (VTK: counter-clockwise
    seen from the top ``n..2n-1``), top, and the side quadrilaterals."""
    n = sides
    halves.setdefault(n, []).append(HalfFaces(nodes[:, [0, *range(n - 1, 0, -1)]], cells))
    halves.setdefault(n, []).append(HalfFaces(nodes[:, n:2 * n], cells))
    for i in range(n):
        j = (i + 1) % n
        halves.setdefault(4, []).append(HalfFaces(nodes[:, [i, j, n + j, n + i]], cells))


def _polyhedron_halves(halves, grid: VtkGrid, rows: np.ndarray, cells: np.ndarray,
                       n_points: int) -> None:
    """Faces of polyhedra from the grid's face lists, grouped by size."""
    if grid.cell_faces is None:
        raise MeshReadError(grid.path, "the file has polyhedra but no face data for them")
    first, last = grid.cell_faces[rows], grid.cell_faces[rows + 1]
    count = last - first
    if int(count.min()) < 4:
        raise MeshReadError(grid.path, f"a polyhedron (cell {int(rows[np.argmin(count)])}) has "
                                       f"{int(count.min())} faces; a closed cell needs 4")
    faces = np.repeat(first, count) + (np.arange(int(count.sum()))
                                       - np.repeat(np.cumsum(count) - count, count))
    owner = np.repeat(cells, count)
    fo, fp = grid.face_offsets, np.asarray(grid.face_points, dtype=np.int64)
    if len(fp) and (int(fp.min()) < 0 or int(fp.max()) >= n_points):
        raise MeshReadError(grid.path, f"a polyhedron face refers to point {int(fp.max())}; "
                                       f"the file has {n_points} points")
    size = fo[faces + 1] - fo[faces]
    for k in np.unique(size):
        sel = np.flatnonzero(size == k)
        pts = fp[fo[faces[sel]][:, None] + np.arange(int(k))[None, :]]
        halves.setdefault(int(k), []).append(HalfFaces(pts, owner[sel], listed=True))


def _groups(grid: VtkGrid, types, paired, options: ReadOptions, n_points: int):
    """Group names, each face's group, and the polygons' read report counts."""
    rows = np.flatnonzero(np.isin(types, list(POLYGONS)))
    n_faces = len(paired.owner)
    none = np.full(n_faces, -1, dtype=np.int32)
    if not len(rows):
        return (), none, {}, {}, 0
    tags, names = _tags(grid, rows, options)
    if tags is None:
        return (), none, {}, {}, 0
    polygons = []
    for vtk_type, order in POLYGONS.items():
        sel = rows[types[rows] == vtk_type]
        if not len(sel):
            continue
        if order is None:                      # general polygons, by size
            size = grid.offsets[sel + 1] - grid.offsets[sel]
            for k in np.unique(size):
                part = sel[size == k]
                polygons.append((_nodes(grid, part, tuple(range(int(k))), grid.path, 7),
                                 np.searchsorted(rows, part)))
        else:
            polygons.append((_nodes(grid, sel, order, grid.path, vtk_type),
                             np.searchsorted(rows, sel)))
    face_of = match_polygons(paired.offsets, paired.points, polygons, n_points)
    tagged = tags >= 0
    labels = np.unique(tags[tagged])
    group_names = [names.get(int(t), f"tag-{int(t)}") for t in labels]
    n_groups = len(group_names)
    g = np.where(tagged, np.searchsorted(labels, tags), -1)
    face_group = none.copy()
    hit = tagged & (face_of >= 0) & (paired.neighbour[np.maximum(face_of, 0)] < 0)
    pairs = np.unique(face_of[hit] * max(n_groups, 1) + g[hit])
    pf, pg = pairs // max(n_groups, 1), pairs % max(n_groups, 1)
    # sorted by face then group: the first pair of a face holds its lowest group
    first = np.ones(len(pf), dtype=bool)
    first[1:] = pf[1:] != pf[:-1]
    face_group[pf[first]] = pg[first]
    multi = int(len(np.unique(pf[~first])))
    lost = np.bincount(g[tagged & (face_of < 0)], minlength=n_groups)
    inner = np.bincount(g[tagged & (face_of >= 0) & ~hit], minlength=n_groups)
    named = lambda c: {group_names[i]: int(v) for i, v in enumerate(c) if v}  # noqa: E731
    return tuple(group_names), face_group, named(lost), named(inner), multi


def _tags(grid: VtkGrid, rows: np.ndarray, options: ReadOptions):
    """Integer tag of each boundary polygon and the names of tags, or (None, {})."""
    if options.tag_array is not None:
        if options.tag_array not in grid.cell_data:
            raise MeshReadError(grid.path, f"no cell data array {options.tag_array!r} "
                                           f"(tag_array); arrays are "
                                           f"{sorted(grid.cell_data) or 'none'}")
        values = grid.cell_data[options.tag_array]
        names = {int(k): str(v) for k, v in options.tags.items()}
    elif "gmsh:physical" in grid.cell_data:
        values = grid.cell_data["gmsh:physical"]
        names = {int(np.atleast_1d(v)[0]): str(k) for k, v in grid.field_data.items()
                 if len(np.atleast_1d(v)) >= 2 and int(np.atleast_1d(v)[1]) == 2}
    else:
        return None, {}
    values = np.asarray(values)
    if values.dtype.kind not in "iuf" or values.ndim != 1:
        raise MeshReadError(grid.path, "the boundary tag array must hold one integer per cell")
    tags = values[rows].astype(np.int64)
    if not options.tag_array:
        tags = np.where(tags > 0, tags, -1)    # gmsh physical tag 0: no group
    return tags, names


def _shape_blocks(shapes) -> tuple[ShapeBlock, ...]:
    """One block per shape, cells ascending."""
    out = []
    for shape in ("tetra", "hexahedron", "wedge", "pyramid"):
        parts = [(c, n) for s, c, n in shapes if s == shape]
        if not parts:
            continue
        cells = np.concatenate([c for c, _ in parts])
        nodes = np.concatenate([n for _, n in parts]).reshape(-1, N_NODES[shape])
        order = np.argsort(cells, kind="stable")
        dtype = np.int32 if len(cells) < 2**31 else np.int64
        out.append(ShapeBlock(shape, cells[order].astype(dtype), nodes[order]))
    return tuple(out)


def _point_fields(grid: VtkGrid, n_points: int) -> dict[str, np.ndarray]:
    return {name: v for name, v in grid.point_data.items()
            if v.dtype.kind in "biuf" and len(v) == n_points}


def _cell_fields(grid: VtkGrid, file_ids: np.ndarray) -> dict[str, np.ndarray]:
    return {name: v[file_ids] for name, v in grid.cell_data.items()
            if v.dtype.kind in "biuf" and len(v) == len(grid.types)
            and name != "gmsh:physical"}
