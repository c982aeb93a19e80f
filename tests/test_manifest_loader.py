"""load_case on a complete valid case: every value in SI, paths resolved, defaults, plugins.

Unit factors are exact by definition (SI prefixes; 1 ft = 0.3048 m and 1 in = 0.0254 m,
international yard and pound agreement, 1959; 1 h = 3600 s), so 30 km/h = 30000/3600 m/s.
The air properties (1.2 kg/m^3, 1.81e-5 Pa*s near 20 degC) are from memory and only
inputs here.
"""

from __future__ import annotations

import datetime as dt
import math
from pathlib import Path

import pytest

from caselint.errors import CaseFileError, PluginLoadError
from caselint.manifest import load_case
from caselint.manifest.case import Case

DATA = Path(__file__).parent / "data" / "cases" / "proofing-room.yaml"
MESHES = ("room.msh", "room-medium.msh", "room-coarse.msh")


def write_case(tmp_path: Path, text: str | None = None, replace: tuple = ()) -> Path:
    """Write the proofing-room case (edited) and empty mesh files; return the case path."""
    text = DATA.read_text(encoding="utf-8") if text is None else text
    for old, new in replace:
        assert old in text, old
        text = text.replace(old, new, 1)
    for name in MESHES:
        (tmp_path / name).touch()
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.fixture
def case(tmp_path: Path) -> Case:
    return load_case(write_case(tmp_path))


def approx(value: float) -> object:
    return pytest.approx(value, rel=1e-12, abs=0.0)


def test_case_info_and_version(case: Case) -> None:
    assert case.version == 1
    assert case.info.name == "Proofing room P2"
    assert case.info.safety == "none"
    assert case.path.name == "case.yaml"


def test_fluid_quantities_are_si(case: Case) -> None:
    fluid = case.physics.fluid
    assert fluid.density == approx(1.2)
    assert fluid.viscosity == approx(1.81e-5)
    assert fluid.sound_speed == approx(343.0)
    assert fluid.thermal_diffusivity == approx(0.22e-4)          # 1 cm^2 = 1e-4 m^2
    assert fluid.kinematic_viscosity is None
    assert fluid.nu == approx(1.81e-5 / 1.2)                      # 1.508333e-5 m^2/s
    assert fluid.nu == pytest.approx(1.5083333e-5, rel=1e-7)


def test_flow_quantities_are_si(case: Case) -> None:
    flow = case.physics.flow
    assert flow.kind == "internal"
    assert flow.velocity == approx(30_000 / 3600)                 # 8.3333 m/s
    assert flow.velocity == pytest.approx(8.3333, abs=1e-4)
    assert flow.length == approx(0.3048)
    assert flow.direction == (approx(0.6), approx(0.8), approx(0.0))   # [3, 4, 0] / 5
    assert flow.leading_edge == (0.0, approx(0.12), approx(0.0254))
    assert case.physics.turbulence.model == "k-omega-sst"
    assert case.physics.turbulence.wall_treatment == "resolved"
    assert case.physics.method == "cell-centred"   # finite-volume is another name for it


def test_time_quantities_are_si(case: Case) -> None:
    time = case.time
    assert (time.mode, time.integration, time.scheme) == ("transient", "implicit", "bdf2")
    assert time.step == approx(2e-4)
    assert time.end == approx(5.0)
    assert time.output_interval == approx(0.01)


def test_mesh_spec(case: Case, tmp_path: Path) -> None:
    mesh = case.mesh
    assert mesh.file == (tmp_path / "room.msh").resolve()
    assert mesh.file.is_absolute()
    assert mesh.units == "mm"
    assert mesh.scale_to_m == 1e-3
    assert mesh.boundaries == {"floor": "wall", "supply": "inlet", "exhaust": "outlet"}
    assert mesh.tag_array == "boundary_id"
    assert mesh.tags == {1: "floor", 2: "supply", 3: "exhaust"}


def test_regions(case: Case) -> None:
    jet, rack, duct = case.regions
    assert (jet.name, jet.shape) == ("diffuser-jet", "box")
    assert jet.geometry == {"min": (0.0, 0.0, 2.4), "max": (0.6, 0.6, 2.7)}
    assert jet.max_cell_size == approx(0.005)
    assert rack.shape == "sphere"
    assert rack.geometry["center"] == (1.5, 1.0, 0.8)
    assert rack.geometry["radius"] == approx(0.1)
    assert rack.max_cell_size is None
    assert duct.shape == "cylinder"
    assert duct.geometry == {"start": (3.0, 0.0, 0.2), "end": (3.0, 0.0, 0.7), "radius": 0.1}
    assert duct.max_cell_size == approx(0.02)


def test_grid_study_checks_review(case: Case, tmp_path: Path) -> None:
    assert case.grid_study.meshes == tuple((tmp_path / m).resolve() for m in MESHES)
    assert case.checks.rule_sets == ("general",)
    assert case.checks.rules == {"growth-ratio": {"warn": 1.25, "error": None}}
    (waiver,) = case.checks.waivers
    assert waiver.expires == dt.date(2027, 6, 30)
    assert (waiver.rule, waiver.region, waiver.boundary) == ("growth-ratio", "diffuser-jet", None)
    assert waiver.key == "checks.waivers[0]"
    assert case.review.reviewers == ("M. Duarte", "S. Haddad")
    assert case.review.approved_by == "R. Okafor"


