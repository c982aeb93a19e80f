"""Compiled parsing (numba) of the ASCII lists of the face-based mesh folder: labels, the
face list ``k(a b c ...)`` and the scalars of the points.

The numpy reference is in :mod:`caselint.mesh.formats.face_lists` (``np.fromstring`` on the
list's text). Each function here reads the same bytes (the same start and end, found by
the reference's own ``find``) and either returns the arrays the reference returns, of the
same types, or None for any text outside a plain grammar: a sign where none belongs, a
comment, a word, a count out of step, a label too large for its type. The caller then runs
the reference, which reads such text or names the fault: a damaged file gets the
reference's message, word for word.

Integers are parsed exactly. A decimal number ``d.ddd e±x`` is turned into the nearest
double only where that is certain: mantissas of up to 19 significant digits with an
exponent whose power of ten is exact in a double and the mantissa at most 2^53 (one
correctly rounded multiplication or division: Clinger, "How to read floating point
numbers accurately", PLDI 1990), or else by the Eisel-Lemire method (the 128-bit product of
the mantissa with a truncated 128-bit power of ten, and the tests that prove its rounding;
D. Lemire, "Number parsing at a gigabyte per second", Software: Practice and Experience
51(8), 2021, section 5), which reports the inputs it cannot round with certainty. Every
other number (more than 19 significant digits, halfway cases Eisel-Lemire leaves open,
results below the normal range or beyond the largest double) is handed to numpy's parser
with the others of its list in one call, so every value equals Python's ``float()`` of
its text to the bit.
"""

from __future__ import annotations

import math
import warnings

import numpy as np

from caselint.mesh.kernels import jit

_U = np.uint64
_POW10_MIN, _POW10_MAX = -348, 347


def _powers_of_ten() -> tuple[np.ndarray, np.ndarray]:
    """The high and low 64 bits of 10^e for e in [-348, 347], each scaled by a power of two
    into [2^127, 2^128) and truncated (exact integer arithmetic)."""
    high, low = [], []
    for e in range(_POW10_MIN, _POW10_MAX + 1):
        if e >= 0:
            value = 10 ** e
            bits = value.bit_length()
            m = value >> (bits - 128) if bits > 128 else value << (128 - bits)
            log2 = bits - 1
        else:
            d = 10 ** -e
            m = (1 << (127 + d.bit_length())) // d      # d is no power of two: m < 2^128
            log2 = -d.bit_length()
        # the binary exponent is taken from e by (217706 e) >> 16 = floor(e log2 10)
        assert (217706 * e) >> 16 == log2 and m >> 127 == 1, e
        high.append(m >> 64)
        low.append(m & (2 ** 64 - 1))
    return np.array(high, dtype=np.uint64), np.array(low, dtype=np.uint64)


_HIGH, _LOW = _powers_of_ten()
#: 10^0 .. 10^22, each exact in a double.
_EXACT_TENS = np.array([10.0 ** k for k in range(23)])


@jit(inline="always")
def _space(c) -> bool:
    return c == 32 or (c >= 9 and c <= 13)


@jit(inline="always")
def _digit(c) -> bool:
    return c >= 48 and c <= 57


@jit(inline="always")
def _product(a, b):
    """The 128-bit product of two uint64 as (high, low), from 32-bit halves."""
    half, s = _U(0xFFFFFFFF), _U(32)
    a0, a1, b0, b1 = a & half, a >> s, b & half, b >> s
    p00, p01, p10, p11 = a0 * b0, a0 * b1, a1 * b0, a1 * b1
    mid = (p00 >> s) + (p01 & half) + (p10 & half)
    return p11 + (p01 >> s) + (p10 >> s) + (mid >> s), (mid << s) | (p00 & half)


@jit(inline="always")
def _leading_zeros(x) -> int:
    n = 0
    for width in (32, 16, 8, 4, 2, 1):
        if x >> _U(64 - width) == _U(0):
            n += width
            x = x << _U(width)
    return n


