"""The commercial finite-volume solver's face-based ``.msh``: nodes, cells and faces in
S-expression sections.

Layout (grid-section numbers hexadecimal, section ids decimal)::

    (0 "comment")            comments; (1 "...") a header
    (2 3)                    dimension
    (10 (0 1 N 0 3))         declaration: N nodes in total (zone 0: no data)
    (10 (zone first last type nd)( x y [z] ... ))                  nodes of one zone
    (12 (zone first last type element-type)[( types of a mixed zone )])
    (13 (zone first last bc-type face-type)( n0 n1 .. c0 c1 ... ))  faces of one zone
    (39 (zone-id zone-type zone-name [domain])(...)) or (45 ...)   zone names (decimal id)

Ids count from 1. A face row lists its nodes (face type 2, 3, 4: that many; 0 mixed and 5
polygonal: the count first) and then its two cells, ``c0`` and ``c1``, 0 meaning none
(boundary faces have ``c1 = 0``). Section ids 2010/3010, 2012/3012, 2013/3013 hold the
same data in binary (32-bit little-endian integers; 20xx single-, 30xx double-precision
coordinates), closed by ``End of Binary Section``.

Orientation. In 2-D the documented example of the format (three unit quadrilaterals)
puts ``c0`` on the side that caselint's edge normal ``(dy, -dx)`` points away from, so
``c0`` is the owner and the nodes keep their order. In 3-D the right-hand normal of the
node order points into ``c0`` [memory of the format's documentation]: the nodes are
reversed so that the normal points out of ``c0``, the owner. Because that rule is from
memory, the reader also checks it on the data: the volume the boundary faces enclose
(divergence theorem, each face fanned from its first node) must come out positive; if it
is negative the whole file is read with the faces turned round and a note says so.

Groups and roles: every face zone that holds boundary faces is a group named by its
zone name (``zone-ID`` without a name section); its type (from the name section, or the
bc-type number) gives a role word in ``group_types`` (``wall``, ``inlet``, ``outlet``,
``symmetry``, ``periodic``, ``open``, ``interface``). Interior face zones are not
groups. Cell zones become the mesh's cell zones. Cells are general polyhedra here (the
element type of a cell section does not give its corner order). Zones of parent faces
(hanging-node refinement history, bc-type 31) are left out with a note.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.build import mesh_from_faces
from caselint.mesh.formats.face_msh_sections import FACE_NODES, Section, hex_word, sections
from caselint.mesh.formats.text_tables import hex_numbers, numbers, record_starts
from caselint.mesh.model import MeshData
from caselint.mesh.orientation import reverse_faces
from caselint.mesh.readers import MeshReader, ReadOptions, checked_points, no_zones
from caselint.mesh.shapes import with_shapes

#: bc-type numbers of face zones and the zone-type words they stand for.
BC_TYPES: dict[int, str] = {
    2: "interior", 3: "wall", 4: "pressure-inlet", 5: "pressure-outlet", 7: "symmetry",
    8: "periodic-shadow", 9: "pressure-far-field", 10: "velocity-inlet", 12: "periodic",
    14: "fan", 20: "mass-flow-inlet", 24: "interface", 31: "parent-face", 36: "outflow",
    37: "axis",
}
#: Zone-type words and the boundary role they give.
ROLES: dict[str, str] = {
    "wall": "wall", "symmetry": "symmetry", "axis": "symmetry", "interior": "interior",
    "velocity-inlet": "inlet", "pressure-inlet": "inlet", "mass-flow-inlet": "inlet",
    "inlet-vent": "inlet", "intake-fan": "inlet", "pressure-outlet": "outlet",
    "outflow": "outlet", "outlet-vent": "outlet", "exhaust-fan": "outlet",
    "periodic": "periodic", "periodic-shadow": "periodic", "pressure-far-field": "open",
    "interface": "interface", "fan": "interface", "porous-jump": "interface",
    "radiator": "interface",
}


@dataclass
class _Grid:
    dim: int = 0
    totals: dict = None
    nodes: list = None
    cells: list = None
    faces: list = None
    names: dict = None


def _collect(path: str, found: list[Section]) -> _Grid:
    g = _Grid(totals={}, nodes=[], cells=[], faces=[], names={})
    for s in found:
        if s.kind == 2:
            g.dim = int(s.header[0]) if s.header and s.header[0].isdigit() else 0
        elif s.kind in (39, 45):
            if len(s.header) < 3 or not s.header[0].isdigit():
                raise MeshReadError(path, f"line {s.line}: a zone section needs (zone-id "
                                          "zone-type zone-name)")
            g.names[int(s.header[0])] = (s.header[1].lower(), s.header[2])
        elif s.kind in (10, 12, 13):
            head = [hex_word(path, w, s.line) for w in s.header]
            if len(head) < 4:
                raise MeshReadError(path, f"line {s.line}: section {s.kind} header has "
                                          f"{len(head)} numbers; expected at least 4")
            if head[0] == 0:
                g.totals[s.kind] = (head[2] - head[1] + 1, s.line)
            else:
                {10: g.nodes, 12: g.cells, 13: g.faces}[s.kind].append((head, s))
    return g


def _nodes(path: str, g: _Grid) -> np.ndarray:
    total = g.totals.get(10, (None, 0))[0]
    n = total if total is not None else max((h[2] for h, _ in g.nodes), default=0)
    points = np.full((n, 3), np.nan)
    for head, s in g.nodes:
        count, nd = head[2] - head[1] + 1, (head[4] if len(head) > 4 else g.dim or 3)
        values = s.body if s.binary else numbers(s.body or b"", np.float64, path,
                                                 f"line {s.line}: node coordinates")
        if len(values) != count * nd:
            raise MeshReadError(path, f"line {s.line}: node zone {head[0]} declares {count} "
                                      f"nodes of {nd} coordinates, found {len(values)} numbers")
        if head[1] < 1 or head[2] > n:
            raise MeshReadError(path, f"line {s.line}: nodes {head[1]}..{head[2]} outside the "
                                      f"declared 1..{n}")
        points[head[1] - 1:head[2], :nd] = values.reshape(count, nd)
        if nd == 2:
            points[head[1] - 1:head[2], 2] = 0.0
    missing = np.isnan(points[:, 0])
    if missing.any():
        raise MeshReadError(path, f"{int(missing.sum())} of the {n} declared nodes are in no "
                                  f"node section (first: node {int(np.argmax(missing)) + 1})")
    return points


def _face_rows(path: str, head, s: Section):
    """(sizes, node ids, c0, c1) of one face zone, ids from 1."""
    count, ftype = head[2] - head[1] + 1, head[4] if len(head) > 4 else 0
    values = s.body if s.binary else hex_numbers(s.body or b"", path, f"line {s.line}: faces")
    where = f"line {s.line}: face zone {head[0]}"
    if ftype in FACE_NODES:
        k = FACE_NODES[ftype]
        if len(values) != count * (k + 2):
            raise MeshReadError(path, f"{where} declares {count} faces of {k} nodes, found "
                                      f"{len(values)} numbers (expected {count * (k + 2)})")
        rows = values.reshape(count, k + 2)
        return np.full(count, k), rows[:, :k].ravel(), rows[:, k], rows[:, k + 1]
    if ftype not in (0, 5):
        raise MeshReadError(path, f"{where}: face type {ftype}; expected 0, 2, 3, 4 or 5")
    starts = record_starts(values, count, 2, path, where)
    end = int(starts[-1]) + int(values[starts[-1]]) + 3 if count else 0
    if end != len(values):
        raise MeshReadError(path, f"{where} declares {count} faces, the data holds more "
                                  f"numbers ({len(values)}) than they use ({end})")
    sizes = values[starts]
    offsets = np.concatenate([[0], np.cumsum(sizes)])
    pick = np.repeat(starts + 1 - offsets[:-1], sizes) + np.arange(int(offsets[-1]))
    return sizes, values[pick], values[starts + 1 + sizes], values[starts + 2 + sizes]


def read_face_msh(path: Path, options: ReadOptions) -> MeshData:
    """Read a face-based ``.msh`` file (see the module docstring)."""
    from caselint.mesh.limits import check_memory

    name = str(path)
    no_zones(path, options)       # cell zones are regions of one mesh, read together
    g = _collect(name, sections(name, path.read_bytes()))
    if 12 in g.totals:                      # before the faces are built
        check_memory(name, {"cell": g.totals[12][0]}, "the file header",
                     options.memory_limit)
    if not g.faces or not g.nodes:
        missing = " and ".join(w for w, have in (("node", g.nodes), ("face", g.faces))
                               if not have)
        raise MeshReadError(name, f"no {missing} sections (13 ...) with data: truncated, or "
                                  "not a face-based mesh")
    dim = g.dim or (g.nodes[0][0][4] if len(g.nodes[0][0]) > 4 else 3)
    if dim not in (2, 3):
        raise MeshReadError(name, f"dimension {dim}; expected 2 or 3")
    points = _nodes(name, g)
    notes: list[str] = []
    sizes, nodes, c0, c1, zone_of_face, groups, types = [], [], [], [], [], [], {}
    declared_faces = 0
    for head, s in sorted(g.faces, key=lambda f: f[0][1]):
        declared_faces += head[2] - head[1] + 1
        bc = head[3]
        ztype, zname = g.names.get(head[0], (BC_TYPES.get(bc, f"type-{bc}"), f"zone-{head[0]}"))
        if bc == 31 or ztype == "parent-face":
            notes.append(f"face zone {zname} (parent faces of hanging-node refinement) left out")
            continue
        sz, nd, a, b = _face_rows(name, head, s)
        sizes.append(sz), nodes.append(nd), c0.append(a), c1.append(b)
        zone_of_face.append(np.full(len(sz), len(groups), dtype=np.int32))
        groups.append(zname)
        types[zname] = ROLES.get(ztype, ztype)
    if 13 in g.totals and g.totals[13][0] != declared_faces:
        raise MeshReadError(name, f"line {g.totals[13][1]}: {g.totals[13][0]} faces declared, "
                                  f"the face sections hold {declared_faces}")
    sizes, nodes = np.concatenate(sizes), np.concatenate(nodes)
    c0, c1 = np.concatenate(c0), np.concatenate(c1)
    if ((c0 == 0) & (c1 == 0)).any():
        raise MeshReadError(name, f"{int(((c0 == 0) & (c1 == 0)).sum())} faces have no cell on "
                                  "either side (c0 = c1 = 0)")
    face_zone = np.concatenate(zone_of_face)
    n_cells, cell_zone, zone_names = _cells(name, g, c0, c1)
    if len(nodes) and (int(nodes.min()) < 1 or int(nodes.max()) > len(points)):
        bad = int(nodes.min()) if int(nodes.min()) < 1 else int(nodes.max())
        raise MeshReadError(name, f"a face refers to node {bad}; nodes are 1..{len(points)}")
    offsets = np.concatenate([[0], np.cumsum(sizes)]).astype(np.int64)
    face_points = nodes - 1
    # owner c0 (or c1 where the file leaves c0 empty); 3-D node order reversed (docstring)
    swap = c0 == 0
    owner = np.where(swap, c1, c0) - 1
    neighbour = np.where(swap | (c1 == 0), 0, c1) - 1
    reverse = ~swap if dim == 3 else swap
    face_points = reverse_faces(offsets, face_points, reverse)
    if _enclosed_volume(points, offsets, face_points, neighbour < 0, dim) < 0:
        face_points = reverse_faces(offsets, face_points, np.ones(len(owner), bool))
        notes.append("the faces of this file are ordered the other way round from the "
                     "format's rule (the boundary enclosed a negative volume); read reversed")
    # face zones holding boundary faces are the groups; interior zones name none
    boundary_zones = np.unique(face_zone[neighbour < 0])
    position = np.full(len(groups) + 1, -1, dtype=np.int32)
    position[boundary_zones] = np.arange(len(boundary_zones))
    group_names = tuple(groups[i] for i in boundary_zones)
    points = checked_points(name, points, options.scale_to_m)
    try:
        return with_shapes(mesh_from_faces(
            path=name, points=points, dim=dim, face_offsets=offsets, face_points=face_points,
            owner=owner, neighbour=neighbour, n_cells=n_cells, face_group=position[face_zone],
            group_names=group_names, group_types={k: types[k] for k in group_names},
            cell_zone=cell_zone, zone_names=zone_names, notes=tuple(notes)))
    except ValueError as exc:           # inconsistent arrays the checks above let through
        raise MeshReadError(name, str(exc)) from None


def _cells(path: str, g: _Grid, c0: np.ndarray, c1: np.ndarray):
    """Number of cells, each cell's zone index and the zone names; checks the counts."""
    declared = g.totals.get(12, (None, 0))[0]
    n_cells = declared if declared is not None else max((h[2] for h, _ in g.cells), default=0)
    highest = int(max(c0.max(initial=0), c1.max(initial=0)))
    if highest > n_cells or int(min(c0.min(initial=0), c1.min(initial=0))) < 0:
        raise MeshReadError(path, f"a face refers to cell {highest}; the file declares "
                                  f"{n_cells} cells")
    used = np.zeros(n_cells + 1, dtype=bool)
    used[c0] = used[c1] = True
    if not used[1:].all():
        first = int(np.argmin(used[1:])) + 1
        raise MeshReadError(path, f"{int(n_cells - used[1:].sum())} of the {n_cells} declared "
                                  f"cells are on no face (first: cell {first}): truncated face "
                                  "sections, or cells this reader does not take")
    cell_zone = np.full(n_cells, -1, dtype=np.int32)
    names = []
    for head, s in sorted(g.cells, key=lambda c: c[0][1]):
        if head[1] < 1 or head[2] > n_cells:
            raise MeshReadError(path, f"line {s.line}: cells {head[1]}..{head[2]} outside the "
                                      f"declared 1..{n_cells}")
        if s.body is not None and len(head) > 4 and head[4] == 0:
            count = head[2] - head[1] + 1
            kinds = s.body if s.binary else hex_numbers(s.body, path, f"line {s.line}: cells")
            if len(kinds) != count:
                raise MeshReadError(path, f"line {s.line}: cell zone {head[0]} declares "
                                          f"{count} cells, lists {len(kinds)} cell types")
        cell_zone[head[1] - 1:head[2]] = len(names)
        names.append(g.names.get(head[0], ("", f"zone-{head[0]}"))[1])
    if not names:
        return n_cells, None, ()
    if (cell_zone < 0).any():
        raise MeshReadError(path, f"{int((cell_zone < 0).sum())} cells are in no cell zone "
                                  "section (12 ...)")
    unique = tuple(sorted(set(names)))
    remap = np.array([unique.index(n) for n in names], dtype=np.int32)
    return n_cells, remap[cell_zone], unique


