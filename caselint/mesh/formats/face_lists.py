"""The list files of the face-based mesh folder: header, ASCII and binary lists, gzip.

Each file of the folder (``points``, ``faces``, ``owner``, ``neighbour``, ``boundary``,
``cellZones``, addressing files) opens with a header dictionary ``FoamFile { ... }``
whose ``format`` says ``ascii`` or ``binary`` and whose ``arch`` entry
(``"LSB;label=32;scalar=64"``) gives the byte order and the widths of labels and
scalars. The widths are taken from ``arch`` and never guessed: a binary file without
them is refused. A list is ``N ( ... )``: in ASCII the items as text (``(x y z)`` for
points, ``4(a b c d)`` for faces), in binary ``N`` items as raw bytes between the
parentheses; ``N{v}`` is a list of ``N`` equal items. A file may be stored gzip-compressed
as ``NAME.gz``.

ASCII lists are parsed by :func:`numpy.fromstring` after mapping the parentheses to
blanks, not by a loop over items (about 5 times faster than splitting the bytes): a face
list gets ``-1`` in place of each closing parenthesis, so that face sizes and point ids
come out of one parse (a list of faces all of one size is then read by stride, others by
finding the ``-1``). Every count the file declares is checked against what was read;
a short or inconsistent list is a :class:`~caselint.errors.MeshReadError` naming the
file, the line and what is wrong. On large meshes a compiled parser
(:mod:`caselint.mesh.kernels.text_lists`, passed in as ``kernel``) reads the same text
first; it gives the same arrays, or leaves the list to numpy, which reads it or names the
fault.
"""

from __future__ import annotations

import gzip
import re
import warnings
import zlib
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError

try:        # ISA-L's inflate: 3 to 6 times zlib's on the list files of a 100M-cell case
    from isal.igzip import decompress as _gunzip
    from isal.isal_zlib import error as _InflateError
except ImportError:                                     # pragma: no cover - no isal wheel
    _gunzip, _InflateError = gzip.decompress, zlib.error

_BLANK_PARENS = bytes.maketrans(b"()", b"  ")
_OPEN_TO_BLANK = bytes.maketrans(b"(", b" ")
_SPACE = re.compile(rb"(?:\s+|//[^\n]*|/\*.*?\*/)*", re.S)
_INT = re.compile(rb"[0-9]+")
_NON_BLANK = re.compile(rb"\S")
_COMMENT = re.compile(rb"//[^\n]*|/\*.*?\*/", re.S)
_ENTRY = re.compile(rb'([A-Za-z_]\w*)\s+("(?:[^"\\]|\\.)*"|[^;"]*)\s*;')


@dataclass(frozen=True)
class ListFile:
    """One file of the folder, read whole: its header entries and where its data starts.

    ``label`` and ``scalar`` are the numpy types of binary items (from ``arch``); for an
    ASCII file without ``arch`` labels are read as int64 and scalars as float64.
    """

    path: Path
    header: dict[str, str]
    binary: bool
    label: np.dtype
    scalar: np.dtype
    data: bytes
    start: int

    @property
    def name(self) -> str:
        """The file as named in messages."""
        return str(self.path)

    def line(self, offset: int) -> int:
        """The 1-based line of byte ``offset``."""
        return self.data.count(b"\n", 0, offset) + 1

    def fail(self, offset: int, message: str) -> MeshReadError:
        """A read error at ``offset`` of this file."""
        return MeshReadError(self.name, f"line {self.line(offset)}: {message}")


def find_file(folder: Path, name: str) -> Path | None:
    """``folder/name``, else ``folder/name.gz``, else None."""
    for candidate in (folder / name, folder / f"{name}.gz"):
        if candidate.is_file():
            return candidate
    return None


def read_bytes(path: Path) -> bytes:
    """The bytes of ``path``, decompressed when it ends in ``.gz``."""
    try:
        raw = path.read_bytes()
        if path.name.endswith(".gz"):
            return _gunzip(raw)
        return raw
    except (EOFError, zlib.error, _InflateError, gzip.BadGzipFile) as exc:   # an OSError too
        raise MeshReadError(str(path), f"damaged or truncated gzip data ({exc})") from None
    except OSError as exc:
        raise MeshReadError(str(path), f"cannot read the file: {exc.strerror or exc}") from None


