"""CGNS/HDF5 files written with h5py from the SIDS-to-HDF5 mapping (no CGNS library):
every node a group with ``name``/``label``/``type``/``flags`` attributes and its data in
``" data"``, arrays with the CGNS dimensions reversed (Fortran order).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from mixed_mesh import SIDE_ROLES, ElementMesh

CGNS_TYPE = {"tetra": 10, "pyramid": 12, "wedge": 14, "hexahedron": 17, "triangle": 5,
             "quad": 7, "line": 3}
BC_TYPE = {"inlet": "BCInflow", "outlet": "BCOutflow", "wall": "BCWall",
           "symmetry": "BCSymmetryPlane"}


def node(parent, name: str, label: str, value=None, kind: str | None = None):
    """A CGNS node; ``value`` text (C1), integers (I4/I8) or floats (R8)."""
    g = parent.create_group(name)
    g.attrs["name"] = np.bytes_(name.ljust(33, "\0")[:33])
    g.attrs["label"] = np.bytes_(label.ljust(33, "\0")[:33])
    if value is None:
        kind = "MT"
    elif isinstance(value, str):
        value, kind = np.frombuffer(value.encode(), dtype=np.int8), "C1"
    else:
        value = np.asarray(value)
        kind = kind or {"i": "I8" if value.dtype.itemsize == 8 else "I4",
                        "f": "R8"}[value.dtype.kind]
    g.attrs["type"] = np.bytes_(kind.ljust(3, "\0")[:3])
    g.attrs["flags"] = np.array([1], dtype=np.int32)
    if value is not None:
        g.create_dataset(" data", data=value)
    return g


def _file(path: Path, dim: int, version: bool = True):
    import h5py

    f = h5py.File(path, "w")
    if version:
        node(f, "CGNSLibraryVersion", "CGNSLibraryVersion_t", np.array([4.2], np.float32))
    base = node(f, "Base", "CGNSBase_t", np.array([dim, 3], np.int32))
    for group, role in sorted(SIDE_ROLES.items()):
        fam = node(base, group, "Family_t")
        node(fam, "FamilyBC", "FamilyBC_t", BC_TYPE[role])
    return f, base


def _zone(base, name: str, n_vertex: int, n_cell: int, points: np.ndarray, kind="Unstructured",
          sizes=None):
    zone = node(base, name, "Zone_t", np.array([[n_vertex], [n_cell], [0]], np.int64)
                if sizes is None else sizes)
    node(zone, "ZoneType", "ZoneType_t", kind)
    grid = node(zone, "GridCoordinates", "GridCoordinates_t")
    for axis, c in enumerate("XYZ"):
        node(grid, f"Coordinate{c}", "DataArray_t", np.ascontiguousarray(points[..., axis]))
    return zone


def _bc(zbc, name: str, family: str, ids=None, rng=None, location="FaceCenter"):
    bc = node(zbc, name, "BC_t", "FamilySpecified")
    node(bc, "FamilyName", "FamilyName_t", family)
    node(bc, "GridLocation", "GridLocation_t", location)
    if rng is not None:
        node(bc, "PointRange", "IndexRange_t", np.asarray(rng, np.int64))
    else:
        node(bc, "PointList", "IndexArray_t", np.asarray(ids, np.int64).reshape(-1, 1))


def write_cgns_elements(mesh: ElementMesh, path: Path, *, mixed: bool = False,
                        offsets: bool = True, zone_sizes: bool = True,
                        drop_last_block: bool = False, version: bool = True) -> Path:
    """The element mesh as one unstructured zone: a section per block (or one MIXED section,
    with or without ElementStartOffset), a section per boundary block and a BC for each
    (element range, FamilyName = the side)."""
    f, base = _file(path, 3, version)
    blocks = mesh.blocks[:-1] if drop_last_block else mesh.blocks
    n_cells = mesh.n_cells
    zone = _zone(base, "fluid", len(mesh.points), n_cells, mesh.points)
    if not zone_sizes:
        del zone[" data"]
    first = 1
    if mixed:
        rows = [np.concatenate([[CGNS_TYPE[t]], c + 1]) for t, conn in blocks for c in conn]
        sec = node(zone, "Cells", "Elements_t", np.array([20, 0], np.int32))
        node(sec, "ElementRange", "IndexRange_t", np.array([first, first + len(rows) - 1]))
        node(sec, "ElementConnectivity", "DataArray_t", np.concatenate(rows).astype(np.int64))
        if offsets:
            node(sec, "ElementStartOffset", "DataArray_t",
                 np.concatenate([[0], np.cumsum([len(r) for r in rows])]).astype(np.int64))
        first += len(rows)
    else:
        for i, (t, conn) in enumerate(blocks):
            sec = node(zone, f"Cells{i}", "Elements_t", np.array([CGNS_TYPE[t], 0], np.int32))
            node(sec, "ElementRange", "IndexRange_t", np.array([first, first + len(conn) - 1]))
            node(sec, "ElementConnectivity", "DataArray_t", (conn + 1).ravel().astype(np.int32))
            first += len(conn)
    zbc = node(zone, "ZoneBC", "ZoneBC_t")
    for i, (t, conn, group) in enumerate(mesh.boundary):
        sec = node(zone, f"Boundary{i}", "Elements_t", np.array([CGNS_TYPE[t], 0], np.int32))
        rng = [first, first + len(conn) - 1]
        node(sec, "ElementRange", "IndexRange_t", np.array(rng))
        node(sec, "ElementConnectivity", "DataArray_t", (conn + 1).ravel().astype(np.int32))
        _bc(zbc, f"{group}-{i}", group, rng=np.array(rng))
        first += len(conn)
    f.close()
    return path


def write_cgns_ngon(data, path: Path, *, old_style: bool = False) -> Path:
    """A MeshData as one zone of NGON_n faces and NFACE_n cells (+ owner, - neighbour);
    BCs by PointList of face element ids; ``old_style``: counts inline (CGNS 3)."""
    f, base = _file(path, 3)
    zone = _zone(base, "poly", data.n_points, data.n_cells, data.points)
    sizes = np.diff(data.face_offsets)
    ngon = node(zone, "Faces", "Elements_t", np.array([22, 0], np.int32))
    node(ngon, "ElementRange", "IndexRange_t", np.array([1, data.n_faces]))
    faces = data.face_points.astype(np.int64) + 1
    if old_style:
        conn = np.insert(faces, data.face_offsets[:-1], sizes)
        node(ngon, "ElementConnectivity", "DataArray_t", conn)
    else:
        node(ngon, "ElementStartOffset", "DataArray_t", data.face_offsets.astype(np.int64))
        node(ngon, "ElementConnectivity", "DataArray_t", faces)
    fid = np.arange(1, data.n_faces + 1)
    inner = data.neighbour >= 0
    cell = np.concatenate([data.owner, data.neighbour[inner]])
    ref = np.concatenate([fid, -fid[inner]])
    order = np.argsort(cell, kind="stable")
    counts = np.bincount(cell, minlength=data.n_cells)
    nface = node(zone, "Cells", "Elements_t", np.array([23, 0], np.int32))
    node(nface, "ElementRange", "IndexRange_t",
         np.array([data.n_faces + 1, data.n_faces + data.n_cells]))
    if old_style:
        node(nface, "ElementConnectivity", "DataArray_t",
             np.insert(ref[order], np.concatenate([[0], np.cumsum(counts)[:-1]]), counts))
    else:
        node(nface, "ElementStartOffset", "DataArray_t",
             np.concatenate([[0], np.cumsum(counts)]).astype(np.int64))
        node(nface, "ElementConnectivity", "DataArray_t", ref[order])
    zbc = node(zone, "ZoneBC", "ZoneBC_t")
    for g, name in enumerate(data.group_names):
        _bc(zbc, name, name, ids=np.flatnonzero(data.face_group == g) + 1)
    f.close()
    return path


def write_cgns_structured(blocks: list[tuple], path: Path, *, interfaces: bool = True) -> Path:
    """Structured zones side by side in x (each ``(xs, ys, zs)``, sharing the x planes
    where they meet), joined by 1-to-1 interfaces; sides as BCs by vertex PointRange."""
    f, base = _file(path, 3)
    names = [f"block{i + 1}" for i in range(len(blocks))]
    for i, (xs, ys, zs) in enumerate(blocks):
        ni, nj, nk = len(xs), len(ys), len(zs)
        grid = np.stack(np.meshgrid(zs, ys, xs, indexing="ij"), -1)[..., ::-1]   # (k, j, i, xyz)
        sizes = np.array([[ni, nj, nk], [ni - 1, nj - 1, nk - 1], [0, 0, 0]], np.int64)
        zone = _zone(base, names[i], 0, 0, grid, kind="Structured", sizes=sizes)
        zbc = node(zone, "ZoneBC", "ZoneBC_t")
        sides = {"walls": [([1, 1, 1], [ni, 1, nk]), ([1, nj, 1], [ni, nj, nk])],
                 "floor": [([1, 1, 1], [ni, nj, 1])], "top": [([1, 1, nk], [ni, nj, nk])]}
        if i == 0:
            sides["inlet"] = [([1, 1, 1], [1, nj, nk])]
        if i == len(blocks) - 1:
            sides["outlet"] = [([ni, 1, 1], [ni, nj, nk])]
        for group, ranges in sorted(sides.items()):
            for r, (lo, hi) in enumerate(ranges):
                _bc(zbc, f"{group}{r}", group, rng=np.array([lo, hi]), location="Vertex")
        if not interfaces:
            continue
        zgc = node(zone, "ZoneGridConnectivity", "ZoneGridConnectivity_t")
        if i + 1 < len(blocks):
            gc = node(zgc, f"to-{names[i + 1]}", "GridConnectivity1to1_t", names[i + 1])
            node(gc, "PointRange", "IndexRange_t", np.array([[ni, 1, 1], [ni, nj, nk]]))
            node(gc, "PointRangeDonor", "IndexRange_t", np.array([[1, 1, 1], [1, nj, nk]]))
            node(gc, "Transform", '"int[IndexDimension]"', np.array([1, 2, 3], np.int32))
        if i > 0:
            gc = node(zgc, f"to-{names[i - 1]}", "GridConnectivity1to1_t", names[i - 1])
            pni = len(blocks[i - 1][0])
            node(gc, "PointRange", "IndexRange_t", np.array([[1, 1, 1], [1, nj, nk]]))
            node(gc, "PointRangeDonor", "IndexRange_t", np.array([[pni, 1, 1], [pni, nj, nk]]))
            node(gc, "Transform", '"int[IndexDimension]"', np.array([1, 2, 3], np.int32))
    f.close()
    return path