def _enclosed_volume(points, offsets, face_points, boundary, dim) -> float:
    """Volume (area in 2-D) the boundary faces enclose, with normals out of their owner."""
    sizes = np.diff(offsets)
    faces = np.flatnonzero(boundary)
    if dim == 2:
        a, b = points[face_points[offsets[faces]]], points[face_points[offsets[faces] + 1]]
        return float(np.sum(a[:, 0] * b[:, 1] - b[:, 0] * a[:, 1]) / 2.0)
    total = 0.0
    for k in range(1, int(sizes.max(initial=0)) - 1):
        f = faces[sizes[faces] > k + 1]
        p0 = points[face_points[offsets[f]]]
        p1 = points[face_points[offsets[f] + k]]
        p2 = points[face_points[offsets[f] + k + 1]]
        total += float(np.einsum("ij,ij->", p0, np.cross(p1, p2)))
    return total / 6.0


def looks_like_face_msh(path: Path) -> bool:
    """Whether the file opens with S-expression sections (``(0 "``, ``(2 ``, ``(10 (``...)
    rather than gmsh's ``$MeshFormat``."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(4096).lstrip()
    except OSError:
        return False
    return re.match(rb"\(\s*(0|1|2|10|12|13|2010|3010)\s", head) is not None


READER = MeshReader(
    name="face-msh", description="the commercial finite-volume solver's face-based .msh "
    "(S-expression sections of nodes, cells and faces; ASCII or binary)",
    read=read_face_msh, suffixes=(".msh",), accepts=looks_like_face_msh)
