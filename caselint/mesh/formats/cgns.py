"""CGNS meshes (HDF5 storage) read with h5py: unstructured and structured zones, boundary
conditions as named groups, zone interfaces merged.

The first ``CGNSBase_t`` is read (its ``[CellDimension, PhysicalDimension]`` gives 2-D or
3-D); every ``Zone_t`` under it is a cell zone of the mesh, or only the one named by the
case file's ``mesh.zone``. Points on 1-to-1 interfaces between zones are merged, so the
zones join into one mesh (a point pair that does not coincide is an error). Zones and
sections are read as described in :mod:`caselint.mesh.formats.cgns_zones`.

Nothing is read partly: a zone without zone sizes or coordinates, a section whose
connectivity does not match its ``ElementRange``, or element sections holding fewer
volume cells than the zone declares (a file holding only part of a mesh) are errors that
name the node. A file without the ``CGNSLibraryVersion`` node is read with a note.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.build import mesh_from_elements, mesh_from_faces
from caselint.mesh.formats.cgns_nodes import child, children, data, node_name, open_cgns, text
from caselint.mesh.formats.cgns_zones import (Zone, boundary_conditions, interface_pairs,
                                              structured, unstructured)
from caselint.mesh.groups import BoundaryElements
from caselint.mesh.model import MeshData
from caselint.mesh.pairing import ElementBlock
from caselint.mesh.readers import MeshReader, ReadOptions, checked_points
from caselint.mesh.shapes import with_shapes

_PAD = {"triangle": [0, 1, 2, 2], "quad": [0, 1, 2, 3], "line": [0, 1]}


def read_cgns(path: Path, options: ReadOptions) -> MeshData:
    """Read a CGNS/HDF5 mesh (see the module docstring)."""
    name = str(path)
    with open_cgns(path) as f:
        notes = [] if "CGNSLibraryVersion" in f else [
            "the file has no CGNSLibraryVersion node (not written through the CGNS library)"]
        bases = children(f, "CGNSBase_t")
        if not bases:
            raise MeshReadError(name, "no CGNSBase_t node: not a CGNS mesh, or an incomplete "
                                      "one")
        base = bases[0]
        dims = data(base)
        if dims is None or dims.size < 2 or int(dims.ravel()[0]) not in (2, 3):
            raise MeshReadError(name, f"{base.name}: the base gives no cell dimension (2 or 3)")
        dim = int(dims.ravel()[0])
        families = {node_name(fam): text(child(fam, "FamilyBC_t"))
                    for fam in children(base, "Family_t")}
        zones = _zones(name, base, dim, families, options.zone, options.memory_limit)
    if len(bases) > 1:
        notes.append(f"the first of {len(bases)} bases read ({node_name(base)})")
    if options.zone is not None:
        notes.append(f"zone {options.zone} read (mesh.zone)")
    points, maps = _merged_points(name, zones)
    points = checked_points(name, points, options.scale_to_m)
    names = tuple(sorted({g for z in zones for g in
                          [n for _, _, n in z.boundary if isinstance(n, str)]
                          + [n for n, _ in z.vertex_groups]}))
    types = {k: v for z in zones for k, v in z.types.items() if k in names}
    zone_names = tuple(z.name for z in zones) if len(zones) > 1 else ()
    if any(z.polyhedra is not None for z in zones) and len(zones) > 1:
        raise MeshReadError(name, "several zones, some of NGON_n/NFACE_n polyhedra: caselint "
                                  "reads such a zone on its own (set mesh.zone)")
    try:
        if zones[0].polyhedra is not None:
            mesh = _polyhedral(name, zones[0], points, dim, names, types, notes)
        else:
            mesh = _elements(name, zones, maps, points, dim, names, types, notes, zone_names)
    except ValueError as exc:           # inconsistent arrays the checks let through
        raise MeshReadError(name, str(exc)) from None
    return _vertex_groups(mesh, zones, maps, names)


def _zones(path: str, base, dim: int, families: dict, wanted: str | None,
           limit=None) -> list[Zone]:
    nodes = children(base, "Zone_t")
    if not nodes:
        raise MeshReadError(path, f"{base.name} holds no Zone_t node (no mesh)")
    if wanted is not None:
        chosen = [z for z in nodes if node_name(z) == str(wanted)]
        if not chosen:
            raise MeshReadError(path, f"mesh.zone {wanted!r} is not a zone of this file (zones "
                                      f"{', '.join(node_name(z) for z in nodes)})")
        nodes = chosen
    from caselint.mesh.limits import check_memory

    zones, declared = [], 0
    for zn in nodes:
        sizes = data(zn)
        kind = text(child(zn, "ZoneType_t"))
        if sizes is None:
            raise MeshReadError(path, f"{zn.name}: the zone holds no zone sizes (vertex and "
                                      "cell counts), which CGNS requires: an incomplete file")
        if kind not in ("Structured", "Unstructured"):
            raise MeshReadError(path, f"{zn.name}: ZoneType is {kind or 'missing'}; expected "
                                      "Structured or Unstructured")
        sizes = sizes.reshape(3, -1).astype(np.int64)     # rows: vertices, cells, boundary
        declared += int(np.prod(sizes[1][:dim])) if kind == "Structured" else int(sizes[1][0])
        check_memory(path, {"cell": declared}, "the zone sizes", limit)   # before reading the zone
        if kind == "Structured":
            z = structured(path, zn, dim, sizes)
            shape = tuple(int(v) for v in sizes[0][:dim])[::-1]
        else:
            z = unstructured(path, zn, dim, int(sizes[0][0]), int(sizes[1][0]))
            shape = None
        boundary_conditions(path, zn, z, families, shape)
        z.shape = shape
        z.pairs = interface_pairs(path, zn, shape)
        zones.append(z)
    return zones


def _range_ids(rng: np.ndarray, shape: tuple[int, ...], transform=None, origin=None):
    """Point ids (in a grid of ``shape``, HDF5 order) of an index range, optionally mapped
    through a 1-to-1 ``transform`` onto a donor range starting at ``origin``."""
    lo, hi = rng[0], rng[1]
    step = np.where(hi >= lo, 1, -1)
    axes = [np.arange(a, b + s, s) - 1 for a, b, s in zip(lo, hi, step)]
    grid = np.meshgrid(*axes, indexing="ij")                  # i, j, k order
    index = np.stack([g.ravel() for g in grid])
    if transform is not None:
        delta = index - (lo - 1)[:, None]
        out = np.empty_like(index)
        for j, t in enumerate(transform):
            out[abs(int(t)) - 1] = np.sign(t) * delta[j]
        index = out + (origin - 1)[:, None]
    return np.ravel_multi_index(index[::-1], shape)


def _merged_points(path: str, zones: list[Zone]):
    """All points, with the point pairs of zone interfaces made one; and per zone the map
    from its local point ids to the merged ones."""
    counts = [len(z.points) for z in zones]
    offset = np.concatenate([[0], np.cumsum(counts)]).astype(np.int64)
    points = np.concatenate([z.points for z in zones])
    index = {z.name: i for i, z in enumerate(zones)}
    a_all, b_all = [], []
    for i, z in enumerate(zones):
        for kind, mine, donor, theirs, transform in z.pairs:
            if donor not in index:
                continue                        # the donor zone was not read (mesh.zone)
            d = index[donor]
            if kind == "range":
                d_shape = zones[d].shape
                a = _range_ids(mine, z.shape)
                b = (_range_ids(mine, d_shape, transform, theirs[0])
                     if d_shape is not None else None)
                if b is None or b.max(initial=0) >= counts[d]:
                    raise MeshReadError(path, f"zone {z.name}: a 1-to-1 interface with {donor} "
                                              "lies outside the donor zone")
            else:
                a, b = mine, theirs
            a_all.append(offset[i] + a)
            b_all.append(offset[d] + b)
    label = np.arange(len(points))
    if a_all:
        a, b = np.concatenate(a_all), np.concatenate(b_all)
        gap = float(np.abs(points[a] - points[b]).max(initial=0.0))
        span = float(np.ptp(points, axis=0).max()) if len(points) else 0.0
        if gap > 1e-9 * max(span, 1e-300):
            raise MeshReadError(path, f"points paired by a zone interface lie {gap:.3g} apart; "
                                      "1-to-1 interfaces must join coinciding points")
        while True:                         # smallest id of each joined set, by propagation
            low = np.minimum(label[a], label[b])
            before = label.copy()
            np.minimum.at(label, a, low)
            np.minimum.at(label, b, low)
            label = label[label]
            if np.array_equal(label, before):
                break
    root = label == np.arange(len(points))
    new = np.cumsum(root) - 1
    merged = new[label]
    maps = [merged[offset[i]:offset[i + 1]] for i in range(len(zones))]
    return points[root], maps


def _elements(path, zones, maps, points, dim, names, types, notes, zone_names) -> MeshData:
    blocks, zone_of_cell, file_rank, start = [], [], [], 0
    verts, element, group = [], [], []
    for zi, (z, m) in enumerate(zip(zones, maps)):
        ids = np.concatenate([e for _, _, e in z.blocks])
        rank = np.empty(len(ids), dtype=np.int64)       # the cell's place in element-id order
        rank[np.argsort(ids, kind="stable")] = np.arange(len(ids)) + start
        file_rank.append(rank)
        for kind, conn, _ in z.blocks:
            blocks.append(ElementBlock(kind, m[conn].astype(np.int32), start))
            zone_of_cell.append(np.full(len(conn), zi, dtype=np.int32))
            start += len(conn)
        faces = [(k, c, ids) for k, c, ids in z.boundary if k != "ids"]
        if not faces:
            if any(k == "ids" for k, _, _ in z.boundary):
                raise MeshReadError(path, f"zone {z.name}: a BC names boundary elements but "
                                          "the zone has no boundary element sections")
            continue
        ids = np.concatenate([i for _, _, i in faces])
        rows = np.concatenate([m[c][:, _PAD[k]] for k, c, _ in faces])
        base = sum(len(v) for v in verts)
        verts.append(rows)
        order = np.argsort(ids)
        for k, bc_ids, gname in z.boundary:
            if k != "ids":
                continue
            at = np.searchsorted(ids[order], bc_ids)
            found = (at < len(ids)) & (ids[order][np.minimum(at, len(ids) - 1)] == bc_ids)
            if not found.all():
                raise MeshReadError(path, f"zone {z.name}: BC {gname!r} names element "
                                          f"{int(bc_ids[~found][0])}, which is not a boundary "
                                          "element of the zone")
            element.append(base + order[at])
            group.append(np.full(len(at), names.index(gname), dtype=np.int32))
    boundary = None
    if verts:
        boundary = BoundaryElements(np.concatenate(verts),
                                    np.concatenate(element) if element else np.zeros(0, int),
                                    np.concatenate(group) if group else np.zeros(0, np.int32))
    mesh = mesh_from_elements(path=path, points=points, dim=dim, blocks=blocks,
                              boundary=boundary, group_names=names, group_types=types,
                              notes=tuple(notes),
                              cell_zone=np.concatenate(zone_of_cell) if zone_names else None,
                              zone_names=zone_names)
    rank = np.concatenate(file_rank)
    if mesh.file_cell_ids is None or np.array_equal(rank, np.arange(len(rank))):
        return mesh
    # MIXED sections are split by type: name cells by their place in the file
    return replace(mesh, file_cell_ids=rank[mesh.file_cell_ids])


def _polyhedral(path, z: Zone, points, dim, names, types, notes) -> MeshData:
    p = z.polyhedra
    face_group = np.full(len(p["owner"]), -1, dtype=np.int32)
    for k, ids, gname in z.boundary:
        if k == "ids":
            face = ids - p["first"]
            if face.min(initial=0) < 0 or face.max(initial=0) >= len(face_group):
                raise MeshReadError(path, f"zone {z.name}: BC {gname!r} names elements that "
                                          "are not NGON_n faces")
            face_group[face] = names.index(gname)
    return with_shapes(mesh_from_faces(
        path=path, points=points, dim=dim, face_offsets=p["offsets"], face_points=p["points"],
        owner=p["owner"], neighbour=p["neighbour"], n_cells=p["n_cells"],
        face_group=face_group, group_names=names, group_types=types, notes=tuple(notes)))


def _vertex_groups(mesh: MeshData, zones, maps, names) -> MeshData:
    """Boundary faces not yet in a group join the first vertex-located BC holding all
    their points."""
    sets = [(gname, m[ids]) for z, m in zip(zones, maps) for gname, ids in z.vertex_groups]
    if not sets:
        return mesh
    file_point = (mesh.file_point_ids if mesh.file_point_ids is not None
                  else np.arange(mesh.n_points))
    face_group = mesh.face_group.copy()
    starts = mesh.face_offsets[:-1]
    for gname, ids in sorted(sets, key=lambda s: names.index(s[0])):
        inside = np.zeros(int(max(file_point.max(initial=0), ids.max(initial=0))) + 1, bool)
        inside[ids] = True
        all_in = np.minimum.reduceat(inside[file_point[mesh.face_points]].astype(np.int8),
                                     starts) > 0
        take = all_in & (mesh.neighbour < 0) & (face_group < 0)
        face_group[take] = names.index(gname)
    return replace(mesh, face_group=face_group)


def looks_like_cgns(path: Path) -> bool:
    """Every ``.cgns`` file is this reader's (it explains ADF files itself)."""
    return path.is_file()


READER = MeshReader(
    name="cgns", description="CGNS meshes stored in HDF5 (unstructured sections incl. MIXED "
    "and NGON_n/NFACE_n, structured multi-zone grids, boundary conditions)",
    read=read_cgns, suffixes=(".cgns",), accepts=looks_like_cgns)
