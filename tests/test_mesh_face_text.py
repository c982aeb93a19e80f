"""The compiled parser of the face-based mesh folder's ASCII lists against its numpy
reference and against Python's ``float()``.

References: Python's ``float()`` (correctly rounded decimal-to-double conversion, David
Gay's algorithm in CPython) for every number, on random and adversarial strings (halfway
cases between neighbouring doubles, subnormals, the largest double, 17 to 25 significant
digits, exponents up to the ends of the range, signs, leading zeros, 'e' and 'E', no
fraction); exact integer arithmetic for the 128-bit powers of ten; the numpy reference
(``CASELINT_KERNELS=numpy``) for the arrays and for the message of every damaged file.
"""

from __future__ import annotations

import gzip
import random
import struct
from pathlib import Path

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh.blocks import structured_hex, tetrahedralise
from caselint.mesh.formats.face_folder import read_folder_mesh
from caselint.mesh.formats.face_lists import list_head, open_list_file
from caselint.mesh.formats.meshio_files import meshio_data
from caselint.mesh.refined import refined_block
from mesh_writers import write_face_folder

pytest.importorskip("numba")
from caselint.mesh.kernels import text_lists  # noqa: E402  (imports numba)

ARRAYS = ("points", "face_offsets", "face_points", "owner", "neighbour")


def parsed(strings: list[str]) -> np.ndarray:
    text = " ".join(strings).encode()
    values = text_lists.scalars(text, 0, len(text), len(strings))
    assert values is not None
    return values


def assert_as_float(strings: list[str]) -> None:
    got = parsed(strings)
    expected = np.array([float(s) for s in strings])
    wrong = np.flatnonzero(got.view(np.uint64) != expected.view(np.uint64))
    assert not wrong.size, [(strings[i], got[i], expected[i]) for i in wrong[:5]]


ADVERSARIAL = [
    "0", "-0", "+0", "0.0", "-0.0", "0e0", "0e999999", "-0e-99999", "00000.00000", ".5", "5.",
    "-.5", "+5.", "1e22", "1e23", "-1e22", "9007199254740992e22", "9007199254740993e-22",
    "9007199254740993", "9007199254740992", "9007199254740995", "18014398509481985",
    "2.2250738585072011e-308", "2.2250738585072014e-308", "2.2250738585072012e-308",
    "4.9406564584124654e-324", "5e-324", "2e-324", "3e-324", "1e-324", "2.4703282292062328e-324",
    "1.7976931348623157e308", "1.7976931348623158e308", "1.7976931348623159e308", "1e308",
    "1e309", "1e-400", "123456789012345678901234567890", "0." + "0" * 40 + "1", "1E5", "1e+05",
    "1e-05", "7.1e-10", "9999999999999999999", "10000000000000000000", "18446744073709551615",
    "18446744073709551616", "0.1", "0.2", "0.3", "3.0000000000000004", "1.0000000000000002",
    "0.9999999999999999", "8.98846567431158e307", "4503599627370496.5", "4503599627370497.5",
    "2.5e-1", "1.5e0", "123e-2", "0001.2500", "1.00000000000000000000000000001",
    "0.04878048780487805", "1.2345678901234567", "-1.2345678901234567e-5",
]


