"""The example rule pack in plugins/quillfen-rules, discovered as an installed distribution.

The pack is put on ``sys.path`` with a ``*.dist-info`` folder holding its metadata and
entry point, which is what ``pip install`` leaves behind: ``importlib.metadata`` and so
caselint's plugin manager find it exactly as they would an installed pack.
"""

from __future__ import annotations

import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from caselint.api import lint_case
from caselint.engine.plugins import DISABLE_AUTOLOAD_ENV, get_plugin_manager, plugin_listing
from caselint.engine.registry import collect_rules
from caselint.errors import CaseFileError, PluginLoadError
from caselint.mesh.blocks import structured_hex, write_gmsh22

PACK_DIR = Path(__file__).resolve().parents[1] / "plugins" / "quillfen-rules"


def _install_fake_dist(site: Path, name: str, version: str, entry: str) -> None:
    info = site / f"{name.replace('-', '_')}-{version}.dist-info"
    info.mkdir(parents=True)
    (info / "METADATA").write_text(f"Metadata-Version: 2.1\nName: {name}\nVersion: {version}\n")
    (info / "entry_points.txt").write_text(f"[caselint]\n{entry}\n")


@pytest.fixture
def installed_pack(tmp_path, monkeypatch):
    """The pack 'installed': its dist-info and its code importable; autoload switched on."""
    site = tmp_path / "site"
    _install_fake_dist(site, "quillfen-rules", "1.2.0", "quillfen = quillfen_rules.plugin")
    monkeypatch.syspath_prepend(str(site))
    monkeypatch.syspath_prepend(str(PACK_DIR))
    monkeypatch.delenv(DISABLE_AUTOLOAD_ENV, raising=False)
    yield site
    for module in [m for m in sys.modules if m.startswith("quillfen_rules")]:
        del sys.modules[module]


def _room_case(folder: Path, extra: str, rule_set: str = "quillfen-rooms") -> Path:
    """An 8 m x 4 m x 3 m room (96 m^3) of 0.5/1.0 m hexes, and a case file for it."""
    mesh = structured_hex(np.linspace(0, 8, 9), np.linspace(0, 4, 5), np.linspace(0, 3, 4),
                          names=("supply", "exhaust", "wall-s", "wall-n", "floor", "ceiling"))
    write_gmsh22(mesh, folder / "room.msh")
    case = folder / "case.yaml"
    case.write_text(textwrap.dedent("""\
        caselint: 1
        case: {name: qf-test-room, safety: none}
        mesh:
          file: room.msh
          boundaries: {supply: inlet, exhaust: outlet, wall-s: wall, wall-n: wall, floor: wall,
                       ceiling: wall}
        checks:
          rule_sets: [%s]
        """ % rule_set) + textwrap.dedent(extra))
    return case


def test_the_installed_pack_is_discovered_with_its_distribution(installed_pack):
    pm = get_plugin_manager()
    rules = collect_rules(pm)
    assert {"qf-air-change-rate", "qf-fire-smoke-needs-reviewer",
            "qf-scale-resolving-needs-time-step"} <= set(rules)
    (row,) = [r for r in plugin_listing(pm) if r["name"] == "quillfen"]
    assert (row["distribution"], row["version"]) == ("quillfen-rules", "1.2.0")
    assert row["rules"] == ["qf-air-change-rate", "qf-fire-smoke-needs-reviewer",
                            "qf-scale-resolving-needs-time-step"]
    assert row["rule_sets"] == ["quillfen-rooms"] and row["case_sections"] == ["quillfen"]