def open_list_file(folder: Path, name: str, *, required: bool = True) -> ListFile | None:
    """Read ``folder/name`` (or ``name.gz``) and its header.

    :raises MeshReadError: the file is missing (when ``required``), has no header, or is
        binary without label and scalar widths.
    """
    path = find_file(folder, name)
    if path is None:
        if required:
            raise MeshReadError(str(folder / name), "missing: a mesh folder needs points, "
                                                    "faces, owner, neighbour and boundary")
        return None
    return parse_list_file(path, read_bytes(path))


def open_list_head(folder: Path, name: str, size: int = 65536) -> ListFile:
    """The first ``size`` bytes of ``folder/name`` (or ``name.gz``, decompressed) as a
    :class:`ListFile`: its header and the head of its first list, without reading the
    rest of the file.

    :raises MeshReadError: as :func:`open_list_file`.
    """
    path = find_file(folder, name)
    if path is None:
        return open_list_file(folder, name)                 # names what is missing
    try:
        with path.open("rb") as handle:
            data = handle.read(size)
        if path.name.endswith(".gz"):
            data = zlib.decompressobj(wbits=31).decompress(data, size)
    except OSError as exc:
        raise MeshReadError(str(path), f"cannot read the file: {exc.strerror or exc}") from None
    except zlib.error as exc:
        raise MeshReadError(str(path), f"damaged or truncated gzip data ({exc})") from None
    return parse_list_file(path, data)


def parse_list_file(path: Path, data: bytes) -> ListFile:
    """The header of a file already read (see :func:`open_list_file`)."""
    found = re.search(rb"\bFoamFile\s*\{", data[:65536])
    if found is None:
        raise MeshReadError(str(path), "no header dictionary (FoamFile { ... }) at the start: "
                                       "not a file of a face-based mesh folder")
    close = data.find(b"}", found.end())
    if close < 0:
        raise MeshReadError(str(path), "the header dictionary is not closed")
    header = _header_entries(data[found.end():close])
    binary = header.get("format", "ascii") == "binary"
    if header.get("format", "ascii") not in ("ascii", "binary"):
        raise MeshReadError(str(path), f"header format {header['format']!r}: expected ascii or "
                                       "binary")
    label, scalar = _widths(path, header.get("arch"), binary)
    return ListFile(path, header, binary, label, scalar, data, close + 1)


def _header_entries(body: bytes) -> dict[str, str]:
    """``key value;`` entries of the header (values unquoted)."""
    body = _COMMENT.sub(b" ", body)
    return {key.decode("latin-1"): value.strip().strip(b'"').decode("latin-1")
            for key, value in _ENTRY.findall(body)}


def _widths(path: Path, arch: str | None, binary: bool) -> tuple[np.dtype, np.dtype]:
    """Label and scalar types from the ``arch`` entry (see the module docstring)."""
    if arch is None:
        if binary:
            raise MeshReadError(str(path), "binary file without an 'arch' entry in its header: "
                                           "the byte order and the label and scalar sizes are "
                                           "unknown (caselint does not guess them)")
        return np.dtype(np.int64), np.dtype(np.float64)
    order = "<" if "LSB" in arch else ">" if "MSB" in arch else None
    label = re.search(r"label\s*=\s*(\d+)", arch)
    scalar = re.search(r"scalar\s*=\s*(\d+)", arch)
    if binary and (order is None or label is None or scalar is None):
        raise MeshReadError(str(path), f"arch {arch!r} does not give the byte order (LSB or MSB) "
                                       "and the label and scalar sizes (label=32;scalar=64)")
    order = order or "<"
    bits_l = int(label.group(1)) if label else 64
    bits_s = int(scalar.group(1)) if scalar else 64
    if bits_l not in (32, 64) or bits_s not in (32, 64):
        raise MeshReadError(str(path), f"arch {arch!r}: caselint reads 32- and 64-bit labels "
                                       "and scalars")
    return np.dtype(f"{order}i{bits_l // 8}"), np.dtype(f"{order}f{bits_s // 8}")


# -- the data part ------------------------------------------------------------------------


def skip_space(lf: ListFile, pos: int) -> int:
    """The first offset at or after ``pos`` that is not white space or a comment."""
    return _SPACE.match(lf.data, pos).end()


def list_head(lf: ListFile, pos: int, what: str) -> tuple[int, bytes, int]:
    """The declared size of the list at ``pos``, its opening character (``(`` or ``{``),
    and the offset after it."""
    pos = skip_space(lf, pos)
    number = _INT.match(lf.data, pos)
    if number is None:
        got = lf.data[pos:pos + 20].decode("latin-1", "replace")
        raise lf.fail(pos, f"expected the size of the {what} list, found {got!r}"
                      if got else f"the file ends before the {what} list")
    size = int(number.group())
    pos = skip_space(lf, number.end())
    opener = lf.data[pos:pos + 1]
    if opener not in (b"(", b"{"):
        raise lf.fail(pos, f"expected '(' after the size of the {what} list ({size})")
    return size, opener, pos + 1


