"""Hypothesis strategies that write case files: valid, near-valid, broken and hostile.

Shared by the bounded fuzz tests (tests/test_fuzz_case_file.py, tests/test_fuzz_check.py)
and the long run (benchmarks/fuzz_long.py); the properties they check are in
tests/fuzz_properties.py.

The strategies make YAML *text*: random documents; near-valid case files (every section
drawn with plausible, extreme or wrong values) with at most a few mutations applied to the
data (replace, delete, add a key with a unicode name, share a subtree so the dump writes
an anchor and aliases) and to the text (duplicate a line, inject a tag or a merge key,
insert characters, truncate); anchor "bombs" of random width and depth; deep nesting.
"""

from __future__ import annotations

import copy
import datetime as dt
import math
from pathlib import Path
from typing import Any

import yaml
from hypothesis import strategies as st

# -- values ------------------------------------------------------------------------------

UNITS = {
    "length": ["m", "mm", "cm", "um", "km", "in", "ft", "mile", "nm"],
    "velocity": ["m/s", "km/h", "mph", "knot", "ft/s", "cm/s"],
    "density": ["kg/m^3", "kg/m**3", "g/cm^3", "lb/ft^3"],
    "dynamic_viscosity": ["Pa*s", "cP", "mPa*s", "P"],
    "kinematic_viscosity": ["m^2/s", "cSt", "St", "mm^2/s"],
    "diffusivity": ["m^2/s", "cm^2/s"],
    "time": ["s", "ms", "us", "min", "h", "ns"],
    "frequency": ["Hz", "kHz", "1/s", "rpm"],
}
#: Unit texts that are wrong, odd or hostile: wrong dimension, offset units, arithmetic,
#: huge exponents (pint evaluates them), unknown words, unicode.
ODD_UNITS = [
    "kg", "degC", "delta_degC", "K", "Pa", "m^2", "", " ", "m/", "/s", "m**2**3", "m^-1",
    "furlong/fortnight", "(m/s)**2", "m**99", "m**3**9**9", "10**10**10 m", "9**9**9",
    "2**2**2**2**2", "((10**99)**99)**99 m", "1/0", "0/0 m", "inf", "nan", "-inf m",
    "m·s⁻¹", "µm", "米", "\u202e m", "m\x00", "1e400 m", "1e-400 m", "0x10 m", "1_000 m",
    "1,5 m", "3*2", "m" * 40, "sqrt(m)", "m^0.5", "e", "pi m", "True", "None",
]

finite_floats = st.floats(allow_nan=False, allow_infinity=False)
plausible = st.floats(min_value=1e-9, max_value=1e6, allow_nan=False)
#: Any magnitude the loader accepts (1e-12 to 1e12 in SI units), spread evenly in log.
accepted = st.floats(min_value=-12.0, max_value=12.0).map(lambda e: 10.0**e)
extreme_numbers = st.one_of(
    st.sampled_from([0.0, -0.0, -1.0, 1e-320, 5e-324, 1e-300, 1e300, 1.7976931348623157e308,
                     math.nan, math.inf, -math.inf, 2**53 + 1, 10**30, -(10**30)]),
    st.integers(min_value=-(10**400), max_value=10**400),
    finite_floats,
)


def quantity(dimension: str) -> st.SearchStrategy[Any]:
    """A quantity of ``dimension``: mostly plausible, sometimes extreme, sometimes odd text."""
    number_text = st.one_of(plausible.map(lambda v: f"{v:g}"), extreme_numbers.map(str))
    with_unit = st.tuples(number_text, st.sampled_from(UNITS[dimension])).map(" ".join)
    other_unit = st.tuples(number_text, st.sampled_from(
        [u for units in UNITS.values() for u in units] + ODD_UNITS)).map(" ".join)
    return st.one_of(plausible, plausible, with_unit, with_unit, extreme_numbers, other_unit,
                     st.sampled_from(ODD_UNITS), st.text(max_size=12))


def tame_quantity(dimension: str) -> st.SearchStrategy[Any]:
    """A plausible quantity of ``dimension``: an SI number or a number with a right unit."""
    with_unit = st.tuples(plausible.map(lambda v: f"{v:g}"),
                          st.sampled_from(UNITS[dimension])).map(" ".join)
    return st.one_of(plausible, with_unit)