@jit
def _eisel_lemire(man, e10):
    """The double nearest ``man`` * 10^``e10`` (``man`` > 0) and True, or (0, False) where
    the product does not decide the rounding or the result is not a normal double."""
    if e10 < _POW10_MIN or e10 > _POW10_MAX:
        return 0.0, False
    row = e10 - _POW10_MIN
    clz = _leading_zeros(man)
    man = man << _U(clz)
    exp2 = ((217706 * e10) >> 16) + 64 + 1023 - clz
    hi, lo = _product(man, _HIGH[row])
    low9 = _U(0x1FF)
    if (hi & low9) == low9 and lo + man < man:
        # the low bits may carry into the kept ones: add the next 64 bits of the power
        hi2, lo2 = _product(man, _LOW[row])
        merged_lo = lo + hi2
        merged_hi = hi + _U(1) if merged_lo < lo else hi
        if (merged_hi & low9) == low9 and merged_lo + _U(1) == _U(0) and lo2 + man < man:
            return 0.0, False
        hi, lo = merged_hi, merged_lo
    top = hi >> _U(63)
    mantissa = hi >> (top + _U(9))
    exp2 -= 1 - int(top)
    if lo == _U(0) and (hi & low9) == _U(0) and (mantissa & _U(3)) == _U(1):
        return 0.0, False                                  # exactly halfway: undecided
    mantissa = (mantissa + (mantissa & _U(1))) >> _U(1)
    if mantissa >> _U(53) != _U(0):
        mantissa = mantissa >> _U(1)
        exp2 += 1
    if exp2 <= 0 or exp2 >= 0x7FF:
        return 0.0, False
    return math.ldexp(float(mantissa), exp2 - 1075), True


@jit(inline="always")
def _decimal(man, e10, negative):
    """The double nearest (-1)^negative * ``man`` * 10^``e10``, and whether it is certain."""
    if man == _U(0):
        return (-0.0 if negative else 0.0), True
    if man <= _U(9007199254740992) and -22 <= e10 <= 22:
        value = float(man)
        value = value * _EXACT_TENS[e10] if e10 >= 0 else value / _EXACT_TENS[-e10]
    else:
        value, ok = _eisel_lemire(man, e10)
        if not ok:
            return 0.0, False
    return (-value if negative else value), True


@jit
def _scalars(data, start, stop, out):
    """The numbers of ``data[start:stop]`` (parentheses count as blanks) into ``out``; the
    count read (-1: text outside the grammar, or more numbers than ``out`` holds) and the
    (index, first byte, end byte) of each number left to numpy, flattened."""
    pending = np.empty(192, dtype=np.int64)
    n_pending = n = 0
    i = start
    while True:
        while i < stop and (_space(data[i]) or data[i] == 40 or data[i] == 41):
            i += 1
        if i >= stop:
            break
        if n >= out.size:
            return -1, pending[:0]
        first = i
        negative = data[i] == 45
        if negative or data[i] == 43:
            i += 1
        man = _U(0)
        e10 = digits = seen = 0
        many = fraction = False
        while i < stop:
            c = data[i]
            if c == 46 and not fraction:
                fraction = True
                i += 1
                continue
            if not _digit(c):
                break
            seen += 1
            if man == _U(0) and c == 48:                  # a leading zero
                e10 -= 1 if fraction else 0
            elif digits < 19:
                man = man * _U(10) + _U(c - 48)
                digits += 1
                e10 -= 1 if fraction else 0
            else:
                many = True                               # left to numpy
            i += 1
        if seen == 0:
            return -1, pending[:0]
        if i < stop and (data[i] == 101 or data[i] == 69):
            i += 1
            minus = i < stop and data[i] == 45
            if i < stop and (data[i] == 45 or data[i] == 43):
                i += 1
            power = count = 0
            while i < stop and _digit(data[i]):
                power = power * 10 + (data[i] - 48) if power < 100000 else power
                count += 1
                i += 1
            if count == 0:
                return -1, pending[:0]
            e10 += -power if minus else power
        if i < stop and not (_space(data[i]) or data[i] == 40 or data[i] == 41):
            return -1, pending[:0]
        value, ok = (0.0, False) if many else _decimal(man, e10, negative)
        if ok:
            out[n] = value
        else:
            if 3 * n_pending + 3 > pending.size:
                pending = np.concatenate((pending, pending))
            pending[3 * n_pending] = n
            pending[3 * n_pending + 1] = first
            pending[3 * n_pending + 2] = i
            n_pending += 1
        n += 1
    return n, pending[:3 * n_pending]


@jit
def _spans_text(data, spans):
    """The bytes of the (index, first, end) spans, each followed by a blank."""
    total = 0
    for j in range(0, spans.size, 3):
        total += spans[j + 2] - spans[j + 1] + 1
    text = np.empty(total, dtype=np.uint8)
    at = 0
    for j in range(0, spans.size, 3):
        for b in range(spans[j + 1], spans[j + 2]):
            text[at] = data[b]
            at += 1
        text[at] = 32
        at += 1
    return text


