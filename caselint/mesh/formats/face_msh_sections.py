"""The section scanner of the face-based ``.msh`` (see :mod:`.face_msh` for the layout).

A file is a sequence of S-expression sections ``(id (header) (data))``. Sections are found
one after the other (a few hundred in a large file: a Python loop over sections, never
over their data). ASCII data is kept as bytes for the numpy parsers of
:mod:`.text_tables`; binary data (section ids 20xx and 30xx) is decoded here, its length
known from the header, or for mixed and polygonal faces from the counts that lead each
face; the ``End of Binary Section`` trailer is skipped.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.formats.text_tables import record_starts

_ID = re.compile(rb"\(\s*(\d+)")
_BRACKET = re.compile(rb'[()"]')
#: Nodes of the fixed face types; 0 (mixed) and 5 (polygonal) lead each face with a count.
FACE_NODES = {2: 2, 3: 3, 4: 4}


@dataclass
class Section:
    kind: int                 # section id without the binary prefix (10, 12, 13, ...)
    binary: int               # 0 ASCII, 4 or 8: bytes of a binary coordinate
    header: list[str]
    line: int
    body: object = None       # ASCII bytes, or decoded arrays for binary sections


def _line(data: bytes, at: int) -> int:
    return data.count(b"\n", 0, at) + 1


def _skip_balanced(path: str, data: bytes, at: int) -> int:
    """Index after the parenthesis group opening at ``at`` (quoted text may hold any)."""
    depth, pos = 0, at
    while (m := _BRACKET.search(data, pos)) is not None:
        pos = m.end()
        if m.group() == b'"':                   # quoted text: skip to its closing quote
            pos = data.find(b'"', pos) + 1
            if pos == 0:
                break
            continue
        depth += 1 if m.group() == b"(" else -1
        if depth == 0:
            return pos
    raise MeshReadError(path, f"line {_line(data, at)}: a section is not closed (truncated)")


def hex_word(path: str, word: str, line: int) -> int:
    """One hexadecimal header number (MeshReadError naming the line if it is not one)."""
    try:
        return int(word, 16)
    except ValueError:
        raise MeshReadError(path, f"line {line}: {word!r} is not a hexadecimal number") from None


def sections(path: str, data: bytes) -> list[Section]:
    """Every section of the file, binary data decoded, ASCII data kept as bytes."""
    out: list[Section] = []
    pos, counted, line = 0, 0, 1
    while (i := data.find(b"(", pos)) >= 0:
        m = _ID.match(data, i)
        line += data.count(b"\n", counted, i)      # counted once per byte, not per section
        counted = i
        if m is None:
            raise MeshReadError(path, f"line {line}: expected a section '(number ...', found "
                                      f"{data[i:i + 20]!r}")
        sid = int(m.group(1))
        kind, binary = (sid % 1000, 4 if sid < 3000 else 8) if sid >= 2000 else (sid, 0)
        j = m.end()
        if kind in (0, 1, 39, 45) or kind not in (2, 10, 12, 13, 18):
            end = _skip_balanced(path, data, i)
            if kind in (39, 45):
                inner = data[j:end].lstrip()
                head = inner[1:inner.find(b")")] if inner.startswith(b"(") else b""
                out.append(Section(kind, 0, head.decode("latin-1").split(), line))
            elif binary:
                raise MeshReadError(path, f"line {line}: binary section {sid} cannot be "
                                          "skipped (its length is unknown)")
            pos = end
            continue
        while data[j:j + 1].isspace():
            j += 1
        if data[j:j + 1] != b"(":
            k = data.find(b")", j)
            out.append(Section(kind, 0, data[j:k].decode("latin-1").split(), line))
            pos = k + 1
            continue
        k = data.find(b")", j)
        if k < 0:
            raise MeshReadError(path, f"line {line}: section {sid} is not closed (truncated)")
        section = Section(kind, binary, data[j + 1:k].decode("latin-1").split(), line)
        out.append(section)
        j = k + 1
        while data[j:j + 1].isspace():
            j += 1
        if data[j:j + 1] != b"(":
            pos = j + 1
            continue
        if binary:
            section.body, j = _binary_body(path, data, j + 1, section, sid)
        else:
            k = data.find(b")", j)
            if k < 0:
                raise MeshReadError(path, f"line {line}: the data of section {sid} is not "
                                          "closed (truncated)")
            section.body, j = data[j + 1:k], k + 1
        close = data.find(b")", j)
        if close < 0:
            raise MeshReadError(path, f"line {line}: section {sid} is not closed (truncated)")
        pos = close + 1
    return out


def _binary_body(path, data, at, section, sid):
    """Decode the binary data of a node, cell or face section starting at byte ``at``;
    return it and the byte after it (past ``End of Binary Section`` where present)."""
    head = [hex_word(path, w, section.line) for w in section.header]
    count = head[2] - head[1] + 1
    if section.kind == 10:
        nd = head[4] if len(head) > 4 else 3
        size = count * nd * section.binary
        dtype = "<f4" if section.binary == 4 else "<f8"
        body = np.frombuffer(data, dtype=dtype, count=count * nd, offset=at) \
            if at + size <= len(data) else None
    elif section.kind in (12, 18):               # cell types; periodic face pairs
        count *= 1 if section.kind == 12 else 2
        size = count * 4
        body = np.frombuffer(data, "<i4", count=count, offset=at) \
            if at + size <= len(data) else None
    else:
        words = np.frombuffer(data, "<i4", count=(len(data) - at) // 4, offset=at)
        if head[4] in FACE_NODES:
            size = count * (FACE_NODES[head[4]] + 2) * 4
        else:
            starts = record_starts(words, count, 2, path, f"line {section.line}: faces")
            size = 4 * (int(starts[-1]) + int(words[starts[-1]]) + 3) if count else 0
        body = words[:size // 4] if at + size <= len(data) else None
    if body is None:
        raise MeshReadError(path, f"line {section.line}: binary section {sid} ends before its "
                                  f"{count} entries (truncated)")
    end = at + size
    if data[end:end + 1] != b")":
        raise MeshReadError(path, f"line {section.line}: binary section {sid} holds more data "
                                  "than its header declares")
    end += 1
    tail = re.compile(rb"\s*End of Binary Section\s*\d+\s*").match(data, end)
    return np.asarray(body), (tail.end() if tail else end)