def test_line_map(case: Case) -> None:
    text = DATA.read_text(encoding="utf-8").splitlines()
    assert text[case.lines["physics.fluid.density"] - 1].strip().startswith("density:")
    assert text[case.lines["checks.waivers[0].expires"] - 1].strip() == "expires: 2027-06-30"
    assert text[case.lines["regions[2]"] - 1].strip() == "- name: exhaust-duct"
    assert case.line_of("physics.fluid.density.nothing") == case.lines["physics.fluid.density"]


def test_minimal_case_defaults(tmp_path: Path) -> None:
    (tmp_path / "m.vtu").touch()
    path = write_case(tmp_path, "caselint: 1\ncase: {name: bare}\nmesh: {file: m.vtu}\n")
    case = load_case(path)
    assert case.checks.rule_sets == ("general",)
    assert case.mesh.units == "m" and case.mesh.scale_to_m == 1.0
    assert case.mesh.boundaries == {} and case.mesh.tags == {}
    assert case.physics.fluid.nu is None
    assert case.physics.flow.velocity is None
    assert case.time.mode == "steady" and case.time.step is None
    assert case.regions == () and case.grid_study.meshes == ()


def test_numbers_are_si_and_exponent_text_is_a_number(tmp_path: Path) -> None:
    path = write_case(tmp_path, replace=[
        ("density: 1.2 kg/m^3", "density: 998"),
        ("viscosity: 1.81e-5 Pa*s", "kinematic_viscosity: 1e-6"),     # YAML 1.1 reads 1e-6 as text
        ("step: 2e-4 s", "step: 2e-4"),
        ("units: mm", "units: ft"),
        ("rule_sets: [general]", "rule_sets: []"),
    ])
    case = load_case(path)
    assert case.physics.fluid.density == 998.0
    assert case.physics.fluid.nu == approx(1e-6)
    assert case.time.step == approx(2e-4)
    assert case.mesh.scale_to_m == approx(0.3048)
    assert case.checks.rule_sets == ()


def test_consistent_fluid_triple_is_accepted(tmp_path: Path) -> None:
    path = write_case(tmp_path, replace=[
        ("viscosity: 1.81e-5 Pa*s", "viscosity: 1.81e-5 Pa*s\n    kinematic_viscosity: 1.51e-5")])
    assert load_case(path).physics.fluid.nu == approx(1.51e-5)     # given value wins


def test_absolute_mesh_path(tmp_path: Path) -> None:
    mesh = tmp_path / "elsewhere" / "abs.msh"
    mesh.parent.mkdir()
    mesh.touch()
    path = write_case(tmp_path, replace=[("file: room.msh", f"file: '{mesh}'")])
    assert load_case(path).mesh.file == mesh.resolve()


FAN_SCHEMA = {
    "type": "object",
    "additionalProperties": False,
    "properties": {
        "flow_rate": {"description": "Fan flow rate, m^3/s.", "type": "number"},
        "hub": {"$ref": "urn:caselint:schema:case-v1#/$defs/length"},
        "serviced": {"type": "string", "format": "date"},
    },
}


def test_extension_section_is_validated_and_kept(tmp_path: Path) -> None:
    path = write_case(tmp_path, DATA.read_text(encoding="utf-8")
                      + "fan_curve: {flow_rate: 0.35, hub: 40 mm, serviced: 2026-01-15}\n")
    case = load_case(path, extensions={"fan_curve": FAN_SCHEMA})
    assert case.extensions == {"fan_curve": {"flow_rate": 0.35, "hub": "40 mm",
                                             "serviced": "2026-01-15"}}
    with pytest.raises(CaseFileError, match=r"unknown key 'fan_curve'"):
        load_case(path)


def test_extension_errors_point_into_the_section(tmp_path: Path) -> None:
    text = DATA.read_text(encoding="utf-8") + "fan_curve:\n  flow_rte: 0.35\n"
    path = write_case(tmp_path, text)
    with pytest.raises(CaseFileError) as info:
        load_case(path, extensions={"fan_curve": FAN_SCHEMA})
    assert info.value.key == "fan_curve.flow_rte"
    assert info.value.line == len(text.splitlines())
    assert "did you mean 'flow_rate'?" in info.value.message


def test_bad_extensions_are_plugin_errors(tmp_path: Path) -> None:
    path = write_case(tmp_path, DATA.read_text(encoding="utf-8") + "fan_curve: {x: 1}\n")
    with pytest.raises(PluginLoadError, match="clashes"):
        load_case(path, extensions={"mesh": FAN_SCHEMA})
    with pytest.raises(PluginLoadError, match="not a valid JSON schema"):
        load_case(path, extensions={"fan_curve": {"type": 5}})
    remote = {"type": "object", "properties": {"x": {"$ref": "https://example.invalid/x.json"}}}
    with pytest.raises(PluginLoadError, match="cannot be resolved offline"):
        load_case(path, extensions={"fan_curve": remote})


def test_direction_is_normalised_exactly_for_axis_vectors(tmp_path: Path) -> None:
    path = write_case(tmp_path, replace=[("direction: [3, 4, 0]", "direction: [0, 0, -2.5]")])
    direction = load_case(path).physics.flow.direction
    assert direction == (0.0, 0.0, -1.0)
    assert math.hypot(*direction) == 1.0