def point(wild: bool = True) -> st.SearchStrategy[list[Any]]:
    """Three coordinates (mostly plausible)."""
    coord = st.floats(min_value=-10, max_value=10)
    if wild:
        coord = st.one_of(coord, quantity("length"))
    return st.lists(coord, min_size=3, max_size=3)


def direction(wild: bool = True) -> st.SearchStrategy[list[Any]]:
    """Three numbers: a unit axis, random finite numbers, or something extreme."""
    axes = st.sampled_from([[1, 0, 0], [0, 1, 0], [0, 0, 1], [0, 0, -1], [1, 1, 0]])
    if not wild:
        return axes
    return st.one_of(axes, st.lists(finite_floats, min_size=3, max_size=3),
                     st.lists(extreme_numbers, min_size=3, max_size=3))


unicode_text = st.text(st.characters(blacklist_categories=("Cs",)), max_size=12)
keys = st.one_of(unicode_text, st.integers(), st.sampled_from(
    ["case", "mesh", "physics", "file", "units", "name", "<<", "velocity", "warn", "1", "yes",
     "null", "~", "2027-01-01", "émission", "風速", "\u200b", " ", "a.b", "a[0]"]))
scalars = st.one_of(
    st.none(), st.booleans(), st.integers(), extreme_numbers, unicode_text,
    st.dates(min_value=dt.date(1, 1, 1)), st.sampled_from(ODD_UNITS),
)
documents = st.recursive(
    scalars,
    lambda inner: st.lists(inner, max_size=4) | st.dictionaries(keys, inner, max_size=4),
    max_leaves=25,
)

# -- near-valid case files ---------------------------------------------------------------

MESH_NAME = "m.msh"
#: A finer mesh of the same block, for grid studies.
FINE_MESH_NAME = "m-fine.msh"
RULE_IDS = ("growth-ratio", "inverted-cells", "non-orthogonality", "courant", "skewness",
            "unassigned-boundary", "time-resolution", "aspect-ratio", "no-such-rule")


@st.composite
def case_data(draw) -> dict[str, Any]:
    """A case file as data: required sections, a random choice of the optional ones.

    A third of the cases are *tame* (plausible values only) and a third *extreme* (any
    magnitude the loader accepts, 1e-12 to 1e12: valid input that stresses the rules'
    arithmetic); the *wild* rest draw non-finite and out-of-range numbers, odd unit texts
    and unknown names too.
    """
    mode = draw(st.sampled_from(["tame", "extreme", "wild"]))
    wild = mode == "wild"

    def q(dimension: str) -> Any:
        if mode == "extreme":
            return draw(st.one_of(accepted, tame_quantity(dimension)))
        return draw(quantity(dimension) if wild else tame_quantity(dimension))

    def pick(tame: list[Any], odd: list[Any] = ()) -> Any:
        return draw(st.sampled_from(tame + list(odd) if wild else tame))

    data: dict[str, Any] = {
        "caselint": pick([1], [2, "1", 1.0]),
        "case": {"name": pick(["Invented duct", "Kiln 4", "ü-Bahn station"]),
                 "safety": pick(["none", "fire-smoke", "medical"], ["bogus"])},
        "mesh": {"file": MESH_NAME,
                 "units": pick(["m", "mm", "cm", "um", "in", "ft"], ["furlong"]),
                 "boundaries": {"inlet": "inlet", "outlet": {"type": "outlet"},
                                "walls": pick(["wall", "symmetry"], ["wal"])}},
    }
    if draw(st.booleans()):
        data["physics"] = {
            "method": draw(st.sampled_from(["finite-volume", "finite-element"])),
            "compressible": draw(st.booleans()),
            "fluid": {k: q(d) for k, d in (
                ("density", "density"), ("viscosity", "dynamic_viscosity"),
                ("sound_speed", "velocity"), ("thermal_diffusivity", "diffusivity"))
                if draw(st.booleans())},
            "flow": {"kind": draw(st.sampled_from(["internal", "external"])),
                     "velocity": q("velocity"), "direction": draw(direction(wild)),
                     "length": q("length"), "leading_edge": draw(point(wild)),
                     "strouhal": draw(st.one_of(plausible, extreme_numbers) if wild
                                      else plausible)},
            "turbulence": {"model": draw(st.sampled_from(
                ["laminar", "k-omega-sst", "les", "spalart-allmaras", "k-epsilon"])),
                "wall_treatment": draw(st.sampled_from(["resolved", "wall-function",
                                                        "blended"]))},
        }
    if draw(st.booleans()):
        data["time"] = {"mode": draw(st.sampled_from(["steady", "transient"])),
                        "step": q("time") if wild else draw(st.floats(1e-5, 1e-2)),
                        "end": q("time") if wild else draw(st.floats(0.1, 100.0)),
                        "scheme": draw(st.sampled_from(["bdf2", "rk4", "backward-euler"])),
                        "output_interval": q("time"),
                        "frequency": q("frequency"),
                        "advection_scheme": draw(st.sampled_from(["upwind", "central"]))}
    if draw(st.booleans()):
        low = draw(point(wild))
        high = draw(point(wild)) if wild else [v + 1.0 for v in low]
        data["regions"] = [
            {"name": "box-zone", "box": {"min": low, "max": high},
             "max_cell_size": q("length")},
            {"name": "ball", "sphere": {"center": draw(point(wild)), "radius": q("length")},
             "max_cell_size": q("length")},
        ]
    if draw(st.booleans()):
        data["domain"] = {"up": draw(direction(wild)), "body": ["walls"]}
    if draw(st.booleans()):
        known = RULE_IDS if wild else RULE_IDS[:-1]
        limit = st.one_of(plausible, extreme_numbers, st.none()) if wild else plausible
        rules = {rule: {"warn": draw(limit)}
                 for rule in draw(st.lists(st.sampled_from(known), max_size=3, unique=True))}
        data["checks"] = {
            "rule_sets": pick([["general"], []], [["general", "general"], ["nope"]]),
            "rules": rules,
            "waivers": [{"rule": draw(st.sampled_from(known)), "reason": "invented reason",
                         "approved_by": "A. Reviewer",
                         "expires": draw(st.dates(min_value=dt.date(1, 1, 1))).isoformat(),
                         **({"boundary": "walls"} if draw(st.booleans()) else {})}],
        }
    if draw(st.booleans()):
        data["grid_study"] = {"meshes": pick([[FINE_MESH_NAME, MESH_NAME]],
                                             [[MESH_NAME], [MESH_NAME, MESH_NAME]])}
    if draw(st.booleans()):
        data["review"] = {"prepared_by": "I. Nventor", "reviewers": ["R. Eviewer"]}
    return data


