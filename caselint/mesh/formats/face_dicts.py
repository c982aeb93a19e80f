"""The dictionaries of the face-based mesh folder: the ``boundary`` and ``cellZones`` lists
of named items ``name { key value; ... }`` (the list files themselves are read by
:mod:`caselint.mesh.formats.face_lists`).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from caselint.mesh.formats.face_lists import (
    ListFile, check_count, list_head, read_labels, skip_space,
)

_WORD = re.compile(rb'"(?:[^"\\]|\\.)*"|[()\[\]]|[^\s{}()\[\];"]+')
_INT = re.compile(rb"[0-9]+")


@dataclass
class Entry:
    """A dictionary entry: its words up to ``;`` or its sub-dictionary, and a label list."""

    words: list[str]
    sub: "dict[str, Entry] | None" = None
    labels: np.ndarray | None = None


def read_dict_list(lf: ListFile, what: str) -> list[tuple[str, dict[str, Entry], int]]:
    """The list ``N ( name { key value; ... } ... )`` of a boundary or zone file:
    (name, entries, offset) of each item; label lists inside are read with numpy."""
    size, opener, pos = list_head(lf, lf.start, what)
    if opener != b"(":
        raise lf.fail(pos, f"expected '(' to open the {what} list")
    items = []
    while True:
        pos = skip_space(lf, pos)
        if lf.data[pos:pos + 1] == b")":
            break
        if pos >= len(lf.data):
            raise lf.fail(pos, f"the {what} list is not closed (truncated)")
        name = _WORD.match(lf.data, pos)
        if name is None:
            raise lf.fail(pos, f"expected the name of an item of the {what} list")
        start = pos
        pos = skip_space(lf, name.end())
        if lf.data[pos:pos + 1] != b"{":
            raise lf.fail(pos, f"expected '{{' after {name.group().decode('latin-1')!r}")
        entries, pos = _read_dict(lf, pos + 1, what)
        items.append((name.group().decode("latin-1").strip('"'), entries, start))
    check_count(lf, pos, what, size, len(items))
    return items


def _read_dict(lf: ListFile, pos: int, what: str) -> tuple[dict[str, Entry], int]:
    """Entries of a ``{ ... }`` body from ``pos`` (after the brace) to the closing brace."""
    out: dict[str, Entry] = {}
    data = lf.data
    while True:
        pos = skip_space(lf, pos)
        if pos >= len(data):
            raise lf.fail(pos, f"a dictionary of the {what} list is not closed (truncated)")
        if data[pos:pos + 1] == b"}":
            return out, pos + 1
        key = _WORD.match(data, pos)
        if key is None:
            raise lf.fail(pos, f"expected a key in a dictionary of the {what} list")
        name = key.group().decode("latin-1")
        pos = skip_space(lf, key.end())
        if data[pos:pos + 1] == b"{":
            sub, pos = _read_dict(lf, pos + 1, what)
            out[name] = Entry([], sub=sub)
            continue
        words: list[str] = []
        labels = None
        while True:
            pos = skip_space(lf, pos)
            if pos >= len(data):
                raise lf.fail(pos, f"entry {name!r} is not closed by ';' (truncated)")
            if data[pos:pos + 1] == b";":
                pos += 1
                break
            if words and words[-1] == "List<label>" and _INT.match(data, pos):
                labels, pos = read_labels(lf, pos, f"{name} of the {what}")
                continue
            token = _WORD.match(data, pos)
            if token is None:
                raise lf.fail(pos, f"unexpected {data[pos:pos + 1]!r} in entry {name!r}")
            words.append(token.group().decode("latin-1").strip('"'))
            pos = token.end()
        out[name] = Entry(words, labels=labels)
