"""Fuzzing the case-file loader: any text ends in a Case or in a CaseFileError that names the
file, a line and (past the YAML syntax) the key, quickly and in bounded memory.

The strategies (tests/case_fuzzing.py) and the property (tests/fuzz_properties.py) are
shared with the long run (benchmarks/fuzz_long.py, >= 10,000 examples, result in
benchmarks/fuzz-latest.md). The run here is bounded and derandomised, so it is the same
on every machine. The examples below the property are inputs the fuzzing found broken,
kept as regression tests.
"""

from __future__ import annotations

import time
import tracemalloc
from pathlib import Path

import pytest
from hypothesis import HealthCheck, example, given, settings

import case_fuzzing as cf
import fuzz_properties as fp
from caselint.errors import CaseFileError, printable
from caselint.manifest.loader import load_case
from caselint.manifest.yamlnodes import MAX_DEPTH, MAX_FILE_BYTES, MAX_VALUES

BOUNDED = settings(max_examples=200, deadline=None, derandomize=True, database=None,
                   suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                          HealthCheck.function_scoped_fixture])


@pytest.fixture(scope="module")
def folder(tmp_path_factory) -> Path:
    """A folder with the meshes the generated case files name (they must exist)."""
    path = tmp_path_factory.mktemp("fuzz-load")
    cf.write_meshes(path)
    return path


def load(folder: Path, text: str) -> Path:
    path = folder / "case.yaml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    return path


@BOUNDED
@given(text=cf.case_texts)
@example(text="caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics: "
              "{fluid: {density: '10**10**10 kg/m^3'}}\n")           # pint would compute forever
@example(text="caselint: 1\ncase: {name: x}\nmesh: {file: \"m\\0.msh\"}\n")   # NUL in a path
@example(text="caselint: 1\ncase: {name: x}\nmesh: {file: " + "a" * 300 + "}\n")
@example(text="caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics: {flow: "
              "{direction: [1e308, 1e308, 1e308]}}\n")                # |d| overflowed to 0
@example(text="caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics: {flow: "
              "{strouhal: 1e400}}\n")                                 # infinity accepted
@example(text="a: " + "[" * 3000 + "]" * 3000 + "\n")                 # deep: no line given
@example(text="caselint: 1\n'': 1\n")                                 # an empty key
@example(text="case: {name: x}\nmesh: {file: m.msh}\n\"\\r\": null\n")     # a key "\r", 2 problems
@example(text="case: {name: x}\nmesh: {file: m.msh}\n? '\n\n  '\n: null\n")  # a key "\n"
def test_loading_any_text_ends_in_a_case_or_a_located_error(folder, text):
    fp.check_load(load(folder, text))


@pytest.mark.parametrize("text, line, key, fragment", [
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics:\n  fluid:\n"
     "    density: '1 kg/m**3**99999'\n", 6, "physics.fluid.density",
     "a power (** or ^) may only raise a unit to a short number"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics:\n  fluid:\n"
     "    density: '((10**99)**99)**99 kg/m^3'\n", 6, "physics.fluid.density", "a power"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics:\n  fluid:\n"
     "    density: " + "9" * 400 + "\n", 6, "physics.fluid.density", "not a finite number"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics:\n  flow:\n"
     "    velocity: 1e20\n", 6, "physics.flow.velocity",
     "1e+20 m/s is outside the range caselint accepts (1e-12 to 1e+12 m/s"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\ntime:\n  step: 1e-300 s\n", 5,
     "time.step", "outside the range caselint accepts"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics:\n  flow:\n"
     "    strouhal: .inf\n", 6, "physics.flow.strouhal", "expected a finite number"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: \"m\\0.msh\"}\n", 3, "mesh.file",
     "a file name cannot contain a NUL character"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: " + "a" * 300 + "}\n", 3, "mesh.file",
     "File name too long"),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\ndomain:\n  up: [0, 0, 1e308]\n"
     "physics: {flow: {direction: [1e308, 1e308, 0]}}\n", None, None, None),
    ("caselint: 1\ncase: {name: x}\nmesh: {file: m.msh}\nphysics:\n  flow:\n"
     "    direction: [" + "9" * 400 + ", 0, 0]\n", 6, "physics.flow.direction",
     "expected three finite numbers"),
])
def test_hostile_values_found_by_fuzzing(folder, text, line, key, fragment):
    """Each was a hang, a crash or a wrong acceptance before; now a located error."""
    path = load(folder, text)
    if fragment is None:
        case = load_case(path)                      # overflow-free: a valid direction
        assert case.physics.flow.direction == pytest.approx((2**-0.5, 2**-0.5, 0.0))
        return
    with pytest.raises(CaseFileError) as info:
        load_case(path)
    assert (info.value.line, info.value.key) == (line, key)
    assert fragment in info.value.message