def _binary_items(lf: ListFile, pos: int, declared: int, dtype: np.dtype, what: str,
                  per_item: int = 1) -> tuple[np.ndarray, int]:
    """``declared`` binary items of ``per_item`` values of ``dtype`` from ``pos``, and the
    offset after the closing ``)``."""
    count = declared * per_item
    end = pos + count * dtype.itemsize
    if end > len(lf.data):
        held = (len(lf.data) - pos) // (dtype.itemsize * per_item)
        raise lf.fail(pos, f"the {what} list declares {declared} items but the file ends after "
                           f"{held} (truncated)")
    close = skip_space(lf, end)
    if lf.data[close:close + 1] != b")":
        raise lf.fail(end, f"the binary {what} list of {declared} items is not followed by ')': "
                           "the item size from 'arch' does not match the data, or the file is "
                           "damaged")
    values = np.frombuffer(lf.data, dtype=dtype, count=count, offset=pos)
    return values.astype(dtype.newbyteorder("="), copy=False), close + 1


def _ascii_numbers(lf: ListFile, body: bytes, dtype, offset: int, what: str) -> np.ndarray:
    """All numbers of ``body`` (whitespace-separated) as ``dtype``."""
    if b"/" in body:                             # comments inside a list (hand-edited)
        body = _COMMENT.sub(b" ", body)
    if _NON_BLANK.search(body) is None:          # (a strip() would copy the body)
        return np.zeros(0, dtype=dtype)
    # numpy wraps 32-bit integers that overflow (4294967297 reads as 1): read 64 bits
    wide = np.dtype(np.int64) if np.dtype(dtype) == np.int32 else dtype
    with warnings.catch_warnings():
        warnings.simplefilter("error", DeprecationWarning)
        try:
            values = np.fromstring(body, dtype=wide, sep=" ")
        except (DeprecationWarning, ValueError):
            bad = re.search(rb"[^\s0-9eE+\-.]", body)
            where = offset + (bad.start() if bad else 0)
            raise lf.fail(where, f"the {what} list holds text that is not a number "
                                 f"({lf.data[where:where + 20]!r})") from None
    if wide is dtype:
        return values
    narrow = values.astype(dtype)
    if not np.array_equal(narrow, values):
        big = str(values[np.argmax(narrow != values)]).encode()
        raise lf.fail(offset + max(body.find(big), 0),
                      f"the {what} list holds {big.decode()}, beyond the 32-bit labels of the "
                      "header's arch entry")
    return narrow


def _uniform(lf: ListFile, pos: int, size: int, dtype, what: str) -> tuple[np.ndarray, int]:
    """The list ``N{value}``: ``size`` copies of one item."""
    close = lf.data.find(b"}", pos)
    if close < 0:
        raise lf.fail(pos, f"the uniform {what} list N{{value}} is not closed")
    if lf.binary:
        value = np.frombuffer(lf.data[pos:close], dtype=dtype)
    else:
        value = _ascii_numbers(lf, lf.data[pos:close].translate(_BLANK_PARENS), dtype, pos, what)
    return np.repeat(value.astype(dtype.newbyteorder("=")).reshape(1, -1), size, axis=0), close + 1


def read_labels(lf: ListFile, pos: int, what: str, kernel=None) -> tuple[np.ndarray, int]:
    """A list of labels at ``pos`` (int32 or int64) and the offset after it."""
    size, opener, pos = list_head(lf, pos, what)
    if opener == b"{":
        values, end = _uniform(lf, pos, size, lf.label, what)
        return values.ravel(), end
    if lf.binary:
        return _binary_items(lf, pos, size, lf.label, what)
    close = lf.data.find(b")", pos)
    if close < 0:
        raise lf.fail(pos, f"the {what} list of {size} items is not closed (truncated)")
    dtype = lf.label.newbyteorder("=")
    values = None if kernel is None else kernel.labels(lf.data, pos, close, size, dtype)
    if values is not None:
        return values, close + 1
    values = _ascii_numbers(lf, lf.data[pos:close], dtype, pos, what)
    check_count(lf, pos, what, size, len(values))
    return values, close + 1


