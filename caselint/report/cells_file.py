"""The cells file (``check --cells-out FILE.vtu``): the cells and faces findings name, as a
VTK unstructured grid any post-processor overlays on the mesh.

Layout (VTK XML, format version 1.0, inline binary arrays, ``header_type`` UInt64):

- points: those of the named cells and faces, in the mesh file's own coordinates (the
  case's unit scaling undone), with point data ``file_point_id``;
- cells: every mesh cell a finding names, as its VTK cell (tetra 10, hexahedron 12,
  wedge 13, pyramid 14, triangle 5, quad 9; a general polyhedron 42 with its faces in the
  ``faces``/``faceoffsets`` arrays), then every face a finding names, as a polygon (7; an
  edge of a 2-D mesh as a line, 3);
- cell data: ``file_cell_id`` (the file's id; -1 on faces), ``face_id`` (caselint's face id;
  -1 on cells), ``severity`` (the most severe finding naming the entity: 3 error,
  2 warning, 1 note), and per rule with findings, an array named by the rule id holding
  the finding's measured value where the rule names the entity and NaN elsewhere.

Written atomically (a temporary file renamed into place); the mesh is never touched.
"""

from __future__ import annotations

import base64
import math
import os
import struct
import tempfile
from pathlib import Path
from typing import TYPE_CHECKING, Iterable
from xml.sax.saxutils import escape

import numpy as np

from caselint.mesh.celltypes import CELL_TYPES

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh
    from caselint.model import Finding

#: VTK cell type of each caselint shape (meshio's node order is VTK's).
VTK_TYPE = {"tetra": 10, "hexahedron": 12, "wedge": 13, "pyramid": 14, "triangle": 5,
            "quad": 9}
VTK_POLYHEDRON, VTK_POLYGON, VTK_LINE = 42, 7, 3
SEVERITY_CODE = {"note": 1, "warning": 2, "error": 3}


def named_entities(mesh: "Mesh", findings: Iterable["Finding"]):
    """(cells, faces): for each, a dict of caselint id -> list of (rule, severity, value)
    from the findings that list it (cells are listed by their file ids)."""
    to_ours = None
    cells: dict[int, list] = {}
    faces: dict[int, list] = {}
    for f in findings:
        entry = (f.rule, f.severity, math.nan if f.measured is None else float(f.measured))
        if f.where.cells:
            if to_ours is None:
                file_ids = mesh.file_cell_ids()
                to_ours = np.empty_like(file_ids)
                to_ours[file_ids] = np.arange(len(file_ids))
            for c in f.where.cells:
                if 0 <= c < mesh.n_cells:
                    cells.setdefault(int(to_ours[c]), []).append(entry)
        for face in f.where.faces:
            if 0 <= face < mesh.n_faces:
                faces.setdefault(int(face), []).append(entry)
    return cells, faces


def write_cells_file(path: str | Path, mesh: "Mesh", findings: Iterable["Finding"],
                     scale_to_m: float = 1.0) -> int:
    """Write the cells file for ``findings`` of ``mesh``; returns the number of entities."""
    findings = list(findings)
    cells, faces = named_entities(mesh, findings)
    cell_ids = np.array(sorted(cells), dtype=np.int64)
    face_ids = np.array(sorted(faces), dtype=np.int64)
    conn, offsets, types, poly = _cells(mesh, cell_ids)
    fconn, foffsets, ftypes = _faces(mesh, face_ids)
    all_conn = np.concatenate([conn, fconn])
    used, local = np.unique(all_conn, return_inverse=True)
    points = mesh.points[used] / scale_to_m
    n_cells = len(cell_ids) + len(face_ids)
    offsets = np.concatenate([offsets, offsets[-1:] + foffsets if len(offsets) else foffsets])
    types = np.concatenate([types, ftypes])
    rules = sorted({f.rule for f in findings if f.where.cells or f.where.faces})
    entries = [cells[c] for c in cell_ids] + [faces[f] for f in face_ids]
    arrays = {
        "file_cell_id": ("Int64", np.concatenate(
            [mesh.file_cell_ids(cell_ids), np.full(len(face_ids), -1)])),
        "face_id": ("Int64", np.concatenate([np.full(len(cell_ids), -1), face_ids])),
        "severity": ("Int32", np.array([max(SEVERITY_CODE[s] for _, s, _ in e) for e in entries],
                                       dtype=np.int64)),
    }
    for rule in rules:
        values = np.full(n_cells, np.nan)
        for i, e in enumerate(entries):
            for r, _, value in e:
                if r == rule:
                    values[i] = value
        arrays[rule] = ("Float64", values)
    poly_faces, poly_offsets = _polyhedron_streams(poly, len(cell_ids), len(face_ids), used)
    text = _xml(points, mesh.file_point_ids(used), local, offsets, types, poly_faces,
                poly_offsets, arrays, n_cells)
    _write_atomic(Path(path), text)
    return n_cells