def _paths(node: Any, prefix: tuple = ()) -> list[tuple]:
    out = [prefix] if prefix else []
    if isinstance(node, dict):
        for k, v in node.items():
            out.extend(_paths(v, prefix + (k,)))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            out.extend(_paths(v, prefix + (i,)))
    return out


@st.composite
def mutated_data(draw, data: dict[str, Any]) -> dict[str, Any]:
    """``data`` with up to three changes: replace, delete, add a key, or share a subtree."""
    data = copy.deepcopy(data)
    for _ in range(draw(st.sampled_from([0, 0, 0, 1, 2, 3]))):
        paths = _paths(data)
        if not paths:
            break
        path = draw(st.sampled_from(paths))
        parent = data
        for part in path[:-1]:
            parent = parent[part]
        op = draw(st.sampled_from(["replace", "delete", "add", "share"]))
        if op == "replace":
            parent[path[-1]] = draw(documents)
        elif op == "delete":
            del parent[path[-1]]
        elif op == "add" and isinstance(parent, dict):
            parent[draw(keys)] = draw(documents)
        elif op == "add":
            parent.append(draw(documents))
        else:
            # The same object twice: yaml.dump writes an anchor and an alias.
            other = draw(st.sampled_from(paths))
            source = data
            for part in other:
                source = source[part]
            if isinstance(source, (dict, list)) and not _contains(source, parent):
                parent[path[-1]] = source
    return data


def _contains(node: Any, target: Any) -> bool:
    """Whether ``target`` is ``node`` or inside it (an alias there would be recursive)."""
    if node is target:
        return True
    children = node.values() if isinstance(node, dict) else node if isinstance(node, list) else ()
    return any(_contains(child, target) for child in children)


def dump(data: Any, flow: bool | None = None) -> str:
    """YAML text of ``data`` (anchors for shared objects, unicode kept)."""
    return yaml.safe_dump(data, allow_unicode=True, sort_keys=False, default_flow_style=flow,
                          width=10_000)


INJECTIONS = [
    "!!python/object/apply:os.system ['echo fuzz']", "!!python/name:os.getcwd", "!custom",
    "!!binary aGVsbG8=", "!!set {a, b}", "!!omap [a: 1]", "&a [*a]", "*undefined", "<<: 1",
    "{<<: [*x]}", "? [a, b]", "'unterminated", '"\\x"', "\t", "\x00", "\x85", "\ufeff",
    "[" * 100, "{a: " * 70, "--- ", "...", "%YAML 1.1", "|-", ">+", "@", "`", "#",
]


