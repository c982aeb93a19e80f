"""Case-file keys of the time-step checks: time.frequency, time.advection_scheme,
physics.compressible, physics.flow.strouhal and mesh.velocity_field.

Unit factors are exact by definition (1 kHz = 1000 Hz, 1 min = 60 s).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from caselint.errors import CaseFileError
from caselint.manifest import load_case
from caselint.manifest.case import SCHEME_INTEGRATION, TimeSpec
from caselint.manifest.schema import case_schema

BASE = """\
caselint: 1
case: {name: Drying tunnel T4}
mesh:
  file: tunnel.msh
  velocity_field: U_start
physics:
  compressible: true
  flow: {kind: external, velocity: 12 m/s, direction: [1, 0, 0], length: 40 mm, strouhal: 0.21}
time:
  mode: transient
  step: 1e-4 s
  end: 2 s
  integration: explicit
  scheme: rk4
  advection_scheme: central
  frequency: 2.4 kHz
"""


def load(tmp_path: Path, text: str):
    (tmp_path / "tunnel.msh").touch()
    path = tmp_path / "case.yaml"
    path.write_text(text, encoding="utf-8")
    return load_case(path)


def test_the_new_keys_are_read(tmp_path):
    case = load(tmp_path, BASE)
    assert case.mesh.velocity_field == "U_start"
    assert case.physics.compressible is True
    assert case.physics.flow.strouhal == 0.21
    assert case.time.frequency == pytest.approx(2400.0, rel=1e-12)
    assert case.time.advection_scheme == "central"
    assert case.time.integration_or_implied == "explicit"


def test_defaults_when_left_out(tmp_path):
    text = "\n".join(line for line in BASE.splitlines()
                     if not any(k in line for k in ("velocity_field", "compressible",
                                                    "advection_scheme", "frequency")))
    case = load(tmp_path, text.replace(", strouhal: 0.21", "") + "\n")
    assert case.mesh.velocity_field is None and case.physics.compressible is False
    assert case.physics.flow.strouhal is None
    assert case.time.frequency is None and case.time.advection_scheme is None


@pytest.mark.parametrize("written, hz", [("40", 40.0), ("40 Hz", 40.0), ("3 / min", 0.05)])
def test_frequency_units(tmp_path, written, hz):
    case = load(tmp_path, BASE.replace("frequency: 2.4 kHz", f"frequency: {written}"))
    assert case.time.frequency == pytest.approx(hz, rel=1e-12)


@pytest.mark.parametrize("old, new, key, words", [
    ("frequency: 2.4 kHz", "frequency: 2.4 m", "time.frequency", "expected a frequency"),
    ("frequency: 2.4 kHz", "frequency: -3", "time.frequency", "must be greater than zero"),
    ("scheme: rk4", "scheme: bdf2", "time.scheme",
     "the scheme bdf2 is implicit, but time.integration says explicit"),
    ("advection_scheme: central", "advection_scheme: quick", "time.advection_scheme", "upwind"),
    ("strouhal: 0.21", "strouhal: 0", "physics.flow.strouhal", ""),
    ("compressible: true", "compressible: yes please", "physics.compressible", ""),
])
def test_bad_values_name_the_key_and_line(tmp_path, old, new, key, words):
    text = BASE.replace(old, new)
    with pytest.raises(CaseFileError) as info:
        load(tmp_path, text)
    err = info.value
    assert err.key == key
    needle = new.split(":")[0].strip()
    assert err.line == next(i for i, line in enumerate(text.splitlines(), 1) if needle in line)
    assert words in err.message


def test_integration_is_implied_by_the_scheme():
    assert TimeSpec(scheme="rk3").integration_or_implied == "explicit"
    assert TimeSpec(scheme="crank-nicolson").integration_or_implied == "implicit"
    assert TimeSpec().integration_or_implied is None
    assert TimeSpec(integration="implicit").integration_or_implied == "implicit"
    schema = case_schema()
    enum = schema["properties"]["time"]["properties"]["scheme"]["enum"]
    assert sorted(SCHEME_INTEGRATION) == sorted(enum)            # the two lists stay equal
