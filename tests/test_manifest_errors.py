"""Every bad case file gives one CaseFileError naming file, line, key and what was expected."""

from __future__ import annotations

from pathlib import Path

import pytest

from caselint.errors import (
    MAX_REPORTED_PROBLEMS,
    CaseFileError,
    CaseFileErrors,
    ExitCode,
    UsageError,
)
from caselint.manifest import load_case

DATA = Path(__file__).parent / "data" / "cases" / "proofing-room.yaml"
MESHES = ("room.msh", "room-medium.msh", "room-coarse.msh")


def write_case(tmp_path: Path, replace: tuple = (), text: str | None = None) -> tuple[Path, str]:
    """Write the proofing-room case with edits and empty mesh files; return (path, text)."""
    text = DATA.read_text(encoding="utf-8") if text is None else text
    for old, new in replace:
        assert old in text, old
        text = text.replace(old, new, 1)
    for name in MESHES:
        (tmp_path / name).touch()
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8")
    return path, text


def line_of(text: str, needle: str) -> int:
    """1-based number of the first line containing ``needle``."""
    return next(i for i, line in enumerate(text.splitlines(), 1) if needle in line)


def error_of(tmp_path: Path, *replace: tuple[str, str], text: str | None = None) -> tuple[CaseFileError, str, Path]:
    path, text = write_case(tmp_path, replace, text)
    with pytest.raises(CaseFileError) as info:
        load_case(path)
    err = info.value
    assert isinstance(err, UsageError)                  # the CLI maps it to ExitCode.USAGE
    assert str(path) in str(err)
    if err.line is not None:
        assert f"{path}:{err.line}" in str(err)
    if err.key:
        assert f"[{err.key}]" in str(err)
    return err, text, path


def test_str_names_file_line_column_and_key(tmp_path: Path) -> None:
    err, text, path = error_of(tmp_path, ("  units: mm", "  units: furlong"))
    assert str(err).startswith(f"{path}:{line_of(text, 'furlong')}:3: [mesh.units] ")
    assert "'furlong' is not allowed here; expected one of: 'm', 'cm', 'mm', 'um', 'in', 'ft'" in str(err)
    assert ExitCode.USAGE == 2


def test_yaml_syntax_error_line_and_column(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("  units: mm", "  units: mm: m"))
    # PyYAML marks are 0-based; the error is reported at the second ':' of "  units: mm: m",
    # 0-based column 11, which is column 12 counted from 1
    line = line_of(text, "units: mm: m")
    assert text.splitlines()[line - 1].index("mm: m") + 2 == 11
    assert (err.line, err.column) == (line, 12)
    assert "YAML syntax error" in err.message and "mapping values are not allowed" in err.message


def test_unknown_key_with_did_you_mean(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("    density: 1.2", "    densty: 1.2"))
    assert err.message == "unknown key 'densty' (did you mean 'density'?)"
    assert (err.key, err.line, err.column) == ("physics.fluid.densty", line_of(text, "densty"), 5)


def test_unknown_key_without_a_close_match_lists_allowed_keys(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("  safety: none", "  safety: none\n  colour: blue"))
    assert err.message == "unknown key 'colour'; allowed here: description, name, safety"
    assert err.line == line_of(text, "colour")


def test_wrong_unit_dimension(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("velocity: 30 km/h", "velocity: 2 kg"))
    assert err.key == "physics.flow.velocity"
    assert err.line == line_of(text, "velocity: 2 kg")
    assert err.message == "expected a velocity such as '2.5 m/s', got '2 kg', which is a mass"


def test_unknown_unit(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("density: 1.2 kg/m^3", "density: 1.2 kg/m3"))
    assert err.key == "physics.fluid.density" and err.line == line_of(text, "kg/m3")
    assert "unknown unit 'm3'" in err.message and "'1.2 kg/m^3'" in err.message


@pytest.mark.parametrize("value", ["-1.2", "0", "'-1.2 kg/m^3'"])
def test_non_positive_density(tmp_path: Path, value: str) -> None:
    err, text, _ = error_of(tmp_path, ("density: 1.2 kg/m^3", f"density: {value}"))
    assert err.key == "physics.fluid.density" and err.line == line_of(text, "density:")
    assert err.message.startswith("must be greater than zero, got ")