@jit(inline="always")
def _unsigned(data, i, stop, limit):
    """The unsigned integer at ``i`` and the offset after it; -1 when there is no digit,
    more than 18, or a value above ``limit``."""
    value = count = 0
    while i < stop and _digit(data[i]):
        if count == 18:
            return -1, i
        value = value * 10 + (data[i] - 48)
        count += 1
        i += 1
    if count == 0 or value > limit:
        return -1, i
    return value, i


@jit
def _labels(data, start, stop, out, limit):
    """The integers of ``data[start:stop]`` into ``out``: their count, or -1 (text outside
    the grammar, a value outside -``limit`` .. ``limit``, more than ``out`` holds)."""
    n = 0
    i = start
    while True:
        while i < stop and _space(data[i]):
            i += 1
        if i >= stop:
            return n
        if n >= out.size:
            return -1
        sign = 1 if data[i] == 45 else 0
        # (the most negative label, -limit - 1, is left to numpy)
        value, i = _unsigned(data, i + sign, stop, limit)
        if value < 0 or (i < stop and not _space(data[i])):
            return -1
        out[n] = -value if sign else value
        n += 1


@jit
def _faces(data, start, stop, offsets, ids, limit):
    """The faces ``k(a b ...)`` of ``data[start:stop]``: ``offsets`` (one more than the
    faces declared) filled, and the point ids (``ids`` grown as needed) with their count;
    -1 for text outside the grammar, a face of no points or not of its size, or a face
    count other than declared."""
    n_faces = offsets.size - 1
    face = at = end = 0
    expect_size = True
    i = start
    while True:
        while i < stop and (_space(data[i]) or data[i] == 40):
            i += 1
        if i >= stop:
            break
        if data[i] == 41:
            if expect_size or at != end or face == n_faces:
                return -1, ids
            face += 1
            offsets[face] = end
            expect_size = True
            i += 1
            continue
        value, i = _unsigned(data, i, stop, limit)
        if value < 0 or (i < stop and not (_space(data[i]) or data[i] == 40 or data[i] == 41)):
            return -1, ids
        if expect_size:
            if value == 0:
                return -1, ids
            end = at + value
            expect_size = False
            continue
        if at == end:
            return -1, ids
        if at == ids.size:
            ids = np.concatenate((ids, ids))
        ids[at] = value
        at += 1
    if not expect_size or face != n_faces:
        return -1, ids
    return at, ids


def labels(data: bytes, start: int, stop: int, size: int, dtype: np.dtype) -> np.ndarray | None:
    """The ``size`` integers of ``data[start:stop]`` as ``dtype``, or None (see the module
    docstring: the reference reads the text)."""
    out = np.empty(size, dtype=dtype)
    found = _labels(np.frombuffer(data, dtype=np.uint8), start, stop, out,
                    np.iinfo(dtype).max)
    return out if found == size else None


def faces(data: bytes, start: int, stop: int, size: int,
          dtype: np.dtype) -> tuple[np.ndarray, np.ndarray] | None:
    """CSR offsets (int64) and point ids (``dtype``) of the ``size`` faces written in
    ``data[start:stop]``, or None (see the module docstring)."""
    offsets = np.zeros(size + 1, dtype=np.int64)
    # room for quadrilaterals; the kernel doubles it for larger faces
    found, ids = _faces(np.frombuffer(data, dtype=np.uint8), start, stop, offsets,
                        np.empty(4 * size + 64, dtype=dtype), np.iinfo(dtype).max)
    if found < 0:
        return None
    return offsets, ids[:found].copy()


def scalars(data: bytes, start: int, stop: int, count: int) -> np.ndarray | None:
    """The ``count`` numbers of ``data[start:stop]`` (parentheses as blanks) as float64,
    or None (see the module docstring)."""
    buffer = np.frombuffer(data, dtype=np.uint8)
    out = np.empty(count, dtype=np.float64)
    found, pending = _scalars(buffer, start, stop, out)
    if found != count:
        return None
    if pending.size:
        with warnings.catch_warnings():
            warnings.simplefilter("error", DeprecationWarning)
            try:
                values = np.fromstring(_spans_text(buffer, pending).tobytes(), sep=" ")
            except (DeprecationWarning, ValueError):
                return None
        if values.size != pending.size // 3:
            return None
        out[pending[0::3]] = values
    return out
