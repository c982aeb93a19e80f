"""SU2 native mesh files (``.su2``, ASCII): element tables, points and named markers.

Layout (keyword lines ``KEY= value``, ``%`` starts a comment line)::

    NDIME= 3                      dimension
    NELEM= n                      n element lines: VTK type id, node ids [, element index]
    NPOIN= p [domain points]      p point lines: x y [z] [, point index]
    NMARK= m                      m markers, each:
    MARKER_TAG= name
    MARKER_ELEMS= k               k boundary element lines: VTK type id, node ids

A file holding several zones starts with ``NZONE= z`` and opens each zone with
``IZONE= i``; every zone has its own points and markers. caselint reads one zone, the one
the case file names in ``mesh.zone`` (zones are named by their number), and refuses a
multi-zone file without it, listing the zones.

Every count the file declares must match what follows it (a truncated or edited file is
refused naming the section). Marker names become the boundary groups (the markers carry no
type in the mesh file; their boundary conditions live in the solver's settings). Element
node order is VTK's; blocks written in the mirrored wedge order are turned round by
:mod:`caselint.mesh.orientation`. Lines may end in CRLF.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.build import mesh_from_elements
from caselint.mesh.celltypes import N_NODES, SURFACE_TYPES, VOLUME_TYPES
from caselint.mesh.formats.text_tables import (line_starts, numbers, tokens_per_line,
                                               unix_lines)
from caselint.mesh.groups import BoundaryElements
from caselint.mesh.model import MeshData
from caselint.mesh.pairing import ElementBlock
from caselint.mesh.readers import MeshReader, ReadOptions, checked_points

#: VTK cell type ids used by SU2 files.
VTK_TYPES: dict[int, str] = {3: "line", 5: "triangle", 9: "quad", 10: "tetra",
                             12: "hexahedron", 13: "wedge", 14: "pyramid"}
_NODES = np.full(16, -1, dtype=np.int64)
for _id, _name in VTK_TYPES.items():
    _NODES[_id] = N_NODES[_name]
_TYPE_ID = {name: i for i, name in VTK_TYPES.items()}
_PAD = {"triangle": [0, 1, 2, 2], "quad": [0, 1, 2, 3], "line": [0, 1]}


@dataclass
class _Section:
    """The data lines after one keyword: their text and their 1-based line numbers."""

    keyword: str
    value: str
    line: int
    text: bytes = b""
    lines: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))


@dataclass
class _Zone:
    """One zone as read: dimension, elements, points and markers."""

    number: int
    dim: int = 0
    elements: tuple[np.ndarray, dict[str, tuple[np.ndarray, np.ndarray]]] | None = None
    points: np.ndarray | None = None
    n_mark: int | None = None
    #: (name, boundary elements per type, or None before its MARKER_ELEMS= line)
    markers: list[tuple[str, dict | None]] = field(default_factory=list)


def _sections(path: str, data: bytes) -> list[_Section]:
    """Keyword lines and the data lines that follow each (comment lines left out)."""
    starts = line_starts(data)
    starts = starts[starts < len(data)]
    first = np.frombuffer(data, dtype=np.uint8)[starts]
    special = np.flatnonzero(((first >= 65) & (first <= 90)) | (first == 37))  # A-Z or %
    ends = np.append(starts[1:], len(data))
    out: list[_Section] = []
    pieces: list[tuple[int, int]] = []          # line index ranges of the current section

    def close() -> None:
        if out and pieces:
            out[-1].text = b"".join(data[starts[a]:ends[b - 1]] for a, b in pieces)
            out[-1].lines = np.concatenate([np.arange(a, b) for a, b in pieces]) + 1
        pieces.clear()

    for n, i in enumerate(special):
        stop = special[n + 1] if n + 1 < len(special) else len(starts)
        text = data[starts[i]:ends[i]].decode("latin-1").strip()
        if not text.startswith("%"):
            close()
            key, eq, value = text.partition("=")
            if not eq:
                raise MeshReadError(path, f"line {i + 1}: expected 'KEYWORD= value', got "
                                          f"{text[:60]!r}")
            out.append(_Section(key.strip().upper(), value.strip(), int(i) + 1))
        if i + 1 < stop:
            pieces.append((int(i) + 1, int(stop)))
    close()
    if len(special) and special[0] > 0 and np.any(
            tokens_per_line(data[:starts[special[0]]])):
        raise MeshReadError(path, "line 1: data before the first keyword (NDIME=, NZONE=)")
    return out


def _count(path: str, s: _Section) -> int:
    """The first whole number after the keyword (``NPOIN= 1000 900`` gives 1000)."""
    word = s.value.split()[0] if s.value.split() else ""
    if not word.isdigit():
        raise MeshReadError(path, f"line {s.line}: {s.keyword}= must be followed by a whole "
                                  f"number, got {s.value[:40]!r}")
    return int(word)


def _elements(path: str, s: _Section, n: int, allowed: tuple[str, ...], what: str):
    """Element types per row and, per type, (row ids, (k, nodes) connectivity)."""
    counts = tokens_per_line(s.text)
    rows = np.flatnonzero(counts)
    if len(rows) != n:
        near = f" (the file ends at line {s.lines[-1]})" if len(s.lines) else ""
        raise MeshReadError(path, f"line {s.line}: {s.keyword}= {n} but {len(rows)} "
                                  f"{what} lines follow{near}")
    if not n:
        return np.zeros(0, np.int64), {}
    values = numbers(s.text, np.int64, path, f"{what} after line {s.line}")
    per_row = counts[rows]
    row_start = np.concatenate([[0], np.cumsum(per_row)[:-1]])
    types = values[row_start]
    k = _NODES[np.clip(types, 0, len(_NODES) - 1)]
    known = (types >= 0) & (types < len(_NODES)) & (k > 0)
    known &= np.isin(types, [t for t, name in VTK_TYPES.items() if name in allowed])
    extra = per_row - 1 - k          # 1: the row ends in the element's index
    bad = ~known | ((extra != 0) & (extra != 1))
    indexed = int(np.count_nonzero(extra == 1) * 2 >= len(extra))
    bad |= extra != indexed                     # an index on every row or on none
    if bad.any():
        r = int(np.argmax(bad))
        line = int(s.lines[rows[r]])
        t = int(types[r])
        if not known[r]:
            names = ", ".join(f"{i} ({name})" for i, name in VTK_TYPES.items() if name in allowed)
            raise MeshReadError(path, f"line {line}: {what} of type {t} "
                                f"({VTK_TYPES.get(t, 'unknown')}); expected {names}")
        index = " and its element index (as on the other rows)" if indexed else ""
        raise MeshReadError(path, f"line {line}: a {VTK_TYPES[t]} (type {t}) needs "
                                  f"{k[r]} node ids{index}, found {per_row[r] - 1} numbers")
    by_type = {}
    for t in np.unique(types):
        ids = np.flatnonzero(types == t)
        cols = row_start[ids, None] + 1 + np.arange(_NODES[t])
        by_type[VTK_TYPES[int(t)]] = (ids, values[cols])
    return types, by_type


def _points(path: str, s: _Section, n: int, dim: int) -> np.ndarray:
    counts = tokens_per_line(s.text)
    rows = np.flatnonzero(counts)
    if len(rows) != n:
        raise MeshReadError(path, f"line {s.line}: NPOIN= {n} but {len(rows)} point lines "
                                  "follow")
    width = counts[rows]
    bad = (width != width[0]) | (width < dim) | (width > dim + 1) if n else width
    if n and bad.any():
        r = int(np.argmax(bad))
        raise MeshReadError(path, f"line {s.lines[rows[r]]}: a point needs {dim} coordinates "
                                  f"(and optionally its index), found {width[r]} numbers")
    values = numbers(s.text, np.float64, path, f"points after line {s.line}")
    return values.reshape(n, -1)[:, :dim] if n else np.zeros((0, dim))


def parse_zones(path: str, data: bytes) -> tuple[list[_Zone], int | None]:
    """The zones of an SU2 file (one for a single-zone file) and its NZONE, if any."""
    zones: list[_Zone] = []
    n_zone = None
    zone = None
    for s in _sections(path, unix_lines(data)):
        if s.keyword == "NZONE":
            n_zone = _count(path, s)
            continue
        if s.keyword == "IZONE" or zone is None:
            zone = _Zone(_count(path, s) if s.keyword == "IZONE" else 1)
            zones.append(zone)
            if s.keyword == "IZONE":
                continue
        if s.keyword == "NDIME":
            zone.dim = _count(path, s)
            if zone.dim not in (2, 3):
                raise MeshReadError(path, f"line {s.line}: NDIME= {zone.dim}; expected 2 or 3")
        elif s.keyword in ("NELEM", "NPOIN", "NMARK", "MARKER_ELEMS") and not zone.dim:
            raise MeshReadError(path, f"line {s.line}: {s.keyword}= comes before NDIME=")
        elif s.keyword == "NELEM":
            volume = VOLUME_TYPES if zone.dim == 3 else SURFACE_TYPES
            zone.elements = _elements(path, s, _count(path, s), volume, "element")
        elif s.keyword == "NPOIN":
            zone.points = _points(path, s, _count(path, s), zone.dim)
        elif s.keyword == "NMARK":
            zone.n_mark = _count(path, s)
        elif s.keyword == "MARKER_TAG":
            if not s.value:
                raise MeshReadError(path, f"line {s.line}: MARKER_TAG= without a name")
            zone.markers.append((s.value, None))
        elif s.keyword == "MARKER_ELEMS":
            if not zone.markers or zone.markers[-1][1] is not None:
                raise MeshReadError(path, f"line {s.line}: MARKER_ELEMS= without a MARKER_TAG= "
                                          "before it")
            faces = SURFACE_TYPES if zone.dim == 3 else ("line",)
            _, by_type = _elements(path, s, _count(path, s), faces, "boundary element")
            zone.markers[-1] = (zone.markers[-1][0], by_type)
    return zones, n_zone


def _check_zone(path: str, z: _Zone, label: str) -> None:
    for key, missing in (("NDIME", not z.dim), ("NELEM", z.elements is None),
                         ("NPOIN", z.points is None)):
        if missing:
            raise MeshReadError(path, f"{label}has no {key}= section (truncated or not an SU2 "
                                      "mesh)")
    if z.n_mark is not None and z.n_mark != len(z.markers):
        raise MeshReadError(path, f"{label}NMARK= {z.n_mark} but {len(z.markers)} markers "
                                  "(MARKER_TAG=) follow")
    for name, by_type in z.markers:
        if by_type is None:
            raise MeshReadError(path, f"{label}marker {name!r} has no MARKER_ELEMS= line")


def _choose(path: str, zones: list[_Zone], n_zone: int | None, wanted: str | None):
    if n_zone is not None and n_zone != len(zones):
        raise MeshReadError(path, f"NZONE= {n_zone} but {len(zones)} zones (IZONE=) follow")
    names = [str(z.number) for z in zones]
    if len(zones) == 1 and wanted is None:
        return zones[0], ""
    if wanted is None or str(wanted) not in names:
        listing = "; ".join(
            f"{z.number}: {sum(len(v[0]) for v in (z.elements or (0, {}))[1].values())} "
            f"cells, markers {', '.join(m for m, _ in z.markers) or 'none'}" for z in zones)
        head = (f"mesh.zone {wanted!r} is not a zone of this file" if wanted is not None
                else f"holds {len(zones)} zones; set mesh.zone in the case file to the one "
                     "to check")
        raise MeshReadError(path, f"{head} (zones {listing})")
    return zones[names.index(str(wanted))], f"zone {wanted} of {len(zones)} "


def read_su2(path: Path, options: ReadOptions) -> MeshData:
    """Read one zone of an SU2 mesh file (see the module docstring)."""
    from caselint.mesh.limits import check_memory

    name = str(path)
    zones, n_zone = parse_zones(name, path.read_bytes())
    if not zones:
        raise MeshReadError(name, "no SU2 keywords (NDIME=, NELEM=, NPOIN=) found")
    for z in zones:
        _check_zone(name, z, f"zone {z.number}: " if len(zones) > 1 else "")
    zone, label = _choose(name, zones, n_zone, options.zone)
    types, by_type = zone.elements
    check_memory(name, {t: len(ids) for t, (ids, _) in by_type.items()}, "the file",
                 options.memory_limit)
    n_points = len(zone.points)
    blocks, order = _blocks(name, types, by_type, n_points)
    group_names = tuple(sorted({m for m, _ in zone.markers}))
    verts, group = [], []
    for marker, faces in zone.markers:
        for t, (ids, conn) in faces.items():
            verts.append(_in_range(name, conn, n_points, f"marker {marker!r}")[:, _PAD[t]])
            group.append(np.full(len(ids), group_names.index(marker), dtype=np.int32))
    width = 4 if zone.dim == 3 else 2
    boundary = BoundaryElements.empty(width)
    if verts:
        vertices = np.concatenate(verts)
        boundary = BoundaryElements(vertices, np.arange(len(vertices)), np.concatenate(group))
    points = checked_points(name, zone.points, options.scale_to_m)
    notes = (f"{label.strip()} read (mesh.zone)",) if label else ()
    try:
        data = mesh_from_elements(path=name, points=points, dim=zone.dim, blocks=blocks,
                                  boundary=boundary, group_names=group_names, notes=notes)
    except ValueError as exc:           # inconsistent arrays the checks above let through
        raise MeshReadError(name, str(exc)) from None
    if order is None or data.file_cell_ids is None:
        return data
    # Blocks hold the cells grouped by type: name them by their row in the file.
    return replace(data, file_cell_ids=order[data.file_cell_ids])


#: More runs of one element type than this: the table interleaves its types, so cells are
#: grouped by type (one block each) rather than given a block per run.
MAX_RUNS = 1000


def _blocks(path, types, by_type, n_points):
    """Element blocks, one per run of rows of one type, and None (cells stay in file
    order); or, for a table whose types interleave, one block per type and the file row
    of each cell in block order."""
    cuts = np.flatnonzero(types[1:] != types[:-1]) + 1
    bounds = np.concatenate([[0], cuts, [len(types)]])
    blocks = []
    if len(cuts) < MAX_RUNS:
        for a, b in zip(bounds[:-1], bounds[1:]):
            t = VTK_TYPES[int(types[a])]
            ids, conn = by_type[t]
            lo, hi = np.searchsorted(ids, [a, b])
            blocks.append(ElementBlock(t, _in_range(path, conn[lo:hi], n_points, t), int(a)))
        return blocks, None
    start = 0
    for t in sorted(by_type, key=_TYPE_ID.__getitem__):
        ids, conn = by_type[t]
        blocks.append(ElementBlock(t, _in_range(path, conn, n_points, t), start))
        start += len(ids)
    return blocks, np.argsort(types, kind="stable")


def _in_range(path: str, conn: np.ndarray, n_points: int, what: str) -> np.ndarray:
    lo, hi = int(conn.min(initial=0)), int(conn.max(initial=0))
    if lo < 0 or hi >= n_points:
        raise MeshReadError(path, f"{what} refers to point {lo if lo < 0 else hi}; the zone "
                                  f"has points 0..{n_points - 1} (NPOIN= {n_points})")
    return conn.astype(np.int32 if n_points < 2**31 else np.int64)


def looks_like_su2(path: Path) -> bool:
    """Whether the file opens like an SU2 mesh (an NDIME= or NZONE= keyword early on)."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(1 << 16)
    except OSError:
        return False
    return b"NDIME" in head or b"NZONE" in head


READER = MeshReader(
    name="su2", description="SU2 native meshes: element tables with named markers, one zone "
    "of a multi-zone file", read=read_su2, suffixes=(".su2",), accepts=looks_like_su2)