@pytest.mark.parametrize("old,new,key", [
    ("velocity: 30 km/h", "velocity: -3 m/s", "physics.flow.velocity"),
    ("length: 1 ft", "length: 0 m", "physics.flow.length"),
    ("step: 2e-4 s", "step: -2e-4 s", "time.step"),
    ("end: 5 s", "end: 0", "time.end"),
    ("radius: 10 cm", "radius: -1 cm", "regions[1].sphere.radius"),
    ("max_cell_size: 5 mm", "max_cell_size: 0 mm", "regions[0].max_cell_size"),
    ("viscosity: 1.81e-5 Pa*s", "viscosity: -1.81e-5", "physics.fluid.viscosity"),
])
def test_non_positive_sizes(tmp_path: Path, old: str, new: str, key: str) -> None:
    err, text, _ = error_of(tmp_path, (old, new))
    assert err.key == key and err.line == line_of(text, new)
    assert "must be greater than zero" in err.message


@pytest.mark.parametrize("value", [".nan", ".inf", "-.inf", "'nan kg/m^3'"])
def test_non_finite_values(tmp_path: Path, value: str) -> None:
    err, _, _ = error_of(tmp_path, ("density: 1.2 kg/m^3", f"density: {value}"))
    assert err.key == "physics.fluid.density" and "not a finite number" in err.message


def test_non_finite_or_zero_direction(tmp_path: Path) -> None:
    err, _, _ = error_of(tmp_path, ("direction: [3, 4, 0]", "direction: [0, 0, 0]"))
    assert err.key == "physics.flow.direction" and "[0, 0, 0]" in err.message
    err, _, _ = error_of(tmp_path, ("direction: [3, 4, 0]", "direction: [1, .nan, 0]"))
    assert "finite" in err.message
    err, _, _ = error_of(tmp_path, ("direction: [3, 4, 0]", "direction: [1, 0]"))
    assert err.message == "expected a direction [x, y, z] of three numbers, got a list of 2 items"


def test_missing_mesh_file(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("file: room.msh", "file: gone.msh"))
    assert err.message == f"mesh file not found: {(tmp_path / 'gone.msh').resolve()}"
    assert (err.key, err.line) == ("mesh.file", line_of(text, "gone.msh"))


def test_missing_grid_study_mesh(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("room-coarse.msh", "room-gone.msh"))
    assert err.key == "grid_study.meshes[2]" and err.line == line_of(text, "room-gone.msh")
    assert err.message == f"mesh file not found: {(tmp_path / 'room-gone.msh').resolve()}"


def test_duplicate_key_names_both_lines(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("    sound_speed: 343 m/s", "    sound_speed: 343 m/s\n    density: 1.3"))
    first, second = line_of(text, "density: 1.2"), line_of(text, "density: 1.3")
    assert err.message == f"duplicate key 'density' (first on line {first}, again on line {second})"
    assert (err.key, err.line) == ("physics.fluid.density", second)


def test_wrong_enum_lists_allowed_values(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("model: k-omega-sst", "model: k-omega-sts"))
    assert err.key == "physics.turbulence.model" and err.line == line_of(text, "k-omega-sts")
    assert "'k-omega-sts' is not allowed here; expected one of: 'laminar', 'k-epsilon'" in err.message
    assert err.message.endswith("(did you mean 'k-omega-sst'?)")


def test_wrong_boundary_role_short_and_long_form(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("floor: wall", "floor: walls"))
    assert err.key == "mesh.boundaries.floor" and "(did you mean 'wall'?)" in err.message
    err, text, _ = error_of(tmp_path, ("{type: inlet,", "{type: inflow,"))
    assert err.key == "mesh.boundaries.supply.type" and "expected one of: 'wall'" in err.message
    err, text, _ = error_of(tmp_path, ("{type: inlet,", "{typ: inlet,"))
    assert err.message == "unknown key 'typ' (did you mean 'type'?)"


