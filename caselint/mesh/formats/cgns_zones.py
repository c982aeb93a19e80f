"""One CGNS zone as caselint reads it: points, cells, boundary conditions, interfaces.

Unstructured zones hold element sections (``Elements_t``): one element type per section,
``MIXED`` (each element led by its type code), or ``NGON_n`` faces with ``NFACE_n``
cells (signed face ids: positive where the face normal points out of the cell). Element
ids count from 1 across the zone's sections (``ElementRange``); ``ElementStartOffset``
(CGNS 4) gives where each element starts, older files lead each NGON face with its node
count. Structured zones are read as hexahedra (quadrilaterals in 2-D) on their index grid.

Boundary conditions (``ZoneBC_t``/``BC_t``) name the boundary by ``PointRange`` or
``PointList``: of boundary elements (``GridLocation`` ``FaceCenter``/``EdgeCenter`` on
unstructured zones) or of vertices (``Vertex``, the SIDS default), a face being in the
group when all its points are. The group is named by ``FamilyName`` when present, else by
the BC's own name; its role comes from the BC type (or the family's ``FamilyBC``).
1-to-1 interfaces (``GridConnectivity1to1_t`` with ``Transform``, or
``GridConnectivity_t`` with vertex ``PointList``/``PointListDonor``) give pairs of points
that are one point of the merged mesh.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.formats.cgns_nodes import (ELEMENT_TYPES, NODE_COUNTS, child, children,
                                              data, node_name, text, where)
from caselint.mesh.formats.text_tables import record_starts
from caselint.mesh.orientation import reverse_faces

#: BC types (BCType_t) and the role they give; the rest give none.
BC_ROLES: dict[str, str] = {
    "BCWall": "wall", "BCWallViscous": "wall", "BCWallViscousHeatFlux": "wall",
    "BCWallViscousIsothermal": "wall",
    "BCWallInviscid": "symmetry",          # a slip wall: no boundary layer to resolve
    "BCSymmetryPlane": "symmetry", "BCSymmetryPolar": "symmetry",
    "BCAxisymmetricWedge": "symmetry", "BCInflow": "inlet", "BCInflowSubsonic": "inlet",
    "BCInflowSupersonic": "inlet", "BCTunnelInflow": "inlet", "BCOutflow": "outlet",
    "BCOutflowSubsonic": "outlet", "BCOutflowSupersonic": "outlet",
    "BCTunnelOutflow": "outlet", "BCFarfield": "open",
}


@dataclass
class Zone:
    """What one zone contributes; point and element ids local to the zone, from 0."""

    name: str
    dim: int
    points: np.ndarray
    blocks: list = field(default_factory=list)          # (type, (n, k) corners, element ids)
    boundary: list = field(default_factory=list)        # (type, (m, k) corners, group)
    vertex_groups: list = field(default_factory=list)   # (group, point ids)
    types: dict = field(default_factory=dict)           # group -> role word
    polyhedra: dict | None = None                       # NGON/NFACE faces, see below
    pairs: list = field(default_factory=list)           # interfaces, see interface_pairs
    shape: tuple[int, ...] | None = None                # vertex grid (k, j, i) if structured

    @property
    def n_cells(self) -> int:
        if self.polyhedra is not None:
            return self.polyhedra["n_cells"]
        return sum(len(c) for _, c, _ in self.blocks)


def _fail(path: str, node, what: str):
    raise MeshReadError(path, f"{where(node)}: {what}")


def coordinates(path: str, zone, dim: int, count: int) -> np.ndarray:
    """(count, 3) point coordinates of a zone (CoordinateX/Y/Z, flattened i fastest)."""
    grid = child(zone, "GridCoordinates_t", "GridCoordinates") or child(zone, "GridCoordinates_t")
    if grid is None:
        _fail(path, zone, "has no GridCoordinates (the CGNS structure requires it)")
    out = np.zeros((count, 3))
    for axis, name in enumerate("XYZ"[:dim]):
        node = child(grid, "DataArray_t", f"Coordinate{name}")
        values = data(node)
        if values is None:
            _fail(path, grid, f"has no Coordinate{name}")
        if values.size != count:
            _fail(path, node, f"holds {values.size} values; the zone sizes declare {count} "
                              "vertices")
        out[:, axis] = values.ravel()
    return out


def _range(path: str, node) -> np.ndarray:
    values = data(node)
    if values is None or values.size < 2:
        _fail(path, node, "has no range data")
    return values.reshape(2, -1).astype(np.int64)        # HDF5 order: [begin, end] rows


def unstructured(path: str, zone, dim: int, n_vertex: int, n_cell: int) -> Zone:
    """Points, cells and boundary elements of an unstructured zone."""
    z = Zone(node_name(zone), dim, coordinates(path, zone, dim, n_vertex))
    volume = ("tetra", "pyramid", "wedge", "hexahedron") if dim == 3 else ("triangle", "quad")
    faces = ("triangle", "quad") if dim == 3 else ("line",)
    ngon = nface = None
    for section in sorted(children(zone, "Elements_t"), key=lambda s: int(_range(path, child(
            s, "IndexRange_t", "ElementRange")).min()) if child(s, "IndexRange_t") else 0):
        head = data(section)
        rng = child(section, "IndexRange_t", "ElementRange")
        conn = data(child(section, "DataArray_t", "ElementConnectivity"))
        if head is None or rng is None or conn is None:
            _fail(path, section, "lacks its element type, ElementRange or ElementConnectivity")
        code = int(head.ravel()[0])
        first, last = (int(v) for v in _range(path, rng).ravel()[:2])
        count = last - first + 1
        kind = ELEMENT_TYPES.get(code, ("unknown", 0))[0]
        conn = conn.ravel().astype(np.int64)
        offsets = data(child(section, "DataArray_t", "ElementStartOffset"))
        if kind in ("NGON_n", "NFACE_n"):
            if offsets is None:                       # CGNS 3: each list led by its count
                starts = record_starts(conn, count, 0, path, where(section))
                sizes = conn[starts]
                keep = np.ones(len(conn), bool)
                keep[starts] = False
                conn = conn[keep]
                offsets = np.concatenate([[0], np.cumsum(sizes)])
            offsets = offsets.ravel().astype(np.int64)
            if len(offsets) != count + 1 or offsets[-1] != len(conn):
                _fail(path, section, f"ElementRange declares {count} elements; the "
                                     "connectivity and offsets disagree")
            entry = {"first": first, "offsets": offsets, "ids": conn}
            if kind == "NGON_n":
                ngon = entry
            else:
                nface = entry
            continue
        if kind == "MIXED":
            starts = (offsets.ravel()[:-1].astype(np.int64) if offsets is not None else
                      record_starts(conn, count, 0, path, where(section), NODE_COUNTS))
            codes = conn[np.minimum(starts, len(conn) - 1)] if len(conn) else starts
        elif code in ELEMENT_TYPES and NODE_COUNTS[code]:
            k = int(NODE_COUNTS[code])
            if conn.size != count * k:
                _fail(path, section, f"ElementRange declares {count} {kind} elements of {k} "
                                     f"nodes; the connectivity holds {conn.size} node ids")
            starts = np.arange(count, dtype=np.int64) * (k + 1)
            conn = np.insert(conn, np.arange(count) * k, code)
            codes = np.full(count, code)
        else:
            _fail(path, section, f"element type {code} is not a CGNS element type caselint "
                                 "reads")
        if len(starts) != count:
            _fail(path, section, f"ElementRange declares {count} elements, the section "
                                 f"holds {len(starts)}")
        for c in np.unique(codes):
            base, k = ELEMENT_TYPES.get(int(c), ("unknown", 0))
            rows = np.flatnonzero(codes == c)
            corners = {"tetra": 4, "pyramid": 5, "wedge": 6, "hexahedron": 8, "triangle": 3,
                       "quad": 4, "line": 2}.get(base)
            if corners is None:
                continue                                # nodes: nothing to read
            nodes = conn[starts[rows, None] + 1 + np.arange(corners)] - 1
            if nodes.size and (nodes.min() < 0 or nodes.max() >= n_vertex):
                _fail(path, section, f"refers to vertex {int(nodes.max()) + 1}; the zone has "
                                     f"{n_vertex}")
            if base in volume:
                z.blocks.append((base, nodes, first + rows))
            elif base in faces:                     # boundary elements, by element id
                z.boundary.append((base, nodes, first + rows))
    if ngon is not None:
        if z.blocks:
            _fail(path, zone, "mixes NGON_n/NFACE_n with element sections; caselint reads one "
                              "or the other in a zone")
        z.polyhedra = _polyhedra(path, zone, ngon, nface, n_vertex)
    if z.n_cells != n_cell:
        _fail(path, zone, f"declares {n_cell} cells (its zone sizes) but its element sections "
                          f"hold {z.n_cells} volume cells: the file holds only part of the mesh")
    return z


def _polyhedra(path, zone, ngon, nface, n_vertex) -> dict:
    """Faces with owner and neighbour from NGON_n faces and NFACE_n cells."""
    if nface is None:
        _fail(path, zone, "has NGON_n faces but no NFACE_n cells")
    n_faces = len(ngon["offsets"]) - 1
    refs, cell_off = nface["ids"], nface["offsets"]
    n_cells = len(cell_off) - 1
    cell = np.repeat(np.arange(n_cells), np.diff(cell_off))
    face = np.abs(refs) - ngon["first"]
    if len(face) and (face.min() < 0 or face.max() >= n_faces):
        _fail(path, zone, "NFACE_n refers to an element that is not an NGON_n face")
    owner = np.full(n_faces, -1, np.int64)
    inner = np.full(n_faces, -1, np.int64)
    out_of = refs > 0
    if np.bincount(face[out_of], minlength=n_faces).max(initial=0) > 1 or np.bincount(
            face[~out_of], minlength=n_faces).max(initial=0) > 1:
        _fail(path, zone, "a face is listed with the same orientation by two cells")
    owner[face[out_of]] = cell[out_of]
    inner[face[~out_of]] = cell[~out_of]
    flip = owner < 0                         # only a cell it points into: turn it round
    if (flip & (inner < 0)).any():
        _fail(path, zone, f"{int((flip & (inner < 0)).sum())} NGON_n faces belong to no cell")
    owner = np.where(flip, inner, owner)
    neighbour = np.where(flip, -1, inner)
    points = ngon["ids"] - 1
    if len(points) and (points.min() < 0 or points.max() >= n_vertex):
        _fail(path, zone, "an NGON_n face refers to a vertex outside the zone")
    offsets = ngon["offsets"]
    points = reverse_faces(offsets, points, flip)
    return {"offsets": offsets, "points": points, "owner": owner, "neighbour": neighbour,
            "n_cells": n_cells, "first": ngon["first"]}


def boundary_conditions(path: str, zone, z: Zone, families: dict[str, str],
                        shape: tuple[int, ...] | None) -> None:
    """Groups of the zone's BCs: element ids -> ``z.boundary`` membership, vertices ->
    ``z.vertex_groups`` (``shape``: the vertex grid of a structured zone, else None)."""
    zbc = child(zone, "ZoneBC_t")
    for bc in children(zbc, "BC_t") if zbc is not None else []:
        family = text(child(bc, "FamilyName_t"))
        name = family or node_name(bc)
        bc_type = text(bc)
        if bc_type == "FamilySpecified" or (not bc_type and family):
            bc_type = families.get(family, "")
        if name not in z.types and BC_ROLES.get(bc_type):
            z.types[name] = BC_ROLES[bc_type]
        location = text(child(bc, "GridLocation_t")) or "Vertex"
        prange, plist = child(bc, "IndexRange_t", "PointRange"), child(bc, "IndexArray_t")
        if prange is None and plist is None:
            _fail(path, bc, "has neither PointRange nor PointList")
        if shape is not None:                                  # structured: index boxes
            lo, hi = _range(path, prange) if prange is not None else (None, None)
            if lo is None:
                ids = data(plist).reshape(-1, len(shape)).astype(np.int64) - 1
                z.vertex_groups.append((name, np.ravel_multi_index(ids.T[::-1], shape)))
                continue
            if location != "Vertex":            # face-centred range: one more vertex
                hi = hi + (hi != lo)
            axes = [np.arange(a - 1, b) for a, b in zip(lo, hi)]
            grid = np.meshgrid(*axes[::-1], indexing="ij")
            z.vertex_groups.append((name, np.ravel_multi_index([g.ravel() for g in grid],
                                                               shape)))
            continue
        ids = (np.arange(_range(path, prange).ravel()[0], _range(path, prange).ravel()[1] + 1)
               if prange is not None else data(plist).ravel().astype(np.int64))
        if location == "Vertex":
            z.vertex_groups.append((name, ids - 1))
        else:
            z.boundary.append(("ids", ids, name))


def interface_pairs(path: str, zone, shape: tuple[int, ...] | None) -> list:
    """(local point ids, donor zone name, donor point ranges or ids) of 1-to-1 interfaces."""
    out = []
    zgc = child(zone, "ZoneGridConnectivity_t")
    if zgc is None:
        return out
    for gc in children(zgc, "GridConnectivity1to1_t"):
        donor = text(gc)
        rng = _range(path, child(gc, "IndexRange_t", "PointRange"))
        rng_d = _range(path, child(gc, "IndexRange_t", "PointRangeDonor"))
        node = next((gc[k] for k in gc.keys() if k != " data" and node_name(gc[k]) ==
                     "Transform"), None)
        transform = data(node) if node is not None else None
        if transform is None:                      # SIDS default: the identity
            transform = np.arange(1, len(shape) + 1)
        out.append(("range", rng, donor, rng_d, np.asarray(transform).ravel()))
    for gc in children(zgc, "GridConnectivity_t"):
        mine = data(child(gc, "IndexArray_t", "PointList"))
        theirs = data(child(gc, "IndexArray_t", "PointListDonor"))
        if mine is None or theirs is None or mine.size != theirs.size:
            _fail(path, gc, "needs a vertex PointList and a PointListDonor of equal length")
        out.append(("list", mine.ravel() - 1, text(gc), theirs.ravel() - 1, None))
    return out


def structured(path: str, zone, dim: int, sizes: np.ndarray) -> Zone:
    """Hexahedra (quadrilaterals in 2-D) of a structured zone on its vertex grid."""
    shape_ijk = tuple(int(v) for v in sizes[0][:dim])
    count = int(np.prod(shape_ijk))
    z = Zone(node_name(zone), dim, coordinates(path, zone, dim, count))
    shape = shape_ijk[::-1]                            # HDF5 order: k, j, i
    ids = np.arange(count).reshape(shape)
    if dim == 3:
        c = ids[:-1, :-1, :-1]
        corners = [c, ids[:-1, :-1, 1:], ids[:-1, 1:, 1:], ids[:-1, 1:, :-1],
                   ids[1:, :-1, :-1], ids[1:, :-1, 1:], ids[1:, 1:, 1:], ids[1:, 1:, :-1]]
        conn = np.stack([a.ravel() for a in corners], axis=1)
        z.blocks.append(("hexahedron", conn, np.arange(1, len(conn) + 1)))
    else:
        corners = [ids[:-1, :-1], ids[:-1, 1:], ids[1:, 1:], ids[1:, :-1]]
        conn = np.stack([a.ravel() for a in corners], axis=1)
        z.blocks.append(("quad", conn, np.arange(1, len(conn) + 1)))
    return z
