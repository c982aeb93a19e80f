"""Legacy VTK files (``# vtk DataFile Version ...``) with polyhedra: the ``vtk-polyhedra`` reader.

meshio reads legacy unstructured grids of ordinary cells; this reader takes those that
hold polyhedra (VTK type 42) or pentagonal / hexagonal prisms (15, 16), in the layouts
VTK writes:

- version 5.1 (VTK 9): ``CELLS n_offsets n_connectivity`` followed by ``OFFSETS`` and
  ``CONNECTIVITY`` arrays; a polyhedron's connectivity is its face stream
  ``[n_faces, n_0, ids..., n_1, ids..., ...]``;
- versions before 5: ``CELLS n size`` followed, cell after cell, by the cell's length and
  its entries (for a polyhedron: the length of its face stream, then the stream).

``ASCII`` and ``BINARY`` (big-endian) files; ``POINTS``, ``CELL_TYPES``, ``CELL_DATA`` and
``POINT_DATA`` with ``SCALARS``, ``VECTORS``, ``NORMALS``, ``TENSORS`` and ``FIELD`` arrays;
``METADATA`` blocks are skipped. Every declared count is checked against the values read.
The cells become the face-based mesh in :mod:`caselint.mesh.formats.vtk_cells`.
"""

from __future__ import annotations

import mmap
import re
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.formats.vtk_cells import POLYHEDRON, VtkGrid, face_stream_cells, grid_data
from caselint.mesh.model import MeshData
from caselint.mesh.readers import MeshReader, ReadOptions

_TYPES = {"bit": "u1", "unsigned_char": "u1", "char": "i1", "unsigned_short": "u2",
          "short": "i2", "unsigned_int": "u4", "int": "i4", "unsigned_long": "u8",
          "long": "i8", "float": "f4", "double": "f8", "vtktypeint64": "i8",
          "vtktypeuint64": "u8", "vtkidtype": "i8", "vtktypeint32": "i4"}
_KEYWORD = re.compile(rb"\n[ \t]*[A-Za-z_]")
_WANTED = (POLYHEDRON, 15, 16)


class _Cursor:
    """Reads a legacy file: keyword lines, ASCII or big-endian binary arrays."""

    def __init__(self, path: str, data: bytes, binary: bool, pos: int) -> None:
        self.path, self.data, self.binary, self.pos = path, data, binary, pos

    def fail(self, message: str) -> MeshReadError:
        line = self.data[:self.pos].count(b"\n") + 1
        return MeshReadError(self.path, f"line {line}: {message}")

    def line(self) -> list[str]:
        """The next non-blank line's words ([] at the end of the file)."""
        while self.pos < len(self.data):
            end = self.data.find(b"\n", self.pos)
            end = len(self.data) if end < 0 else end
            words = self.data[self.pos:end].decode("latin-1").split()
            self.pos = end + 1
            if words:
                return words
        return []

    def values(self, count: int, kind: str, what: str) -> np.ndarray:
        """``count`` values of the legacy type ``kind``."""
        code = _TYPES.get(kind.lower())
        if code is None:
            raise self.fail(f"{what}: unknown data type {kind!r}")
        if self.binary:
            dtype = np.dtype(">" + code)
            end = self.pos + count * dtype.itemsize
            if end > len(self.data):
                held = (len(self.data) - self.pos) // dtype.itemsize
                raise self.fail(f"{what} declares {count} values but the file ends after "
                                f"{held} (truncated)")
            out = np.frombuffer(self.data, dtype=dtype, count=count, offset=self.pos)
            self.pos = end
            return out.astype(dtype.newbyteorder("="))
        found = _KEYWORD.search(self.data, self.pos)
        end = found.start() if found else len(self.data)
        text = self.data[self.pos:end]
        values = np.fromstring(text, dtype=np.float64 if code[0] == "f" else np.int64,
                               sep=" ") if text.strip() else np.zeros(0)
        if len(values) != count:
            raise self.fail(f"{what} declares {count} values but holds {len(values)}"
                            + (" (truncated)" if len(values) < count else ""))
        self.pos = end
        return values

    def skip_metadata(self) -> None:
        """Skip a METADATA block (up to the next blank line)."""
        end = re.compile(rb"\n[ \t]*\r?\n").search(self.data, self.pos)
        self.pos = end.end() if end else len(self.data)