@pytest.mark.parametrize("value,expected", [
    ("2", "case-file format version 2 is not supported; this caselint reads version 1"),
    ("'1'", "expected the case-file format version 1 (caselint: 1), got '1'"),
    ("true", "got true"),
])
def test_wrong_version(tmp_path: Path, value: str, expected: str) -> None:
    err, text, _ = error_of(tmp_path, ("caselint: 1", f"caselint: {value}"))
    assert (err.key, err.line) == ("caselint", line_of(text, "caselint:"))
    assert expected in err.message


def test_missing_required_keys_name_the_parent(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("caselint: 1\n", ""))
    assert err.message == "missing required key 'caselint' at the top level"
    err, text, _ = error_of(tmp_path, ("  name: Proofing room P2\n", ""))
    assert err.message == "missing required key 'name' in 'case'"
    assert (err.key, err.line) == ("case", text.splitlines().index("case:") + 1)
    err, text, _ = error_of(tmp_path, ("      approved_by: R. Okafor\n", ""))
    assert err.message == "missing required key 'approved_by' in 'checks.waivers[0]'"
    assert err.line == line_of(text, "- rule: growth-ratio")


@pytest.mark.parametrize("value,message", [
    ("2027-6-30", "expected a date such as 2027-06-30, got '2027-6-30'"),
    ("next spring", "expected a date such as 2027-06-30, got 'next spring'"),
    ("2027-02-30", "cannot read '2027-02-30' as a date: day is out of range for month"),
])
def test_bad_waiver_dates(tmp_path: Path, value: str, message: str) -> None:
    err, text, _ = error_of(tmp_path, ("expires: 2027-06-30", f"expires: {value}"))
    assert (err.key, err.line, err.message) == ("checks.waivers[0].expires", line_of(text, "expires:"), message)


def test_region_shape_must_be_exactly_one(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("    max_cell_size: 5 mm", "    sphere: {center: [0, 0, 0], radius: 1}"))
    assert err.message == "needs exactly one of 'box', 'sphere', 'cylinder', 'zone'; found 'box', 'sphere'"
    assert (err.key, err.line) == ("regions[0]", line_of(text, "- name: diffuser-jet"))
    err, _, _ = error_of(tmp_path, ("    sphere: {center: [1.5, 1.0, 0.8], radius: 10 cm}\n", ""))
    assert err.message == "needs exactly one of 'box', 'sphere', 'cylinder', 'zone'" and err.key == "regions[1]"


def test_region_checks_beyond_the_schema(tmp_path: Path) -> None:
    err, _, _ = error_of(tmp_path, ("max: [0.6, 0.6, 2.7]", "max: [0.6, 0.6, 2.4]"))
    assert err.key == "regions[0].box.max" and "max z (2.4 m) must be greater than its min z" in err.message
    err, _, _ = error_of(tmp_path, ("name: dough-rack", "name: diffuser-jet"))
    assert err.key == "regions[1].name" and "used twice" in err.message
    err, _, _ = error_of(tmp_path, ("region: diffuser-jet", "region: diffuser-jets"))
    assert err.key == "checks.waivers[0].region" and "not in regions" in err.message


def test_inconsistent_fluid_properties(tmp_path: Path) -> None:
    err, _, _ = error_of(tmp_path, ("viscosity: 1.81e-5 Pa*s", "viscosity: 1.81e-5 Pa*s\n    kinematic_viscosity: 1.6e-5"))
    assert err.key == "physics.fluid.kinematic_viscosity"
    assert "disagrees with viscosity / density = 1.508e-05 m^2/s by 5.7 %" in err.message   # |1.5083-1.6|/1.6


def test_end_before_first_step(tmp_path: Path) -> None:
    err, _, _ = error_of(tmp_path, ("end: 5 s", "end: 0.1 ms"))
    assert err.key == "time.end" and "shorter than one time step" in err.message