def test_the_pack_rule_reads_its_section_and_the_set_applies_its_limits(installed_pack, tmp_path):
    # 0.4 m^3/s into 96 m^3: 0.4 * 3600 / 96 = 15 air changes per hour (< 20 warn, > 10 error)
    case = _room_case(tmp_path, """\
        quillfen: {project: QF-2291, supply_flow: 1440 m^3/h}
        """)
    report = lint_case(case, pm=get_plugin_manager())
    checks = {c.rule: c for c in report.checks}
    air = checks["qf-air-change-rate"]
    assert (air.outcome, air.severity, air.limit) == ("fail", "warning", 20.0)
    assert air.measured == pytest.approx(15.0, rel=1e-12)
    (finding,) = [f for f in report.findings if f.rule == "qf-air-change-rate"]
    assert "0.667 m^3/s" in finding.hint  # 25 changes/h * 96 m^3 / 3600 s
    assert checks["growth-ratio"].limits.warn == 1.2  # the company's stricter limit
    assert checks["non-orthogonality"].limits.error == 80
    assert checks["qf-fire-smoke-needs-reviewer"].outcome == "pass"
    assert [i.id for i in report.checklist][-2:] == ["qf-supply-flow-source", "qf-client-geometry"]


def test_declarative_conditions_fire_and_point_at_the_case_file(installed_pack, tmp_path):
    case = _room_case(tmp_path, """\
        physics:
          turbulence: {model: les}
        time: {mode: steady}
        quillfen: {project: QF-2291}
        """)
    case.write_text(case.read_text().replace("safety: none", "safety: fire-smoke"))
    report = lint_case(case, pm=get_plugin_manager())
    checks = {c.rule: c for c in report.checks}
    assert checks["qf-fire-smoke-needs-reviewer"].outcome == "fail"
    assert checks["qf-scale-resolving-needs-time-step"].outcome == "fail"
    assert checks["qf-air-change-rate"].outcome == "skipped"
    les = [f for f in report.findings if f.rule == "qf-scale-resolving-needs-time-step"][0]
    assert les.severity == "error" and les.where.key == "time"
    assert les.where.line == 11  # the `time:` line of the case file
    assert les.message.startswith("LES and DES are transient by nature")


def test_the_pack_section_is_validated_with_file_line_and_key(installed_pack, tmp_path):
    case = _room_case(tmp_path, "quillfen: {project: QF-12}\n")
    with pytest.raises(CaseFileError) as err:
        lint_case(case, pm=get_plugin_manager())
    assert err.value.line == 9 and err.value.key == "quillfen.project"
    case = _room_case(tmp_path, "quillfen: {project: QF-2291, supply_flow: 2 kg}\n")
    with pytest.raises(CaseFileError, match="volume flow rate") as err:
        lint_case(case, pm=get_plugin_manager())
    assert err.value.line == 9 and err.value.key == "quillfen.supply_flow"


def test_a_blocked_pack_adds_nothing(installed_pack):
    pm = get_plugin_manager(blocked=["quillfen"])
    assert "qf-air-change-rate" not in collect_rules(pm)


def test_a_pack_that_fails_to_import_stops_the_run_naming_its_distribution(tmp_path, monkeypatch):
    site = tmp_path / "site"
    _install_fake_dist(site, "broken-rules", "0.3.1", "broken = broken_rules_missing.plugin")
    monkeypatch.syspath_prepend(str(site))
    monkeypatch.delenv(DISABLE_AUTOLOAD_ENV, raising=False)
    with pytest.raises(PluginLoadError, match=r"broken-rules 0\.3\.1 failed to load.*"
                                              r"ModuleNotFoundError.*--no-plugin broken"):
        get_plugin_manager()
    # the command line turns it into exit 2 with the same message
    from test_cli import run_cli

    code, _out, err = run_cli("rules")
    assert code == 2 and "broken-rules" in err


def test_a_duplicate_rule_id_names_both_packs(installed_pack, tmp_path):
    from caselint import hookimpl
    from caselint.model import Limits, Rule, RuleResult

    class Copycat:
        @hookimpl
        def caselint_register_rules(self):
            return [Rule(id="qf-air-change-rate", title="t", rationale="r", source="s", unit="",
                         limits=Limits(warn=1), hint="h", check=lambda ctx: RuleResult.skip("x"))]

    pm = get_plugin_manager()
    pm.register(Copycat(), name="copycat")
    with pytest.raises(PluginLoadError, match="'qf-air-change-rate'.*'quillfen'.*'copycat'|"
                                              "'qf-air-change-rate'.*'copycat'.*'quillfen'"):
        collect_rules(pm)