def _header(path: str, data: bytes) -> tuple[str, bool, int]:
    """File version, whether binary, and the offset after ``DATASET UNSTRUCTURED_GRID``."""
    lines = data[:1024].split(b"\n", 4)
    if len(lines) < 4 or not lines[0].startswith(b"# vtk DataFile Version"):
        raise MeshReadError(path, "not a legacy VTK file (no '# vtk DataFile Version' line)")
    version = lines[0].split()[-1].decode("latin-1")
    kind = lines[2].strip().upper()
    if kind not in (b"ASCII", b"BINARY"):
        raise MeshReadError(path, f"line 3: expected ASCII or BINARY, found {kind!r}")
    if lines[3].split()[:2] != [b"DATASET", b"UNSTRUCTURED_GRID"]:
        raise MeshReadError(path, "line 4: caselint reads DATASET UNSTRUCTURED_GRID files")
    return version, kind == b"BINARY", sum(len(x) + 1 for x in lines[:4])


def accepts(path: Path) -> bool:
    """Whether ``path`` is a legacy unstructured grid holding polyhedra or prisms; or one
    whose cell types cannot be read (cut short), so that the damage is named precisely."""
    try:
        with path.open("rb") as handle, mmap.mmap(handle.fileno(), 0,
                                                  access=mmap.ACCESS_READ) as data:
            _, binary, _ = _header(str(path), data[:1024])
            at = data.find(b"CELL_TYPES")
            if at < 0:
                return True
            cursor = _Cursor(str(path), data, binary, at)
            words = cursor.line()
            try:
                types = cursor.values(int(words[1]), "int", "CELL_TYPES")
            except MeshReadError:
                return True
            return bool(np.isin(types, _WANTED).any())
    except (OSError, ValueError, IndexError, MeshReadError):
        return False


def _cells(cursor: _Cursor, words: list[str], version: str):
    """(types unknown yet) offsets (C + 1) and connectivity of a CELLS section."""
    if float(version) >= 5:
        n_offsets, n_conn = int(words[1]), int(words[2])
        head = cursor.line()
        if head[:1] != ["OFFSETS"]:
            raise cursor.fail("expected OFFSETS after CELLS (file version 5)")
        offsets = cursor.values(n_offsets, head[1], "OFFSETS").astype(np.int64)
        head = cursor.line()
        if head[:1] != ["CONNECTIVITY"]:
            raise cursor.fail("expected CONNECTIVITY after OFFSETS")
        conn = cursor.values(n_conn, head[1], "CONNECTIVITY").astype(np.int64)
        if len(offsets) == 0 or offsets[0] != 0 or int(offsets[-1]) != n_conn or bool(
                np.any(np.diff(offsets) < 0)):
            raise cursor.fail(f"OFFSETS must rise from 0 to the {n_conn} connectivity entries")
        return offsets, conn
    n_cells, size = int(words[1]), int(words[2])
    stream = cursor.values(size, "int", "CELLS").astype(np.int64)
    starts = prefix_starts(stream, n_cells)
    if starts is None:
        raise cursor.fail(f"CELLS: the cell lengths do not add up to the {size} values "
                          f"declared for {n_cells} cells")
    lengths = stream[starts]
    offsets = np.concatenate([[0], np.cumsum(lengths)])
    keep = np.ones(size, dtype=bool)
    keep[starts] = False
    return offsets, stream[keep]


def prefix_starts(stream: np.ndarray, n: int) -> np.ndarray | None:
    """Starts of ``n`` records ``[length, entries...]`` laid end to end in ``stream``, or
    None when they do not fill it exactly. The chain of starts is followed by pointer
    doubling (log2 n gathers over the stream), not one record at a time."""
    size = len(stream)
    if n == 0:
        return np.zeros(0, dtype=np.int64) if size == 0 else None
    jump = np.minimum(np.arange(size + 1) + np.append(stream, 0) + 1, size)
    jump[size] = size
    if int(np.min(np.append(stream, 0))) < 0:
        return None
    starts = np.zeros(n, dtype=np.int64)
    index = np.arange(n)
    bit = 0
    while (1 << bit) < n:
        has = (index >> bit) & 1 == 1
        starts[has] = jump[starts[has]]
        jump = jump[jump]
        bit += 1
    last = starts[-1]
    if last >= size or last + stream[last] + 1 != size or bool(np.any(starts[1:] <= starts[:-1])):
        return None
    return starts


def field_arrays(cursor: _Cursor, n_arrays: int, count: int | None, target: dict,
                 what: str) -> None:
    """The arrays of a FIELD block; those of ``count`` tuples (any when None) are kept."""
    for _ in range(n_arrays):
        head = cursor.line()
        while head[:1] == ["METADATA"]:
            cursor.skip_metadata()
            head = cursor.line()
        if len(head) < 4:
            raise cursor.fail(f"{what}: expected 'name components tuples type'")
        name, components, tuples = head[0], int(head[1]), int(head[2])
        values = cursor.values(components * tuples, head[3], f"{what} {name}")
        if count is None or tuples == count:
            target[name] = values.reshape(tuples, components) if components > 1 else values