def test_bad_rule_ids_and_parameter_values(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("    growth-ratio: {warn", "    Growth_Ratio: {warn"))
    assert err.key == "checks.rules.Growth_Ratio" and err.line == line_of(text, "Growth_Ratio")
    assert "lower-case words joined by '-'" in err.message
    err, _, _ = error_of(tmp_path, ("{warn: 1.25,", "{warn: [1.25],"))
    assert err.key == "checks.rules.growth-ratio.warn"
    assert err.message == "expected a plain number, text, true/false or null, got a list of 1 item"


def test_several_problems_are_listed_first_by_line(tmp_path: Path) -> None:
    err, text, path = error_of(tmp_path, ("  safety: none", "  safety: nah"),
                               ("    density: 1.2", "    densty: 1.2"))
    assert isinstance(err, CaseFileErrors)
    assert err.key == "case.safety" and err.line == line_of(text, "safety: nah")
    lines = str(err).splitlines()
    assert lines[0] == f"{path}: 2 problems"
    assert lines[2] == (f"  {path}:{line_of(text, 'densty')}:5: [physics.fluid.densty] "
                        "unknown key 'densty' (did you mean 'density'?)")


def test_every_mistake_of_a_case_file_is_reported_in_one_run(tmp_path: Path) -> None:
    # six mistakes found by three stages: the YAML reader (a duplicate key), the schema
    # (an unknown key, a misspelt value) and the checks after it (a unit, a sign, a file,
    # the end time before the first step)
    err, text, path = error_of(
        tmp_path,
        ("  safety: none", "  safety: none\n  name: Proofing room P3"),   # duplicate key
        ("  prepared_by: J. Lind", "  prepared_bye: J. Lind"),              # unknown key
        ("model: k-omega-sst", "model: k-omega-sts"),                       # misspelt value
        ("velocity: 30 km/h", "velocity: 30 kg"),                           # wrong dimension
        ("density: 1.2 kg/m^3", "density: -1.2 kg/m^3"),                    # not positive
        ("file: room.msh", "file: gone.msh"),                               # missing mesh
    )
    # the turbulence model's schema problem sits in physics: physics is not checked further,
    # so the velocity and density mistakes there wait for the next run
    assert isinstance(err, CaseFileErrors)
    found = {(p.key, p.line) for p in err.problems}
    assert found == {
        ("case.name", line_of(text, "name: Proofing room P3")),
        ("review.prepared_bye", line_of(text, "prepared_bye")),
        ("physics.turbulence.model", line_of(text, "k-omega-sts")),
        ("mesh.file", line_of(text, "gone.msh")),
    }
    lines = str(err).splitlines()
    assert lines[0] == f"{path}: 4 problems"
    assert [p.line for p in err.problems] == sorted(p.line for p in err.problems)
    for problem, line in zip(err.problems, lines[1:]):
        assert line.startswith(f"  {path}:{problem.line}:{problem.column}: [{problem.key}] ")


def test_problems_in_sections_the_schema_accepts_are_all_reported(tmp_path: Path) -> None:
    err, text, _ = error_of(
        tmp_path,
        ("velocity: 30 km/h", "velocity: 30 kg"),
        ("density: 1.2 kg/m^3", "density: -1.2 kg/m^3"),
        ("end: 5 s", "end: 0.1 ms"),
        ("radius: 10 cm", "radius: 10 kg"),
        ("max: [0.6, 0.6, 2.7]", "max: [0.6, 0.6, 2.4]"),
        ("region: diffuser-jet", "region: diffuser-jets"),
        ("room-coarse.msh", "room-gone.msh"),
    )
    assert [(p.key, p.line) for p in err.problems] == [
        ("physics.fluid.density", line_of(text, "density:")),
        ("physics.flow.velocity", line_of(text, "velocity:")),
        ("time.end", line_of(text, "end: 0.1 ms")),
        ("regions[0].box.max", line_of(text, "max: [0.6")),
        ("regions[1].sphere.radius", line_of(text, "radius: 10 kg")),
        ("grid_study.meshes[2]", line_of(text, "room-gone.msh")),
        ("checks.waivers[0].region", line_of(text, "diffuser-jets")),
    ]
    assert "which is a mass" in err.problems[1].message