def _random_strings(n: int, seed: int) -> list[str]:
    rng = random.Random(seed)

    def any_double() -> float:
        while True:
            x = struct.unpack("<d", struct.pack("<Q", rng.getrandbits(64)))[0]
            if np.isfinite(x):
                return x

    def decimal() -> str:
        digits = "".join(rng.choice("0123456789")
                         for _ in range(rng.choice([1, 2, 5, 15, 16, 17, 18, 19, 19, 20, 25])))
        digits = "0" * rng.choice([0, 0, 1, 3]) + digits
        cut = rng.randint(0, len(digits))
        text = digits[:cut] + ("." if rng.random() < 0.8 else "") + digits[cut:]
        text = "0." if text == "." else text
        if rng.random() < 0.6:
            text += rng.choice("eE") + rng.choice(["", "+", "-"]) + str(rng.randint(0, 345))
        return rng.choice(["", "-", "+"]) + text

    def halfway() -> str:
        # the midpoint of two neighbouring doubles in [2^53, 2^63): an integer of at most
        # 19 digits, which must round to the even neighbour
        a = rng.getrandbits(52) | (1 << 52)
        mid = str((2 * a + 1) << rng.randint(0, 9))
        zeros = rng.randint(0, 3)
        return rng.choice(["", "-"]) + rng.choice(
            [mid, mid + "0" * zeros + f"e-{zeros}", f"{mid[0]}.{mid[1:]}e{len(mid) - 1}"])

    def subnormal() -> str:
        x = struct.unpack("<d", struct.pack("<Q", rng.getrandbits(52)))[0]
        return rng.choice([repr(x), f"{x:.17e}", f"{x:.20e}", f"{x:.3e}"])

    makers = [lambda: repr(any_double()), lambda: f"{any_double():.17g}",
              lambda: f"{any_double():.20e}", decimal, halfway, subnormal,
              lambda: repr(rng.uniform(-5.0, 5.0)), lambda: f"{rng.uniform(-1e3, 1e3):.15g}",
              lambda: repr(rng.random() * 10.0 ** rng.randint(-30, 30))]
    return [rng.choice(makers)() for _ in range(n)]


def test_adversarial_numbers_equal_float_to_the_bit():
    assert_as_float(ADVERSARIAL)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_random_numbers_equal_float_to_the_bit(seed):
    assert_as_float(_random_strings(200_000, seed))


def test_powers_of_ten_are_truncated_128_bit_values():
    high, low = text_lists._HIGH, text_lists._LOW
    row = 43 - text_lists._POW10_MIN       # 10^43 has 143 bits: the top 128, truncated
    assert (int(high[row]) << 64 | int(low[row])) == 10 ** 43 >> 15
    row = -5 - text_lists._POW10_MIN       # 2^144 / 10^5, rounded down
    assert (int(high[row]) << 64 | int(low[row])) == 2 ** 144 // 10 ** 5


# -- the lists of whole mesh folders --------------------------------------------------------


def _jittered_polyhedra():
    axis = np.linspace(0.0, 1.0, 9)
    data = refined_block(axis, axis, axis, ((0.25, 0.75),) * 3)
    rng = np.random.default_rng(4)
    import dataclasses

    # coordinates of 17 significant digits, most of them beyond the one-division fast path
    return dataclasses.replace(data, points=data.points + rng.uniform(-1e-3, 1e-3,
                                                                      data.points.shape))


MESHES = {
    "hex": lambda: meshio_data(structured_hex(*(np.linspace(0.0, 2.0, 7),) * 3)),
    "tet": lambda: meshio_data(tetrahedralise(structured_hex(*(np.linspace(0, 1, 5),) * 3))),
    "polyhedra": _jittered_polyhedra,
}


def _read(folder: Path, mode: str, monkeypatch) -> object:
    monkeypatch.setenv("CASELINT_KERNELS", mode)
    return read_folder_mesh(folder)


@pytest.mark.parametrize("mesh", sorted(MESHES))
@pytest.mark.parametrize("layout", [{}, {"labels": 64}, {"gz": True}, {"compact": True}])
def test_compiled_lists_equal_the_reference(tmp_path, monkeypatch, mesh, layout):
    folder = write_face_folder(tmp_path / "m", MESHES[mesh](), **layout)
    reference, compiled = (_read(folder, mode, monkeypatch) for mode in ("numpy", "numba"))
    for name in ARRAYS:
        a, b = getattr(reference, name), getattr(compiled, name)
        assert a.dtype == b.dtype and a.shape == b.shape, name
        assert np.array_equal(a.view(np.uint8), b.view(np.uint8)), name


