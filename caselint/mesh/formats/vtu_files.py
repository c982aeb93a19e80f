"""Polyhedral VTU files (VTK XML unstructured grids): the ``vtu-polyhedra`` reader.

meshio reads VTU files of ordinary cells (file versions 0.1 and 1.0); this reader takes
the files that hold polyhedra (VTK cell type 42), and those of later versions, in both
layouts VTK has written:

- file version 2.2 and before (VTK up to 9.3): ``faces`` holds, polyhedron after
  polyhedron, ``[n_faces, n_0, ids..., n_1, ids..., ...]``; ``faceoffsets`` gives for each
  cell the end of its part of ``faces``, -1 for cells that are not polyhedra;
- file version 2.3 (VTK 9.4 and later): ``face_connectivity`` and ``face_offsets`` (the
  faces, offsets to their ends), ``polyhedron_to_faces`` and ``polyhedron_offsets`` (each
  cell's face ids, offsets to their ends, one per cell).

Data arrays may be ``ascii``, inline ``binary`` (base64) or ``appended`` (raw or base64),
uncompressed or compressed (zlib or LZMA), with 32- or 64-bit headers, little- or
big-endian; files of one piece (several pieces repeat their shared points: refused).
Everything is decoded with numpy; VTK is not needed. Counts are checked against the
file's own: ``NumberOfPoints`` and ``NumberOfCells`` against the arrays, offsets against
the connectivity, each compressed block against its declared size. The cells become the
face-based mesh in :mod:`caselint.mesh.formats.vtk_cells` (groups from the boundary
polygons' tags).
"""

from __future__ import annotations

import base64
import lzma
import mmap
import re
import xml.etree.ElementTree as ElementTree
import zlib
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.formats.vtk_cells import POLYHEDRON, VtkGrid, face_stream_cells, grid_data
from caselint.mesh.model import MeshData
from caselint.mesh.readers import MeshReader, ReadOptions

_TYPES = {"Int8": "i1", "UInt8": "u1", "Int16": "i2", "UInt16": "u2", "Int32": "i4",
          "UInt32": "u4", "Int64": "i8", "UInt64": "u8", "Float32": "f4", "Float64": "f8"}
_POLY_NAMES = (b'Name="faceoffsets"', b'Name="polyhedron_offsets"', b'Name="face_offsets"')
_OFFSETS = b'offsets"'          # how every name of _POLY_NAMES ends


def accepts(path: Path) -> bool:
    """Whether ``path`` is a VTU unstructured grid with polyhedron arrays, or of a file
    version meshio refuses (it reads versions 0.1 and 1.0)."""
    try:
        with path.open("rb") as handle, mmap.mmap(handle.fileno(), 0,
                                                  access=mmap.ACCESS_READ) as data:
            if data.find(b'type="UnstructuredGrid"', 0, 4096) < 0:
                return False
            version = re.search(rb'<VTKFile[^>]*\sversion="([^"]*)"', data[:4096])
            if version is not None and version.group(1) not in (b"0.1", b"1.0"):
                return True
            return _has_polyhedron_arrays(data)
    except (OSError, ValueError):
        return False


def _has_polyhedron_arrays(data) -> bool:
    """Whether a polyhedron array is named before the appended data (if any): one pass
    over the file for the ``offsets"`` every such name ends with (the cells' own
    ``Name="offsets"`` is the usual only hit; base64 text holds no quote), instead of a
    pass per name."""
    at = data.find(_OFFSETS)
    while at >= 0:
        for name in _POLY_NAMES:
            start = at + len(_OFFSETS) - len(name)
            if start >= 0 and data[start : at + len(_OFFSETS)] == name:
                appended = data.find(b"<AppendedData", 0, start)
                return appended < 0
        at = data.find(_OFFSETS, at + 1)
    return False