def _cells(mesh: "Mesh", cells: np.ndarray):
    """Connectivity, offsets and VTK types of cells; the polyhedra's face lists apart."""
    shape = mesh.cell_shape[cells] if len(cells) else np.zeros(0, dtype=np.int8)
    corners = {}
    for block in mesh.data.shapes:
        hit = np.isin(block.cells, cells)
        for cell, row in zip(block.cells[hit], block.connectivity[hit]):
            corners[int(cell)] = row
    conn, sizes, types, poly = [], [], [], {}
    for i, (cell, s) in enumerate(zip(cells, shape)):
        if s >= 0:
            row = corners[int(cell)]
            types.append(VTK_TYPE[CELL_TYPES[s]])
        else:
            table = mesh.cell_face_table()[cell]
            face_list = [mesh.data.face_points[mesh.face_offsets[f]:mesh.face_offsets[f + 1]]
                         for f in table[table >= 0]]
            row = np.unique(np.concatenate(face_list))
            poly[i] = face_list
            types.append(VTK_POLYHEDRON)
        conn.append(np.asarray(row, dtype=np.int64))
        sizes.append(len(row))
    return (np.concatenate(conn) if conn else np.zeros(0, np.int64),
            np.cumsum(sizes).astype(np.int64), np.array(types, dtype=np.int64), poly)


def _faces(mesh: "Mesh", faces: np.ndarray):
    """Connectivity, offsets and VTK types (polygon, or line in 2-D) of faces."""
    off = mesh.face_offsets
    rows = [mesh.data.face_points[off[f]:off[f + 1]].astype(np.int64) for f in faces]
    sizes = [len(r) for r in rows]
    kind = VTK_LINE if mesh.dim == 2 else VTK_POLYGON
    return (np.concatenate(rows) if rows else np.zeros(0, np.int64),
            np.cumsum(sizes).astype(np.int64), np.full(len(rows), kind, dtype=np.int64))


def _polyhedron_streams(poly, n_cells: int, n_faces: int, used: np.ndarray):
    """VTK's ``faces`` / ``faceoffsets`` (-1 for cells that are not polyhedra), or None."""
    if not poly:
        return None, None
    stream, offsets, end = [], [], 0
    for i in range(n_cells + n_faces):
        if i not in poly:
            offsets.append(-1)
            continue
        block = [len(poly[i])]
        for face in poly[i]:
            block += [len(face), *np.searchsorted(used, face).tolist()]
        stream += block
        end += len(block)
        offsets.append(end)
    return np.array(stream, dtype=np.int64), np.array(offsets, dtype=np.int64)


_NUMPY = {"Float64": "<f8", "Int64": "<i8", "Int32": "<i4", "UInt8": "u1"}


def _array(kind: str, name: str, values, components: int = 1) -> str:
    """A DataArray in VTK's inline binary form: base64 of a UInt64 byte count and the
    little-endian values (ASCII cannot carry NaN for VTK's parser)."""
    raw = np.ascontiguousarray(np.ravel(values), dtype=_NUMPY[kind]).tobytes()
    body = base64.b64encode(struct.pack("<Q", len(raw)) + raw).decode("ascii")
    comp = f' NumberOfComponents="{components}"' if components > 1 else ""
    return (f'<DataArray type="{kind}" Name="{escape(name)}"{comp} format="binary">{body}'
            "</DataArray>\n")


def _xml(points, file_point_ids, conn, offsets, types, poly_faces, poly_offsets, arrays,
         n_cells) -> str:
    out = ['<?xml version="1.0"?>\n<!-- caselint cells file: the cells and faces findings '
           'name; cell data per rule holds the measured value -->\n',
           '<VTKFile type="UnstructuredGrid" version="1.0" byte_order="LittleEndian" '
           'header_type="UInt64">\n<UnstructuredGrid>\n',
           f'<Piece NumberOfPoints="{len(points)}" NumberOfCells="{n_cells}">\n',
           "<PointData>\n", _array("Int64", "file_point_id", file_point_ids), "</PointData>\n",
           "<Points>\n", _array("Float64", "Points", points, 3), "</Points>\n", "<Cells>\n",
           _array("Int64", "connectivity", conn), _array("Int64", "offsets", offsets),
           _array("UInt8", "types", types)]
    if poly_faces is not None:
        out += [_array("Int64", "faces", poly_faces), _array("Int64", "faceoffsets", poly_offsets)]
    out.append("</Cells>\n<CellData>\n")
    for name, (kind, values) in arrays.items():
        out.append(_array(kind, name, values))
    out.append("</CellData>\n</Piece>\n</UnstructuredGrid>\n</VTKFile>\n")
    return "".join(out)


def _write_atomic(path: Path, text: str) -> None:
    fd, tmp = tempfile.mkstemp(prefix=".cells-", suffix=".vtu.tmp", dir=path.parent or ".")
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(text)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