def test_all_duplicate_keys_are_reported_with_the_schema_problems(tmp_path: Path) -> None:
    err, text, _ = error_of(tmp_path, ("  units: mm", "  units: mm\n  units: m"),
                            ("  mode: transient", "  mode: transient\n  mode: steady"),
                            ("  safety: none", "  safety: nah"))
    assert [p.message.split(" (")[0] for p in err.problems] == [
        "'nah' is not allowed here; expected one of: 'none', 'structural-wind', 'fire-smoke', "
        "'life-safety', 'medical', 'pressure-equipment'",
        "duplicate key 'units'", "duplicate key 'mode'"]


def test_a_long_list_of_problems_is_capped(tmp_path: Path) -> None:
    extra = "".join(f"  colour{i}: blue\n" for i in range(MAX_REPORTED_PROBLEMS + 5))
    err, _, path = error_of(tmp_path, ("  safety: none\n", "  safety: none\n" + extra))
    assert len(err.problems) == MAX_REPORTED_PROBLEMS and err.more == 5
    lines = str(err).splitlines()
    assert lines[0] == f"{path}: {MAX_REPORTED_PROBLEMS + 5} problems"
    assert lines[-1] == (f"  ... and 5 more (the first {MAX_REPORTED_PROBLEMS} are listed; "
                         "fix these and run again)")


def test_an_unclosed_bracket_names_where_it_opened_and_where_parsing_stopped(
        tmp_path: Path) -> None:
    err, text, path = error_of(tmp_path, ("    sound_speed: 343 m/s\n", ""),
                               ("    density: 1.2 kg/m^3\n    viscosity: 1.81e-5 Pa*s",
                                "    {density: 1.2 kg/m^3,\n    viscosity: 1.81e-5 Pa*s"))
    opened = line_of(text, "{density")
    stopped = line_of(text, "thermal_diffusivity")
    column = text.splitlines()[opened - 1].index("{") + 1
    assert opened < stopped and (err.line, err.column) == (stopped, 24)
    assert str(err) == (
        f"{path}:{stopped}:24: YAML syntax error: expected ',' or '}}', but got ':' at line "
        f"{stopped}, column 24; the mapping '{{' opened on line {opened}, column {column} is "
        "not closed (a missing '}' or ',')")


def test_missing_and_unreadable_case_files(tmp_path: Path) -> None:
    with pytest.raises(CaseFileError) as info:
        load_case(tmp_path / "nowhere.yaml")
    assert str(info.value) == f"{tmp_path / 'nowhere.yaml'}: file not found"
    with pytest.raises(CaseFileError, match="is a folder"):
        load_case(tmp_path)
    (tmp_path / "empty.yaml").write_text("# only a comment\n")
    with pytest.raises(CaseFileError, match="holds no YAML document"):
        load_case(tmp_path / "empty.yaml")
    (tmp_path / "list.yaml").write_text("- caselint: 1\n")
    with pytest.raises(CaseFileError, match="top level must be a mapping of keys, got a list"):
        load_case(tmp_path / "list.yaml")


def test_the_command_line_lists_every_problem_and_exits_2(tmp_path: Path) -> None:
    from test_cli import run_cli

    path, text = write_case(tmp_path, (("velocity: 30 km/h", "velocity: 30 kg"),
                                       ("end: 5 s", "end: 0.1 ms"),
                                       ("  prepared_by: J. Lind", "  prepared_bye: J. Lind")))
    code, out, err = run_cli("check", str(path))
    assert (code, out) == (ExitCode.USAGE, "")
    assert err.splitlines() == [
        f"caselint: error: {path}: 3 problems",
        f"  {path}:{line_of(text, 'velocity:')}:5: [physics.flow.velocity] expected a velocity "
        "such as '2.5 m/s', got '30 kg', which is a mass",
        f"  {path}:{line_of(text, 'end: 0.1 ms')}:3: [time.end] the end time 0.0001 s is "
        "shorter than one time step (0.0002 s)",
        f"  {path}:{line_of(text, 'prepared_bye')}:3: [review.prepared_bye] unknown key "
        "'prepared_bye' (did you mean 'prepared_by'?)",
    ]
