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


def _token_starts(buf: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per byte: whether a token starts there, and whether it is whitespace."""
    space = _SPACE[buf]
    start = np.empty(len(buf), dtype=bool)
    start[0] = not space[0]
    np.greater(space[:-1], space[1:], out=start[1:])     # space, then not space
    return start, space


def _token_bounds(buf: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start and end (exclusive) byte offsets of the whitespace-separated tokens."""
    start, space = _token_starts(buf)
    end = np.empty(len(buf), dtype=bool)
    np.less(space[:-1], space[1:], out=end[:-1])        # not space, then space
    end[-1] = not space[-1]
    return np.flatnonzero(start), np.flatnonzero(end) + 1


def tokens_per_line(chunk: bytes) -> np.ndarray:
    """(L,) number of whitespace-separated tokens on each line of ``chunk``."""
    buf = np.frombuffer(chunk, dtype=np.uint8)
    if not len(buf):
        return np.zeros(0, dtype=np.int64)
    start, _ = _token_starts(buf)
    line = np.flatnonzero(buf == 10) + 1
    line = np.concatenate([[0], line[line < len(buf)]])
    return np.add.reduceat(start, line, dtype=np.int64)


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


_HEX = np.full(256, -1, dtype=np.int64)
_HEX[np.frombuffer(b"0123456789", np.uint8)] = np.arange(10)
_HEX[np.frombuffer(b"abcdef", np.uint8)] = np.arange(10, 16)
_HEX[np.frombuffer(b"ABCDEF", np.uint8)] = np.arange(10, 16)


def hex_numbers(chunk: bytes, path: str, what: str) -> np.ndarray:
    """All whitespace-separated hexadecimal numbers of ``chunk`` as int64, vectorised:
    one pass per digit position over all tokens (value = 16 * value + digit where the
    token is that long), so the working memory is a few arrays per token, not per byte.

    :raises MeshReadError: a token that is not a hexadecimal number, or one of more than
        15 digits.
    """
    buf = np.frombuffer(chunk, dtype=np.uint8)
    starts, ends = _token_bounds(buf)
    if not len(starts):
        return np.zeros(0, dtype=np.int64)
    length = ends - starts
    longest = int(length.max())
    if longest > 15:
        raise MeshReadError(path, f"{what}: a number of more than 15 hexadecimal digits")
    value = np.zeros(len(starts), dtype=np.int64)
    last = len(buf) - 1
    for k in range(longest):
        # past a token's end the byte is whitespace (or the chunk's end): masked out
        digit = _HEX[buf[np.minimum(starts + k, last)]]
        inside = length > k
        if (inside & (digit < 0)).any():
            first = int(starts[np.argmax(inside & (digit < 0))])
            token = bytes(buf[first:first + 20]).split()[0].decode("latin-1", "replace")
            raise MeshReadError(path, f"{what}: {token!r} is not a hexadecimal number")
        value = np.where(inside, value * 16 + digit, value)
    return value


def record_starts(values: np.ndarray, n_records: int, extra: int, path: str,
                  what: str, sizes: np.ndarray | None = None) -> np.ndarray:
    """Where each of ``n_records`` records starts in ``values``, a record being a count
    ``n`` followed by ``n + extra`` numbers (or, with ``sizes``, a code ``n`` followed by
    ``sizes[n]`` numbers: an element type and its nodes).

    Runs of records of one length are found with one vectorised comparison each (a window
    that doubles while the run lasts), so a table of a few face sizes in long runs costs a
    few steps; a table whose sizes change at every record costs one step per record.

    :raises MeshReadError: a count below 1 or a table shorter than its records.
    """
    starts = np.empty(n_records, dtype=np.int64)
    p, r, window = 0, 0, 64
    total = len(values)
    while r < n_records:
        if p >= total:
            raise MeshReadError(path, f"{what}: {n_records} records declared, the data ends "
                                      f"after {r}")
        n = int(values[p])
        if sizes is not None:
            known = 0 <= n < len(sizes) and sizes[n] > 0
            length = int(sizes[n]) + 1 if known else 0
        else:
            length = n + 1 + extra if n >= 1 else 0
        if length < 2:
            raise MeshReadError(path, f"{what}: record {r + 1} starts with {n}, which is not "
                                      + ("an element type" if sizes is not None else
                                         "a count of at least 1"))
        w = min(window, n_records - r, max(1, (total - p) // length))
        cand = p + length * np.arange(w)
        same = values[cand] == n
        k = w if same.all() else max(1, int(np.argmin(same)))
        starts[r:r + k] = cand[:k]
        r += k
        p = int(cand[k - 1]) + length
        window = window * 2 if k == w else 64
    if p > total:
        raise MeshReadError(path, f"{what}: the data ends inside record {n_records}")
    return starts
