"""Numbers in text mesh files, parsed with numpy rather than line by line in Python.

Mesh files keep their bulk in tables of numbers, one row a line, with a few keyword or
header lines between them. :func:`numbers` turns a whole table into one array (numpy's
C parser, ``np.fromstring(text, sep=" ")``, about five times faster than splitting the
bytes in Python), and :func:`tokens_per_line` counts the numbers on each line from the
bytes themselves, so that rows of different lengths (element tables) are told apart and
a short or long row is named by its line.
"""

from __future__ import annotations

import warnings

import numpy as np

from caselint.errors import MeshReadError

_SPACE = np.zeros(256, dtype=bool)
_SPACE[[9, 10, 11, 12, 13, 32]] = True


def unix_lines(data: bytes) -> bytes:
    """``data`` with CRLF and lone CR line ends turned into LF."""
    if b"\r" not in data:
        return data
    return data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")


def line_starts(data: bytes) -> np.ndarray:
    """(L,) byte offset of the start of every line of ``data`` (LF line ends)."""
    buf = np.frombuffer(data, dtype=np.uint8)
    return np.concatenate([[0], np.flatnonzero(buf == 10) + 1]).astype(np.int64)


def tokens_per_line(chunk: bytes) -> np.ndarray:
    """(L,) number of whitespace-separated tokens on each line of ``chunk``."""
    buf = np.frombuffer(chunk, dtype=np.uint8)
    if not len(buf):
        return np.zeros(0, dtype=np.int64)
    space = _SPACE[buf]
    starts = ~space
    starts[1:] &= space[:-1]
    ends = np.flatnonzero(buf == 10)
    if not len(ends) or ends[-1] != len(buf) - 1:
        ends = np.append(ends, len(buf) - 1)
    before = np.concatenate([[0], np.cumsum(starts)])
    return np.diff(np.concatenate([[0], before[ends + 1]]))


def numbers(chunk: bytes, dtype, path: str, what: str) -> np.ndarray:
    """All numbers of ``chunk`` as one flat array of ``dtype``.

    :raises MeshReadError: text that is not a number (naming ``what`` in ``path``).
    """
    text = chunk.decode("ascii", errors="replace")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            values = np.fromstring(text, dtype=dtype, sep=" ")
    except (ValueError, DeprecationWarning):
        values = None
    if values is None or (not len(values) and text.strip()):
        bad = next((t for t in text.split() if not _is_number(t, dtype)), "?")
        raise MeshReadError(path, f"{what}: {bad[:40]!r} is not a number")
    return values


def _is_number(token: str, dtype) -> bool:
    try:
        (int if np.dtype(dtype).kind in "iu" else float)(token)
    except ValueError:
        return False
    return True