def check_count(lf: ListFile, pos: int, what: str, declared: int, found: int,
                unit: str = "items") -> None:
    """Refuse a list of ``found`` items that declares ``declared``."""
    if declared != found:
        raise lf.fail(pos, f"the {what} list declares {declared} {unit} but holds {found}"
                           + (" (truncated)" if found < declared else ""))


def read_points(lf: ListFile, what: str = "points", kernel=None) -> np.ndarray:
    """The (N, 3) float64 coordinates of a ``points`` file."""
    size, opener, pos = list_head(lf, lf.start, what)
    if opener == b"{":
        return _uniform(lf, pos, size, lf.scalar, what)[0].astype(np.float64).reshape(-1, 3)
    if lf.binary:
        values, _ = _binary_items(lf, pos, size, lf.scalar, what, per_item=3)
    else:
        close = lf.data.rfind(b")")
        if close < pos:
            raise lf.fail(pos, f"the {what} list of {size} points is not closed (truncated)")
        values = None if kernel is None else kernel.scalars(lf.data, pos, close, 3 * size)
        if values is not None:
            return values.reshape(-1, 3)
        values = _ascii_numbers(lf, lf.data[pos:close].translate(_BLANK_PARENS), np.float64,
                                pos, what)
        if len(values) != 3 * size:
            check_count(lf, pos, what, size, len(values) // 3, "points")
            raise lf.fail(pos, f"the {what} list holds {len(values)} numbers, not 3 per point")
    return values.astype(np.float64, copy=False).reshape(-1, 3)


def read_faces(lf: ListFile, kernel=None) -> tuple[np.ndarray, np.ndarray]:
    """CSR offsets (int64) and point ids of a ``faces`` file (faceList or faceCompactList)."""
    if lf.header.get("class") == "faceCompactList":
        offsets, pos = read_labels(lf, lf.start, "face offsets", kernel)
        ids, _ = read_labels(lf, pos, "face points", kernel)
        offsets = offsets.astype(np.int64)
        if not len(offsets) or offsets[0] != 0 or offsets[-1] != len(ids) \
                or bool(np.any(np.diff(offsets) < 0)):
            raise lf.fail(lf.start, f"the face offsets ({len(offsets)} entries) must rise from 0 "
                                    f"to the number of face points ({len(ids)})")
        return offsets, ids
    size, opener, pos = list_head(lf, lf.start, "faces")
    if lf.binary or opener != b"(":
        raise lf.fail(pos, "a binary face list of class faceList is not read by caselint: "
                           "write the mesh with faces as faceCompactList (the usual binary form) "
                           "or in ASCII")
    close = lf.data.rfind(b")")
    if close < pos:
        raise lf.fail(pos, f"the list of {size} faces is not closed (truncated)")
    dtype = np.dtype(np.int64 if lf.label.itemsize == 8 else np.int32)
    arrays = None if kernel is None else kernel.faces(lf.data, pos, close, size, dtype)
    if arrays is not None:
        return arrays
    body = lf.data[pos:close].replace(b")", b" -1 ").translate(_OPEN_TO_BLANK)
    values = _ascii_numbers(lf, body, dtype, pos, "faces")
    # every face of the first one's size (all quadrilaterals, all triangles): rows of
    # (k, k points, -1), read by stride; anything else (another size, a misplaced -1, a
    # negative point id) goes the general way below, which reads it or names the fault
    k = int(values[0]) if len(values) else 0
    if k >= 1 and len(values) == size * (k + 2):
        rows = values.reshape(size, k + 2)
        ids = rows[:, 1:-1].reshape(-1)
        if np.all(rows[:, 0] == k) and np.all(rows[:, -1] == -1) and int(ids.min()) >= 0:
            return np.arange(size + 1, dtype=np.int64) * k, ids
    ends = np.flatnonzero(values == -1)
    check_count(lf, pos, "faces", size, len(ends), "faces")
    starts = np.empty_like(ends)
    starts[0:1] = 0
    starts[1:] = ends[:-1] + 1
    sizes = values[starts] if len(starts) else starts
    if len(ends) and (int(ends[-1]) != len(values) - 1
                      or not np.array_equal(ends - starts - 1, sizes)):
        bad = int(np.argmax(ends - starts - 1 != sizes)) if len(ends) else 0
        raise lf.fail(pos, f"face {bad} of the face list does not hold the number of points "
                           "its size says")
    keep = np.ones(len(values), dtype=bool)
    keep[starts] = False
    keep[ends] = False
    offsets = np.zeros(size + 1, dtype=np.int64)
    np.cumsum(sizes, out=offsets[1:])
    return offsets, values[keep]
