"""to_si: quantities to SI floats, and clear errors for wrong dimensions and bad text.

Reference factors are exact by definition: SI prefixes; 1 in = 0.0254 m and 1 ft = 0.3048 m
(international yard and pound, 1959); 1 h = 3600 s; 1 Pa*s = 1 kg/(m*s); 1 cP = 1e-3 Pa*s.
"""

from __future__ import annotations

import pytest

from caselint.errors import CaseFileError
from caselint.manifest.units import LENGTH_UNITS, UNKNOWN_FILE, scale_to_m, to_si, unit_registry


@pytest.mark.parametrize("value,dimension,expected", [
    ("1.81e-5 Pa*s", "dynamic_viscosity", 1.81e-5),
    ("1 cP", "dynamic_viscosity", 1e-3),
    ("5 mm", "length", 0.005),
    ("1 ft", "length", 0.3048),
    ("1 in", "length", 0.0254),
    ("120 um", "length", 1.2e-4),
    ("2e-4 s", "time", 2e-4),
    ("10 ms", "time", 0.01),
    ("0.5 min", "time", 30.0),
    ("30 km/h", "velocity", 30_000 / 3600),
    ("2.5 m/s", "velocity", 2.5),
    ("1.2 kg/m^3", "density", 1.2),
    ("1.2 kg/m**3", "density", 1.2),
    ("1 g/cm^3", "density", 1000.0),
    ("1.5e-5 m^2/s", "kinematic_viscosity", 1.5e-5),
    ("1 St", "kinematic_viscosity", 1e-4),              # stokes = 1 cm^2/s
    ("0.22 cm^2/s", "diffusivity", 2.2e-5),
    (998, "density", 998.0),                            # plain numbers are SI
    (2.5e-4, "time", 2.5e-4),
    ("2e-4", "time", 2e-4),                             # text without a unit is an SI number
    (-3, "velocity", -3.0),                             # the sign check is the loader's
])
def test_conversions(value, dimension, expected) -> None:
    result = to_si(value, dimension, "some.key")
    assert isinstance(result, float)
    assert result == pytest.approx(expected, rel=1e-12, abs=0.0)


def test_30_km_per_h_and_1_ft() -> None:
    assert to_si("30 km/h", "velocity", "v") == pytest.approx(8.3333333333, rel=1e-10)
    assert to_si("1 ft", "length", "l") == pytest.approx(0.3048, rel=1e-15)


@pytest.mark.parametrize("value,dimension,message", [
    ("2 kg", "velocity", "expected a velocity such as '2.5 m/s', got '2 kg', which is a mass"),
    ("3 m", "time", "expected a time such as '2e-4 s', got '3 m', which is a length"),
    ("1 Pa", "dynamic_viscosity",
     "expected a dynamic viscosity such as '1.81e-5 Pa*s', got '1 Pa', which is a pressure"),
    ("1.5e-5 m^2/s", "dynamic_viscosity",
     "expected a dynamic viscosity such as '1.81e-5 Pa*s', got '1.5e-5 m^2/s', "
     "which is a kinematic viscosity or diffusivity"),
    ("1 kg*m", "density",
     "expected a density such as '1.2 kg/m^3', got '1 kg*m', which is of dimension [mass] * [length]"),
])
def test_wrong_dimension_names_key_and_expected(value, dimension, message) -> None:
    with pytest.raises(CaseFileError) as info:
        to_si(value, dimension, "physics.flow.velocity")
    assert info.value.message == message
    assert info.value.key == "physics.flow.velocity"
    assert info.value.file == UNKNOWN_FILE


@pytest.mark.parametrize("value,fragment", [
    ("2.5 meters/sek", "unknown unit 'sek'"),
    ("fast", "unknown unit 'fast'"),
    ("2.5 m/", "cannot read '2.5 m/' as a velocity"),
    (True, "got True"),
    ([2.5], "got [2.5]"),
    (None, "got None"),
    (float("nan"), "not a finite number"),
    (float("inf"), "not a finite number"),
    ("inf m/s", "not a finite number"),
])
def test_unreadable_values(value, fragment) -> None:
    with pytest.raises(CaseFileError) as info:
        to_si(value, "velocity", "physics.flow.velocity")
    assert fragment in info.value.message
    assert "expected a velocity such as '2.5 m/s'" in info.value.message


def test_mesh_length_units() -> None:
    assert LENGTH_UNITS == {"m": 1.0, "cm": 1e-2, "mm": 1e-3, "um": 1e-6, "in": 0.0254, "ft": 0.3048}
    ureg = unit_registry()
    for name, factor in LENGTH_UNITS.items():
        assert scale_to_m(name) == factor
        assert ureg.Quantity(1, name).to("m").magnitude == pytest.approx(factor, rel=1e-12)


def test_registry_is_built_once() -> None:
    assert unit_registry() is unit_registry()
