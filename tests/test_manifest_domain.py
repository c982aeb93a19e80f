"""The case file's ``domain`` section: the body of an external flow and which way is up."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

from caselint.errors import CaseFileError
from caselint.manifest import load_case
from caselint.manifest.case import Domain

BASE = """\
caselint: 1
case: {name: Invented roadside kiosk, safety: structural-wind}
mesh:
  file: site.msh
physics:
  flow: {kind: external, direction: [1, 0, 0]}
"""


def load(tmp_path: Path, extra: str):
    (tmp_path / "site.msh").touch()
    path = tmp_path / "case.yaml"
    path.write_text(BASE + textwrap.dedent(extra), encoding="utf-8")
    return load_case(path)


def test_domain_body_and_up_are_read(tmp_path):
    case = load(tmp_path, """\
        domain:
          body: [kiosk, canopy]
          up: [0, 0, 2]
        """)
    assert case.domain == Domain(body=("kiosk", "canopy"), up=(0.0, 0.0, 1.0))
    assert case.line_of("domain.body") == 8


def test_domain_defaults_when_absent(tmp_path):
    case = load(tmp_path, "")
    assert case.domain == Domain(body=(), up=None)


def test_up_along_the_flow_is_an_error_at_its_line(tmp_path):
    with pytest.raises(CaseFileError) as info:
        load(tmp_path, """\
            domain:
              body: [kiosk]
              up: [-3, 0, 0]
            """)
    assert info.value.key == "domain.up" and info.value.line == 9
    assert "lies along the flow direction" in info.value.message


@pytest.mark.parametrize("extra, key", [
    ("domain:\n  body: []\n", "domain.body"),
    ("domain:\n  body: [kiosk]\n  up: [0, 0, 0]\n", "domain.up"),
    ("domain:\n  body: [kiosk]\n  ground: [floor]\n", "domain"),
    ("domain:\n  body: kiosk\n", "domain.body"),
])
def test_bad_domain_entries_name_the_key(tmp_path, extra, key):
    with pytest.raises(CaseFileError) as info:
        load(tmp_path, extra)
    assert info.value.key.startswith(key)