@pytest.mark.parametrize("name", ["points", "faces", "owner", "neighbour"])
def test_the_compiled_parser_reads_well_formed_lists_itself(tmp_path, name):
    """Not left to numpy: the kernel gives the arrays on the files the writers write."""
    folder = write_face_folder(tmp_path / "m", MESHES["polyhedra"](), labels=64)
    lf = open_list_file(folder, name)
    size, _, pos = list_head(lf, lf.start, name)
    dtype = np.dtype(np.int64)
    if name == "points":
        got = text_lists.scalars(lf.data, pos, lf.data.rfind(b")"), 3 * size)
    elif name == "faces":
        got = text_lists.faces(lf.data, pos, lf.data.rfind(b")"), size, dtype)
    else:
        got = text_lists.labels(lf.data, pos, lf.data.find(b")", pos), size, dtype)
    assert got is not None


# -- damaged and unusual lists: the compiled path ends as the reference does -----------------


def _outcome(folder: Path, mode: str, monkeypatch):
    try:
        return _read(folder, mode, monkeypatch), None
    except MeshReadError as exc:
        return None, str(exc)


def _edit(folder: Path, name: str, old: str, new: str, count: int = 1) -> None:
    path = folder / name
    text = path.read_text()
    assert old in text, (name, old)
    path.write_text(text.replace(old, new, count))


CUBE = lambda: meshio_data(structured_hex(np.arange(3.0), np.arange(2.0), np.arange(2.0)))  # noqa: E731

#: (file, text, replacement, what the message says); None: the file reads.
DAMAGE = [
    ("points", "12\n(", "13\n(", "declares 13 points but holds 12 (truncated)"),
    ("points", "(1.0 0.0 0.0)", "(1.0 abc 0.0)", "holds text that is not a number"),
    ("points", "(1.0 0.0 0.0)", "(1.0 0.0 0.0 7.0)", "holds 37 numbers, not 3 per point"),
    ("points", "(1.0 0.0 0.0)", "(1.0 0.0.5 0.0)", "not a number"),
    ("points", "(2.0 1.0 1.0)\n)", "(2.0 1.0 1.0\n", "declares 12 points but holds 11"),
    ("points", "(1.0 0.0 0.0)", "(1.0 0.0 0.0) // a comment (with brackets)", None),
    ("points", "(1.0 0.0 0.0)", "(1e0 +0. -0.0E-0)", None),
    ("points", "(1.0 0.0 0.0)", "(1.0 nan 0.0)", None),
    ("faces", "4(1 4 10 7)", "4(1 4 10)", "face 0 of the face list does not hold the number"),
    ("faces", "11\n(", "12\n(", "the faces list declares 12 faces but holds 11"),
    ("faces", "4(1 4 10 7)\n", "4(1 4 10 7\n", "declares 11 faces but holds 10"),
    ("faces", "4(1 4 10 7)", "4(1 4 x 7)", "holds text that is not a number"),
    ("faces", "4(1 4 10 7)", "4(1 -4 10 7)", "a face refers to point -4"),   # read, then refused
    ("faces", "4(1 4 10 7)", "4 (1 4 10 7) /* a comment */", None),
    ("faces", "4(1 4 10 7)", "4(1 4 10 4294967297)", "holds 4294967297, beyond the 32-bit"),
    ("owner", "11\n(", "12\n(", "the owner list declares 12 items but holds 11 (truncated)"),
    ("owner", "(\n0\n1\n", "(\n0\nq\n", "the owner list holds text that is not a number"),
    ("owner", "1\n)", "1\n", "the owner list of 11 items is not closed (truncated)"),
    ("owner", "(\n0\n1\n", "(\n0\n+1\n", None),
    ("owner", "(\n0\n1\n", "(\n0\n1.5\n", "not a number"),
    ("owner", "(\n0\n1\n", "(\n0\n2147483648\n", "holds 2147483648, beyond the 32-bit"),
    ("neighbour", "1\n(\n1\n)", "1\n(\n1 1\n)", "the neighbour list declares 1 items but holds 2"),
]