class _Arrays:
    """Decodes the ``DataArray`` elements of one file."""

    def __init__(self, path: str, root: ElementTree.Element, appended: bytes | None,
                 appended_base64: bool) -> None:
        self.path = path
        self.order = ">" if root.get("byte_order") == "BigEndian" else "<"
        header = root.get("header_type", "UInt32")
        if header not in ("UInt32", "UInt64"):
            raise MeshReadError(path, f"header_type {header!r}: expected UInt32 or UInt64")
        self.header = np.dtype(self.order + _TYPES[header])
        compressor = root.get("compressor")
        self.decompress = {None: None, "": None, "vtkZLibDataCompressor": zlib.decompress,
                           "vtkLZMADataCompressor": lzma.decompress}.get(compressor, False)
        if self.decompress is False:
            raise MeshReadError(path, f"data compressed with {compressor}, which caselint does "
                                      "not read: write the file with zlib compression or none")
        self.appended = appended
        self.appended_base64 = appended_base64

    def read(self, element: ElementTree.Element | None, what: str) -> np.ndarray:
        """The values of a ``DataArray`` (rows of NumberOfComponents when more than one)."""
        if element is None:
            raise MeshReadError(self.path, f"no {what} array")
        kind = element.get("type", "")
        if kind not in _TYPES:
            raise MeshReadError(self.path, f"array {what}: type {kind!r} is not numeric")
        dtype = np.dtype(self.order + _TYPES[kind])
        fmt = element.get("format", "ascii")
        try:
            if fmt == "ascii":
                values = np.fromstring(element.text or "", dtype=dtype.newbyteorder("="),
                                       sep=" ")
            elif fmt == "binary":
                text = b"".join((element.text or "").encode("ascii").split())
                values = self._blocks(text, dtype, what, encoded=True)
            elif fmt == "appended":
                values = self._appended(int(element.get("offset", "0")), dtype, what)
            else:
                raise MeshReadError(self.path, f"array {what}: unknown format {fmt!r}")
        except (ValueError, zlib.error, lzma.LZMAError, base64.binascii.Error) as exc:
            raise MeshReadError(self.path, f"array {what}: damaged or truncated data "
                                           f"({exc})") from None
        components = int(element.get("NumberOfComponents", "1"))
        values = values.astype(dtype.newbyteorder("="), copy=False)
        if components > 1:
            if len(values) % components:
                raise MeshReadError(self.path, f"array {what}: {len(values)} values are not "
                                               f"a whole number of {components}-tuples")
            values = values.reshape(-1, components)
        return values

    def _appended(self, offset: int, dtype: np.dtype, what: str) -> np.ndarray:
        if self.appended is None:
            raise MeshReadError(self.path, f"array {what} is appended but the file has no "
                                           "AppendedData section")
        if offset > len(self.appended):
            raise MeshReadError(self.path, f"array {what} starts at byte {offset} of the appended "
                                           f"data, which holds {len(self.appended)} (truncated)")
        return self._blocks(self.appended[offset:], dtype, what, encoded=self.appended_base64)

    def _blocks(self, data: bytes, dtype: np.dtype, what: str, encoded: bool) -> np.ndarray:
        """Header and data of one array (see :meth:`_read` for base64)."""
        size = self.header.itemsize
        if self.decompress is None:
            n_bytes = int(np.frombuffer(self._read(data, 0, size, encoded, size), self.header)[0])
            body = self._read(data, size, n_bytes, encoded, size)
            return np.frombuffer(body, dtype=dtype, count=n_bytes // dtype.itemsize)
        n_blocks = int(np.frombuffer(self._read(data, 0, size, encoded, size), self.header)[0])
        head_size = size * (3 + n_blocks)
        header = np.frombuffer(self._read(data, 0, head_size, encoded, head_size),
                               self.header).astype(np.int64)
        block, last, sizes = int(header[1]), int(header[2]), header[3:]
        ends = np.cumsum(sizes)
        body = self._read(data, head_size, int(ends[-1]) if n_blocks else 0, encoded, head_size)
        expected = block * (n_blocks - 1) + (last or block) if n_blocks else 0
        starts = np.concatenate([[0], ends[:-1]])
        raw = b"".join(self.decompress(body[int(a):int(b)]) for a, b in zip(starts, ends))
        if len(raw) != expected:
            raise MeshReadError(self.path, f"array {what} declares {expected} bytes, its blocks "
                                           f"hold {len(raw)}")
        return np.frombuffer(raw, dtype=dtype, count=len(raw) // dtype.itemsize)

    def _read(self, data: bytes, start: int, n_bytes: int, encoded: bool,
              header: int) -> bytes:
        """Bytes ``start .. start + n_bytes`` of an array's stream (header included).

        VTK encodes the header of base64 data on its own (its last group padded) and the
        data after it; where the header's characters end without padding, header and
        data are one stream.
        """
        if not encoded:
            if start + n_bytes > len(data):
                raise MeshReadError(self.path, f"an array declares {n_bytes} bytes but the file "
                                               f"holds {max(len(data) - start, 0)} (truncated)")
            return data[start:start + n_bytes]
        head_chars = 4 * -(-header // 3)
        if start >= header and data[:head_chars].endswith(b"="):
            first, skip = head_chars, start - header     # the data's own stream
        else:
            first, skip = 0, start
        chars = 4 * -(-(skip + n_bytes) // 3)
        text = data[first:first + chars]
        if len(text) < chars:
            raise MeshReadError(self.path, "the base64 data ends inside an array (truncated)")
        out = base64.b64decode(text, validate=True)[skip:skip + n_bytes]
        if len(out) < n_bytes:
            raise MeshReadError(self.path, f"an array declares {n_bytes} bytes but the file "
                                           f"holds {len(out)} (truncated)")
        return out


def _parse(path: Path) -> tuple[ElementTree.Element, bytes | None, bool]:
    """The XML tree and the appended data (None when absent) with its encoding."""
    name = str(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise MeshReadError(name, f"cannot read the file: {exc.strerror or exc}") from None
    cut = data.find(b"<AppendedData")
    appended, encoded = None, False
    if cut >= 0:
        tag_end = data.find(b">", cut)
        tag = data[cut:tag_end].decode("latin-1")
        encoded = 'encoding="base64"' in tag
        mark = data.find(b"_", tag_end)
        if tag_end < 0 or mark < 0:
            raise MeshReadError(name, "the AppendedData section is cut short (truncated)")
        appended = data[mark + 1:]
        if encoded:
            appended = appended[:appended.find(b"<")] if b"<" in appended else appended
            appended = b"".join(appended.split())
        data = data[:cut] + b"</VTKFile>"
    try:
        root = ElementTree.fromstring(data)
    except ElementTree.ParseError as exc:
        line = exc.position[0] if exc.position else "?"
        raise MeshReadError(name, f"line {line}: not well-formed XML ({exc.msg}): damaged "
                                  "or truncated") from None
    if root.tag != "VTKFile" or root.get("type") != "UnstructuredGrid":
        raise MeshReadError(name, "not a VTK XML unstructured grid (VTKFile type="
                                  "\"UnstructuredGrid\")")
    return root, appended, encoded


def _piece(arrays: _Arrays, piece: ElementTree.Element, index: int) -> VtkGrid:
    """One ``Piece``, its counts checked."""
    path = arrays.path
    where = ""
    n_points = int(piece.get("NumberOfPoints", "-1"))
    n_cells = int(piece.get("NumberOfCells", "-1"))
    if n_points < 0 or n_cells < 0:
        raise MeshReadError(path, where + "NumberOfPoints and NumberOfCells are required")
    points = arrays.read(piece.find("Points/DataArray"), "Points")
    if points.ndim == 1:
        points = points.reshape(-1, 3)
    cells = {el.get("Name"): el for el in piece.findall("Cells/DataArray")}
    types = arrays.read(cells.get("types"), "types").astype(np.int64)
    ends = arrays.read(cells.get("offsets"), "offsets").astype(np.int64)
    conn = arrays.read(cells.get("connectivity"), "connectivity").astype(np.int64)
    for what, found, declared in (("points", len(points), n_points),
                                  ("cell types", len(types), n_cells),
                                  ("cell offsets", len(ends), n_cells)):
        if found != declared:
            raise MeshReadError(path, where + f"{found} {what} for NumberOf"
                                      f"{'Points' if what == 'points' else 'Cells'}="
                                      f"{declared}" + (" (truncated)" if found < declared else ""))
    offsets = np.concatenate([[0], ends])
    if bool(np.any(np.diff(offsets) < 0)) or int(offsets[-1]) != len(conn):
        raise MeshReadError(path, where + f"the cell offsets end at {int(offsets[-1])} but the "
                                  f"connectivity holds {len(conn)} entries")
    grid = VtkGrid(path, points.astype(np.float64), types, offsets, conn)
    _polyhedra(arrays, cells, grid, where)
    for kind, target in (("CellData", grid.cell_data), ("PointData", grid.point_data)):
        n = n_cells if kind == "CellData" else n_points
        for el in piece.findall(f"{kind}/DataArray"):
            if el.get("type") in _TYPES:
                values = arrays.read(el, el.get("Name", "?"))
                if len(values) != n:
                    raise MeshReadError(path, where + f"{kind} array {el.get('Name')!r} has "
                                              f"{len(values)} values for {n}")
                target[el.get("Name", "?")] = values
    return grid


def _polyhedra(arrays: _Arrays, cells: dict, grid: VtkGrid, where: str) -> None:
    """Each cell's faces from the 2.2 or the 2.3 layout (module docstring)."""
    path = arrays.path
    poly = np.flatnonzero(grid.types == POLYHEDRON)
    n_cells = len(grid.types)
    if "polyhedron_offsets" in cells:
        conn = arrays.read(cells.get("face_connectivity"), "face_connectivity").astype(np.int64)
        face_ends = arrays.read(cells.get("face_offsets"), "face_offsets").astype(np.int64)
        to_faces = arrays.read(cells.get("polyhedron_to_faces"),
                               "polyhedron_to_faces").astype(np.int64)
        poly_ends = arrays.read(cells["polyhedron_offsets"], "polyhedron_offsets").astype(
            np.int64)
        face_offsets = np.concatenate([[0], face_ends])
        cell_faces = np.concatenate([[0], poly_ends])
        if len(poly_ends) != n_cells or int(cell_faces[-1]) != len(to_faces) or bool(
                np.any(np.diff(cell_faces) < 0)):
            raise MeshReadError(path, where + "polyhedron_offsets do not match the cells and "
                                      "polyhedron_to_faces")
        if int(face_offsets[-1]) != len(conn) or bool(np.any(np.diff(face_offsets) < 0)):
            raise MeshReadError(path, where + "face_offsets do not match face_connectivity")
        n_faces = len(face_ends)
        if len(to_faces) and (int(to_faces.min()) < 0 or int(to_faces.max()) >= n_faces):
            raise MeshReadError(path, where + f"polyhedron_to_faces refers to face "
                                      f"{int(to_faces.max())}; there are {n_faces}")
        # each cell's own copy of its faces (a face may be listed by two polyhedra)
        sizes = np.diff(face_offsets)[to_faces]
        starts = face_offsets[to_faces]
        local = np.concatenate([[0], np.cumsum(sizes)])
        gather = np.repeat(starts, sizes) + np.arange(int(local[-1])) - np.repeat(local[:-1],
                                                                                  sizes)
        grid.cell_faces, grid.face_offsets, grid.face_points = cell_faces, local, conn[gather]
        return
    if "faceoffsets" in cells:
        stream = arrays.read(cells.get("faces"), "faces").astype(np.int64)
        ends = arrays.read(cells["faceoffsets"], "faceoffsets").astype(np.int64)
        if len(ends) != n_cells:
            raise MeshReadError(path, where + f"{len(ends)} faceoffsets for {n_cells} cells")
        bad = (ends[poly] < 0) if len(poly) else np.zeros(0, bool)
        if bad.any():
            raise MeshReadError(path, where + f"polyhedron cell {int(poly[np.argmax(bad)])} has "
                                      "no faces (faceoffsets -1)")
        poly_ends = ends[poly]
        starts = np.concatenate([[0], poly_ends[:-1]])
        faces_of, face_offsets, face_points, stop = face_stream_cells(path, stream, starts)
        if not np.array_equal(stop, poly_ends):
            raise MeshReadError(path, where + "the faces of a polyhedron do not end where "
                                      "faceoffsets says")
        _spread(grid, poly, faces_of, face_offsets, face_points)
        return
    if len(poly):
        raise MeshReadError(path, where + "polyhedron cells without faces / faceoffsets or "
                                  "face_connectivity / polyhedron_offsets arrays")


def _spread(grid: VtkGrid, poly: np.ndarray, faces_of: np.ndarray, face_offsets: np.ndarray,
            face_points: np.ndarray) -> None:
    """Per-cell face CSR over all cells from one over the polyhedra only."""
    counts = np.zeros(len(grid.types), dtype=np.int64)
    counts[poly] = np.diff(faces_of)
    grid.cell_faces = np.concatenate([[0], np.cumsum(counts)])
    grid.face_offsets, grid.face_points = face_offsets, face_points


def read_vtu(path: Path, options: ReadOptions) -> MeshData:
    """Read a polyhedral VTU file (see the module docstring)."""
    from caselint.mesh.limits import check_memory

    name = str(path)
    root, appended, encoded = _parse(path)
    arrays = _Arrays(name, root, appended, encoded)
    grid_el = root.find("UnstructuredGrid")
    pieces = grid_el.findall("Piece") if grid_el is not None else []
    if not pieces:
        raise MeshReadError(name, "no Piece in the UnstructuredGrid")
    if len(pieces) > 1:
        # pieces written in parallel repeat the points they share: joining them would
        # need those points merged, which caselint does not do
        raise MeshReadError(name, f"holds {len(pieces)} pieces; caselint reads files of one "
                                  "piece: merge the pieces into one (e.g. by writing the "
                                  "whole grid from one process)")
    declared = int(pieces[0].get("NumberOfCells", "0") or 0)
    check_memory(name, {"polyhedron": declared}, "the file's NumberOfCells",
                 options.memory_limit)
    grid = _piece(arrays, pieces[0], 0)
    for el in grid_el.findall("FieldData/DataArray"):
        if el.get("type") in _TYPES:
            grid.field_data[el.get("Name", "?")] = arrays.read(el, el.get("Name", "?"))
    return grid_data(grid, options)


READER = MeshReader(
    name="vtu-polyhedra",
    description="VTU unstructured grids with polyhedra (file versions up to 2.3), ASCII, "
                "base64 or appended, zlib or LZMA",
    read=read_vtu, suffixes=(".vtu",), accepts=accepts)