@settings(max_examples=30, deadline=None, derandomize=True, database=None)
@given(text=cf.anchor_bombs())
def test_alias_bombs_are_refused_fast(folder, text):
    """Aliases nested up to 12 deep, 12 wide (12^12 values): at most MAX_VALUES are built."""
    start = time.perf_counter()
    fp.check_load(load(folder, text))
    assert time.perf_counter() - start < 10.0


@pytest.mark.parametrize("merge", [False, True])
def test_alias_bomb_memory_is_bounded(folder, merge):
    """The widest, deepest bomb of the strategy, in lists and in merge keys: its memory
    peak (tracemalloc, numpy and pint included) stays far below what expansion needs."""
    lines = ['l0: &l0 {a: "lol", b: "lol"}' if merge else 'l0: &l0 ["lol", "lol"]']
    for level in range(1, 12):
        refs = ", ".join([f"*l{level - 1}"] * 12)
        lines.append(f"l{level}: &l{level} {{<<: [{refs}], k{level}: 1}}" if merge
                     else f"l{level}: &l{level} [{refs}]")
    path = load(folder, "caselint: 1\n" + "\n".join(lines) + "\n")
    tracemalloc.start()
    try:
        with pytest.raises(CaseFileError, match=f"more than {MAX_VALUES} values"):
            load_case(path)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 100e6                # bytes; 12^11 values would need terabytes


def test_billion_laughs_names_the_line_and_key(folder):
    text = "caselint: 1\n" + "\n".join(
        f"l{i}: &l{i} [" + ", ".join([f"*l{i - 1}"] * 10) + "]" if i else 'l0: &l0 ["lol"]'
        for i in range(10)) + "\n"
    with pytest.raises(CaseFileError) as info:
        load_case(load(folder, text))
    assert f"more than {MAX_VALUES} values" in info.value.message
    assert info.value.line is not None and info.value.key.startswith("l")


def test_deep_nesting_is_refused_at_its_line(folder):
    text = "caselint: 1\ncase: {name: x}\nphysics:\n  a: " + "[" * 500 + "]" * 500 + "\n"
    start = time.perf_counter()
    with pytest.raises(CaseFileError) as info:
        load_case(load(folder, text))
    assert time.perf_counter() - start < 5.0
    assert info.value.line == 4
    assert f"nested too deeply (more than {MAX_DEPTH} levels" in info.value.message


def test_oversized_file_is_refused_before_parsing(folder):
    path = folder / "big.yaml"
    path.write_text("caselint: 1\n" + "# padding\n" * (MAX_FILE_BYTES // 10), encoding="utf-8")
    with pytest.raises(CaseFileError, match="larger than 512 KiB") as info:
        load_case(path)
    assert info.value.file == str(path)


def test_special_file_is_read_only_up_to_the_limit():
    """/dev/zero never ends: reading stops at the size limit instead of filling memory."""
    if not Path("/dev/zero").exists():
        pytest.skip("no /dev/zero on this system")
    with pytest.raises(CaseFileError, match="larger than 512 KiB"):
        load_case("/dev/zero")


@pytest.mark.parametrize("written, key", [("phýsics", "phýsics"), ("風速", "風速"),
                                          ("a\u202eb", "a\u202eb"), ("x\\e[2Jy", "x\x1b[2Jy")])
def test_unicode_and_control_character_keys_are_named_safely(folder, written, key):
    # YAML's "\e" is the escape character: a key that would clear a terminal when printed.
    path = load(folder, f'caselint: 1\ncase: {{name: x}}\nmesh: {{file: m.msh}}\n"{written}": 1\n')
    with pytest.raises(CaseFileError) as info:
        load_case(path)
    assert (info.value.line, info.value.key) == (4, key)
    shown = printable(key)
    assert f"[{shown}]" in str(info.value) and "unknown key" in str(info.value)
    assert "\x1b" not in shown and "\u202e" not in shown


@pytest.mark.parametrize("tag", ["!!python/object/apply:os.system ['echo no']",
                                 "!!python/name:os.getcwd", "!!python/module:os"])
def test_python_tags_are_refused_not_run(folder, tag):
    path = load(folder, f"caselint: 1\ncase: {{name: x}}\nmesh: {{file: m.msh}}\nx: {tag}\n")
    with pytest.raises(CaseFileError, match="unsupported tag") as info:
        load_case(path)
    assert (info.value.line, info.value.key) == (4, "x")
