"""Writers of the mesh formats caselint reads with its own readers, from their documented
layouts (no program of the format's vendor is used). Each takes an element mesh
(:class:`mixed_mesh.ElementMesh`) or face data and a path.

:data:`ROUND_TRIP_WRITERS` lists, per format, a function ``write(mesh, folder) -> (path,
read options)`` for the round-trip matrix (``tests/test_mesh_round_trip.py``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from mixed_mesh import ElementMesh

SU2_TYPE = {"line": 3, "triangle": 5, "quad": 9, "tetra": 10, "hexahedron": 12, "wedge": 13,
            "pyramid": 14}


def su2_zone(mesh: ElementMesh, *, indices: bool = True, dim: int = 3,
             order=None) -> list[str]:
    """The lines of one SU2 zone (NDIME .. markers); element and point indices optional;
    ``order[r]`` is the cell (in block order) written on element row ``r``."""
    lines = [f"NDIME= {dim}", f"NELEM= {mesh.n_cells}"]
    cells = [[SU2_TYPE[t], *cell] for t, conn in mesh.blocks for cell in conn]
    for row, c in enumerate(range(len(cells)) if order is None else order):
        lines.append(" ".join(map(str, cells[c] + ([row] if indices else []))))
    lines.append(f"NPOIN= {len(mesh.points)}")
    for i, p in enumerate(mesh.points):
        lines.append(" ".join(f"{x:.17g}" for x in p[:dim]) + (f" {i}" if indices else ""))
    groups = sorted({g for _, _, g in mesh.boundary})
    lines.append(f"NMARK= {len(groups)}")
    for g in groups:
        elems = [(t, c) for t, conn, name in mesh.boundary if name == g for c in conn]
        lines += [f"MARKER_TAG= {g}", f"MARKER_ELEMS= {len(elems)}"]
        lines += [" ".join(map(str, [SU2_TYPE[t], *c])) for t, c in elems]
    return lines


def write_su2(mesh: ElementMesh, path: Path, *, crlf: bool = False,
              zones: list[ElementMesh] | None = None, order=None) -> Path:
    """An SU2 file of ``mesh``, or a multi-zone file of ``zones``."""
    if zones is None:
        lines = ["% written by the caselint tests", *su2_zone(mesh, order=order)]
    else:
        lines = [f"NZONE= {len(zones)}"]
        for i, z in enumerate(zones, start=1):
            lines += [f"IZONE= {i}", *su2_zone(z)]
    end = "\r\n" if crlf else "\n"
    path.write_bytes((end.join(lines) + end).encode())
    return path


#: caselint role -> zone type word of the face-based .msh, and the bc-type numbers.
MSH_ZONE_TYPE = {"inlet": "velocity-inlet", "outlet": "pressure-outlet", "wall": "wall",
                 "symmetry": "symmetry", "interior": "interior"}
MSH_BC = {"interior": 2, "wall": 3, "pressure-outlet": 5, "symmetry": 7, "velocity-inlet": 10}
MSH_CELL = {"triangle": 1, "tetra": 2, "quad": 3, "hexahedron": 4, "pyramid": 5, "wedge": 6}


def write_face_msh(data, path: Path, *, roles: dict[str, str], binary: bool = False,
                   cell_zones: tuple[np.ndarray, tuple[str, ...]] | None = None,
                   names: bool = True, against_rule: bool = False) -> Path:
    """``data`` (a MeshData) as a face-based .msh: one interior face zone, one face zone per
    group (zone type from ``roles``), cell zones from ``cell_zones`` (index per cell, names)
    or one zone ``fluid``. 3-D faces are written with their right-hand normal into c0 (the
    format's rule; ``against_rule``: out of c0), 2-D edges as caselint holds them (c0 on
    the side (dy, -dx) leaves)."""
    from caselint.mesh.model import POLYHEDRON
    from caselint.mesh.celltypes import CELL_TYPES

    dim, n_cells = data.dim, data.n_cells
    zone_of_cell, zone_names = cell_zones or (np.zeros(n_cells, int), ("fluid",))
    order = np.argsort(zone_of_cell, kind="stable")
    new_id = np.empty(n_cells, dtype=np.int64)
    new_id[order] = np.arange(n_cells)
    sizes = np.diff(data.face_offsets)
    faces = [data.face_points[a:b] for a, b in zip(data.face_offsets[:-1], data.face_offsets[1:])]
    if dim == 3 and not against_rule:
        faces = [f[::-1] for f in faces]
    c0 = new_id[data.owner] + 1
    c1 = np.where(data.neighbour >= 0, new_id[np.maximum(data.neighbour, 0)] + 1, 0)
    zone_faces = [("interior", "interior-fluid", np.flatnonzero(data.neighbour >= 0))]
    zone_faces += [(MSH_ZONE_TYPE[roles[g]], g, np.flatnonzero(data.face_group == i))
                   for i, g in enumerate(data.group_names)]
    out = [b'(0 "written by the caselint tests")\n', b"(2 %d)\n" % dim,
           b"(10 (0 1 %x 0 %d))\n" % (data.n_points, dim), b"(12 (0 1 %x 0))\n" % n_cells,
           b"(13 (0 1 %x 0))\n" % data.n_faces]
    pts = data.points[:, :dim]
    if binary:
        out += [b"(3010 (1 1 %x 1 %d)(" % (data.n_points, dim),
                np.ascontiguousarray(pts, "<f8").tobytes(), b")End of Binary Section 3010)\n"]
    else:
        out += [b"(10 (1 1 %x 1 %d)(\n" % (data.n_points, dim)]
        out += [(" ".join(f"{v:.17g}" for v in p) + "\n").encode() for p in pts]
        out += [b"))\n"]
    kinds = data.cell_shape()[order]
    codes = np.array([MSH_CELL[CELL_TYPES[k]] if k != POLYHEDRON else 7 for k in kinds])
    zone_id = 2 + len(zone_faces)
    sections, name_lines = [], []
    for z, zname in enumerate(zone_names):
        cells = np.flatnonzero(np.sort(zone_of_cell) == z)
        if not len(cells):
            continue
        first, last = cells[0] + 1, cells[-1] + 1
        kind = codes[cells]
        if binary:
            sections += [b"(3012 (%x %x %x 1 0)(" % (zone_id, first, last),
                         kind.astype("<i4").tobytes(), b")End of Binary Section 3012)\n"]
        else:
            sections += [b"(12 (%x %x %x 1 0)(\n" % (zone_id, first, last),
                         " ".join(f"{k:x}" for k in kind).encode(), b"\n))\n"]
        name_lines.append(b"(45 (%d fluid %s)())\n" % (zone_id, zname.encode()))
        zone_id += 1
    first = 1
    for z, (ztype, zname, ids) in enumerate(zone_faces, start=2):
        if not len(ids):
            continue
        n = sizes[ids]
        fixed = int(n[0]) if (n == n[0]).all() and int(n[0]) <= 4 else 0
        ftype = fixed if fixed else (5 if n.max() > 4 else 0)
        last = first + len(ids) - 1
        rows = [([] if fixed else [int(sizes[f])]) + [int(v) + 1 for v in faces[f]]
                + [int(c0[f]), int(c1[f])] for f in ids]
        head = (z, first, last, MSH_BC[ztype], ftype)
        if binary:
            sections += [b"(3013 (%x %x %x %x %x)(" % head,
                         np.array([v for r in rows for v in r], "<i4").tobytes(),
                         b")End of Binary Section 3013)\n"]
        else:
            sections += [b"(13 (%x %x %x %x %x)(\n" % head]
            sections += [(" ".join(f"{v:x}" for v in r) + "\n").encode() for r in rows]
            sections += [b"))\n"]
        name_lines.append(b"(45 (%d %s %s)())\n" % (z, ztype.encode(), zname.encode()))
        first = last + 1
    path.write_bytes(b"".join(out + sections + (name_lines if names else [])))
    return path


def _su2(mesh, folder):
    from caselint.mesh.readers import ReadOptions

    return write_su2(mesh, folder / "box.su2"), ReadOptions()


def _face_msh(binary):
    def write(mesh, folder):
        from caselint.mesh.readers import ReadOptions
        from mixed_mesh import SIDE_ROLES, reference_data

        path = folder / f"box-{'binary' if binary else 'ascii'}.msh"
        return write_face_msh(reference_data(mesh, folder), path, roles=SIDE_ROLES,
                              binary=binary), ReadOptions()
    return write


def _cgns(**layout):
    def write(mesh, folder):
        from caselint.mesh.readers import ReadOptions
        from cgns_writer import write_cgns_elements, write_cgns_ngon
        from mixed_mesh import reference_data

        path = folder / "box.cgns"
        if layout.get("ngon"):
            return write_cgns_ngon(reference_data(mesh, folder), path), ReadOptions()
        return write_cgns_elements(mesh, path, **layout), ReadOptions()
    return write


#: Format -> ``write(element mesh, folder) -> (path, read options)``. Face-based formats
#: (the .msh, CGNS NGON_n/NFACE_n) hold the cells as polyhedra.
ROUND_TRIP_WRITERS = {"su2": _su2, "face-msh-ascii": _face_msh(False),
                      "face-msh-binary": _face_msh(True), "cgns-sections": _cgns(),
                      "cgns-mixed": _cgns(mixed=True), "cgns-ngon": _cgns(ngon=True)}
FACE_BASED = ("face-msh-ascii", "face-msh-binary", "cgns-ngon")