@pytest.mark.parametrize("name, old, new, message", DAMAGE)
def test_damaged_and_unusual_lists_end_as_in_the_reference(tmp_path, monkeypatch, name, old,
                                                           new, message):
    folder = write_face_folder(tmp_path / "m", CUBE())
    _edit(folder, name, old, new)
    (reference, wrong), (compiled, wrong_compiled) = (
        _outcome(folder, mode, monkeypatch) for mode in ("numpy", "numba"))
    assert wrong_compiled == wrong
    if message is None:
        for array in ARRAYS:
            a, b = getattr(reference, array), getattr(compiled, array)
            assert a.dtype == b.dtype and np.array_equal(a.view(np.uint8), b.view(np.uint8))
    else:
        assert wrong is not None and message in wrong and str(folder / name) in wrong
        assert "line " in wrong or "refers to point" in message    # list faults: their line


@pytest.mark.parametrize("name, keep", [("points", 0.5), ("faces", 0.6), ("owner", 0.9),
                                        ("neighbour", 0.999)])
@pytest.mark.parametrize("gz", [False, True])
def test_truncated_files_end_as_in_the_reference(tmp_path, monkeypatch, name, keep, gz):
    folder = write_face_folder(tmp_path / "m", MESHES["hex"](), gz=gz)
    path = folder / (f"{name}.gz" if gz else name)
    text = gzip.decompress(path.read_bytes()) if gz else path.read_bytes()
    cut = text[:int(len(text) * keep)]
    path.write_bytes(gzip.compress(cut) if gz else cut)
    wrong = [_outcome(folder, mode, monkeypatch)[1] for mode in ("numpy", "numba")]
    assert wrong[0] is not None and wrong[1] == wrong[0] and str(path) in wrong[0]


def test_truncated_gzip_data_is_refused_by_both(tmp_path, monkeypatch):
    folder = write_face_folder(tmp_path / "m", MESHES["hex"](), gz=True)
    path = folder / "faces.gz"
    path.write_bytes(path.read_bytes()[:-100])
    wrong = [_outcome(folder, mode, monkeypatch)[1] for mode in ("numpy", "numba")]
    assert wrong[1] == wrong[0] and "damaged or truncated gzip data" in wrong[0]


def test_damaged_points_are_named_before_damaged_faces(tmp_path, monkeypatch):
    """Points and faces are parsed side by side; the points' fault is reported first, as
    when the reference reads them one after the other."""
    folder = write_face_folder(tmp_path / "m", CUBE())
    _edit(folder, "points", "(1.0 0.0 0.0)", "(1.0 abc 0.0)")
    _edit(folder, "faces", "11\n(", "12\n(")
    wrong = [_outcome(folder, mode, monkeypatch)[1] for mode in ("numpy", "numba")]
    assert wrong[1] == wrong[0] and str(folder / "points") in wrong[0]


@pytest.mark.parametrize("dtype", [np.int32, np.int64])
def test_labels_with_signs_and_at_the_ends_of_their_type(dtype):
    top = np.iinfo(dtype).max
    text = f"\t1 -1\n-5 0 {min(top, 10 ** 18 - 1)} -{min(top, 10 ** 18 - 1)}\r\n".encode()
    got = text_lists.labels(text, 0, len(text), 6, np.dtype(dtype))
    assert got.dtype == dtype and got.tolist() == [1, -1, -5, 0, min(top, 10 ** 18 - 1),
                                                   -min(top, 10 ** 18 - 1)]
    for beyond in (f"{top + 1}", "- 1", "1-", "+1", "1.0", "0x1", "1 2 3 4 5 6 7"):
        text = f"1 -1 -5 0 7 {beyond}".encode()
        assert text_lists.labels(text, 0, len(text), 6, np.dtype(dtype)) is None, beyond