@st.composite
def text_mutation(draw, text: str) -> str:
    """``text`` with up to two edits: duplicate a line, inject a token, cut, indent."""
    for _ in range(draw(st.sampled_from([0, 0, 0, 1, 2]))):
        lines = text.split("\n")
        i = draw(st.integers(min_value=0, max_value=max(len(lines) - 1, 0)))
        op = draw(st.sampled_from(["dup", "inject", "cut", "indent", "merge"]))
        if op == "dup":
            lines.insert(i, lines[i])
        elif op == "inject":
            line = lines[i]
            at = draw(st.integers(min_value=0, max_value=len(line)))
            lines[i] = line[:at] + draw(st.sampled_from(INJECTIONS) | unicode_text) + line[at:]
        elif op == "cut":
            text = text[: draw(st.integers(min_value=0, max_value=len(text)))]
            continue
        elif op == "indent":
            lines[i] = " " * draw(st.integers(min_value=1, max_value=5)) + lines[i]
        else:
            lines.insert(i, draw(st.sampled_from(["<<: {caselint: 1}", "base: &b {x: 1}",
                                                  "<<: *b", "  <<: [*b, *b]"])))
        text = "\n".join(lines)
    return text


@st.composite
def near_valid_case_texts(draw) -> str:
    """A case file for the test mesh, possibly with mutations in its data and text."""
    data = draw(mutated_data(draw(case_data())))
    try:
        text = dump(data, draw(st.sampled_from([None, False, True])))
    except (yaml.YAMLError, RecursionError, ValueError):
        text = "caselint: 1\n"
    return draw(text_mutation(text))


@st.composite
def anchor_bombs(draw) -> str:
    """Aliases nested ``depth`` levels, ``width`` each (width**depth values), maybe as merges."""
    width = draw(st.integers(min_value=2, max_value=12))
    depth = draw(st.integers(min_value=2, max_value=12))
    merge = draw(st.booleans())
    lines = ['l0: &l0 {a: "lol", b: "lol"}' if merge else 'l0: &l0 ["lol", "lol"]']
    for level in range(1, depth):
        refs = ", ".join([f"*l{level - 1}"] * width)
        lines.append(f"l{level}: &l{level} {{<<: [{refs}], k{level}: 1}}" if merge
                     else f"l{level}: &l{level} [{refs}]")
    return "caselint: 1\n" + "\n".join(lines) + "\n"


@st.composite
def deep_nesting(draw) -> str:
    """A value nested up to a few thousand levels, as flow or block collections."""
    depth = draw(st.integers(min_value=10, max_value=3000))
    kind = draw(st.sampled_from(["list", "map", "block"]))
    if kind == "list":
        return "physics: " + "[" * depth + "]" * depth + "\n"
    if kind == "map":
        return "physics: " + "{a: " * depth + "1" + "}" * depth + "\n"
    return "".join(" " * i + f"k{i}:\n" for i in range(min(depth, 1500)))


#: Any text a user might hand over as a case file.
case_texts = st.one_of(
    near_valid_case_texts(),
    near_valid_case_texts(),
    near_valid_case_texts(),
    near_valid_case_texts(),
    near_valid_case_texts(),
    documents.map(lambda d: dump({"caselint": 1, "doc": d})),
    documents.map(dump),
    st.text(st.sampled_from(list("ab:-[]{},&*!<>|'\"#%@`?\n \t.0123e") + ["\u00e9"]),
            max_size=200),
    anchor_bombs(),
    deep_nesting(),
)


def write_meshes(folder: Path) -> None:
    """The meshes the generated case files name: a 3 x 2 x 2 hexahedral block with groups
    inlet, outlet and walls (one growth jump of 2.5), and the same block refined 2x."""
    from test_cli_e2e import write_block_mesh

    write_block_mesh(folder / MESH_NAME, xs=[0.0, 0.1, 0.2, 0.45])
    write_block_mesh(folder / FINE_MESH_NAME, xs=[0.0, 0.05, 0.1, 0.15, 0.2, 0.325, 0.45],
                     ys=[0.0, 0.05, 0.1, 0.15, 0.2], zs=[0.0, 0.05, 0.1, 0.15, 0.2])