def _data_section(cursor: _Cursor, count: int, target: dict, what: str) -> None:
    """Arrays of a CELL_DATA or POINT_DATA section until the next section."""
    while True:
        mark = cursor.pos
        words = cursor.line()
        if not words:
            return
        key = words[0].upper()
        if key == "SCALARS":
            components = int(words[3]) if len(words) > 3 else 1
            table = cursor.line()
            if table[:1] != ["LOOKUP_TABLE"]:
                cursor.pos = mark
                raise cursor.fail(f"SCALARS {words[1]}: expected LOOKUP_TABLE")
            values = cursor.values(count * components, words[2], f"{what} {words[1]}")
            target[words[1]] = values.reshape(count, components) if components > 1 else values
        elif key in ("VECTORS", "NORMALS", "TENSORS"):
            width = 9 if key == "TENSORS" else 3
            target[words[1]] = cursor.values(count * width, words[2],
                                             f"{what} {words[1]}").reshape(count, width)
        elif key == "FIELD":
            field_arrays(cursor, int(words[2]), count, target, what)
        elif key == "METADATA":
            cursor.skip_metadata()
        else:
            cursor.pos = mark
            return


def read_legacy(path: Path, options: ReadOptions) -> MeshData:
    """Read a legacy VTK unstructured grid with polyhedra (see the module docstring)."""
    from caselint.mesh.limits import check_memory

    name = str(path)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise MeshReadError(name, f"cannot read the file: {exc.strerror or exc}") from None
    version, binary, start = _header(name, data)
    cursor = _Cursor(name, data, binary, start)
    points = offsets = conn = types = None
    cell_data: dict = {}
    point_data: dict = {}
    field_data: dict = {}
    while True:
        words = cursor.line()
        if not words:
            break
        key = words[0].upper()
        if key == "POINTS":
            n = int(words[1])
            points = cursor.values(3 * n, words[2], "POINTS").reshape(n, 3).astype(np.float64)
        elif key == "CELLS":
            check_memory(name, {"polyhedron": int(words[1])}, "the CELLS header",
                         options.memory_limit)
            offsets, conn = _cells(cursor, words, version)
        elif key == "CELL_TYPES":
            types = cursor.values(int(words[1]), "int", "CELL_TYPES").astype(np.int64)
        elif key == "CELL_DATA":
            _data_section(cursor, int(words[1]), cell_data, "CELL_DATA")
        elif key == "POINT_DATA":
            _data_section(cursor, int(words[1]), point_data, "POINT_DATA")
        elif key == "FIELD":
            field_arrays(cursor, int(words[2]), None, field_data, "FIELD")
        elif key == "METADATA":
            cursor.skip_metadata()
        else:
            raise cursor.fail(f"unexpected section {words[0]!r}")
    if points is None or offsets is None or types is None:
        missing = [k for k, v in (("POINTS", points), ("CELLS", offsets), ("CELL_TYPES", types))
                   if v is None]
        raise MeshReadError(name, f"no {', '.join(missing)} section (truncated?)")
    if len(types) != len(offsets) - 1:
        raise MeshReadError(name, f"CELL_TYPES lists {len(types)} cells, CELLS "
                                  f"{len(offsets) - 1}")
    for label, fields, n in (("CELL_DATA", cell_data, len(types)),
                             ("POINT_DATA", point_data, len(points))):
        for key, values in fields.items():
            if len(values) != n:
                raise MeshReadError(name, f"{label} array {key!r} has {len(values)} values "
                                          f"for {n}")
    grid = VtkGrid(name, points, types, offsets, conn, cell_data=cell_data,
                   point_data=point_data, field_data=field_data)
    poly = np.flatnonzero(types == POLYHEDRON)
    if len(poly):
        cell_faces, face_offsets, face_points, ends = face_stream_cells(name, conn,
                                                                       offsets[poly])
        if not np.array_equal(ends, offsets[poly + 1]):
            raise MeshReadError(name, "a polyhedron's faces do not fill its cell entry")
        counts = np.zeros(len(types), dtype=np.int64)
        counts[poly] = np.diff(cell_faces)
        grid.cell_faces = np.concatenate([[0], np.cumsum(counts)])
        grid.face_offsets, grid.face_points = face_offsets, face_points
    return grid_data(grid, options)


READER = MeshReader(
    name="vtk-polyhedra",
    description="legacy VTK unstructured grids with polyhedra or prisms (versions up to 5.1), "
                "ASCII or binary",
    read=read_legacy, suffixes=(".vtk",), accepts=accepts)
