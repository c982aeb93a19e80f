"""How values, limits and counts are written: on the limit, plurals, directions."""

from __future__ import annotations

import pytest

from caselint.engine import grading
from caselint.model import Limits, Measurement, Rule, RuleResult
from caselint.wording import apart, format_number, limit_text, number, plural, quantity

GROWTH = Rule(id="growth-ratio", title="Growth", rationale="invented", source="common practice",
              unit="", limits=Limits(1.2, 2.0), hint="-", measures="largest growth ratio",
              check=lambda ctx: RuleResult.skip("never run"))
GAP = Rule(id="gap-cells", title="Gap", rationale="invented", source="common practice",
           unit="cells", limits=Limits(10, 5), hint="-", worse="lower",
           measures="fewest cells across a gap", check=lambda ctx: RuleResult.skip("never run"))


def test_grading_is_exact_on_the_limit():
    # Visible digits, not a tolerance: the limit itself passes, anything beyond it does not.
    assert grading.grade(1.2, GROWTH.limits, "higher") is None
    assert grading.grade(1.2000001, GROWTH.limits, "higher") == "warning"
    assert grading.grade(1.2 + 2.3e-16, GROWTH.limits, "higher") == "warning"
    assert grading.grade(5.0, GAP.limits, "lower") == "warning"
    assert grading.grade(4.9999999, GAP.limits, "lower") == "error"


@pytest.mark.parametrize("value, severity, limit, expected", [
    (1.2000001, "warning", 1.2, "largest growth ratio is 1.2000001, above the warning limit 1.2"),
    (1.2 + 2.3e-16, "warning", 1.2,
     "largest growth ratio is 1.2000000000000002, above the warning limit 1.2"),
    (1.2345, "warning", 1.2, "largest growth ratio is 1.234, above the warning limit 1.2"),
    (2.00004, "error", 2.0, "largest growth ratio is 2.00004, above the error limit 2"),
])
def test_a_value_never_reads_equal_to_the_limit_it_crosses(value, severity, limit, expected):
    assert grading.grade(value, GROWTH.limits, "higher") == severity
    assert grading.message(GROWTH, Measurement(value), severity, limit) == expected


def test_minimum_limits_and_counts_of_one():
    assert grading.message(GAP, Measurement(4.9999999), "error", 5) == (
        "fewest cells across a gap is 4.9999999 cells, below the error limit 5 cells")
    assert grading.message(GAP, Measurement(1.0), "error", 5) == (
        "fewest cells across a gap is 1 cell, below the error limit 5 cells")


def test_apart_adds_digits_only_where_needed():
    assert apart(948.283, 500.0) == ("948.3", "500")
    assert apart(1.30004, 1.3, 6, format_number) == ("1.30004", "1.3")
    assert apart(1.3000001, 1.3, 6, format_number) == ("1.3000001", "1.3")
    assert apart(1.3, 1.3) == ("1.3", "1.3")              # equal values read equal
    assert apart(-0.0, 0.0, 6, format_number) == ("0", "0")


def test_quantities_plurals_and_limit_directions():
    assert number(12.0) == "12" and number(0.0012345) == "0.001234"
    assert quantity(1.0, "cells") == "1 cell" and quantity(2.0, "cells") == "2 cells"
    assert quantity(1.0, "meshes") == "1 mesh" and quantity(1.5, "cells") == "1.5 cells"
    assert quantity(1.0, "deg") == "1 deg" and quantity(0.5, "") == "0.5"
    assert quantity(1.0, "waivers") == "1 waiver" and quantity(0.0, "waivers") == "0 waivers"
    assert plural(1, "case") == "1 case" and plural(0, "case") == "0 cases"
    assert limit_text(1.3, "higher", "") == "<= 1.3"
    assert limit_text(10.0, "lower", "cells") == ">= 10 cells"
    assert limit_text(1.0, "lower", "cells") == ">= 1 cell"
    assert limit_text(None, "higher", "deg") == "-"
