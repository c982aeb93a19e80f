"""The one entry point the command line and the tests use: lint case files into a report."""

from __future__ import annotations

import dataclasses
import datetime as dt
import difflib
import hashlib
from pathlib import Path
from typing import TYPE_CHECKING, Iterable

from caselint import __version__
from caselint.engine.plugins import get_plugin_manager
from caselint.engine.registry import (
    collect_case_sections,
    collect_mesh_readers,
    collect_rule_set_files,
    collect_rules,
    contributions,
)
from caselint.engine.rulesets import Selection, select_rules
from caselint.engine.runner import run_case
from caselint.errors import CaseFileError, MeshReadError
from caselint.model import CaseReport, Report, RuleInfo, RuleSetInfo

if TYPE_CHECKING:
    import pluggy

    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh
    from caselint.mesh.readers import MeshReader


def load_case(path: str | Path, pm: "pluggy.PluginManager | None" = None) -> "Case":
    """Read and validate a case file (units converted to SI), with plugins' sections."""
    from caselint.manifest.loader import load_case as _load

    sections = collect_case_sections(pm) if pm is not None else None
    return _load(Path(path), extensions=sections)


def case_quantity(case: "Case", key: str, dimension: str) -> float | None:
    """SI value of the quantity at dotted ``key`` of the case file, or None when absent.

    For plugins reading their own case-file sections (quantities there are kept as
    written): a wrong dimension or unreadable unit is a CaseFileError naming the case
    file, line and key. ``dimension`` is a name from ``caselint.manifest.units.DIMENSIONS``.
    """
    from caselint.manifest.units import to_si

    value: object = case.document
    for part in key.split("."):
        if not isinstance(value, dict) or part not in value:
            return None
        value = value[part]
    try:
        return to_si(value, dimension, key)
    except CaseFileError as exc:
        raise CaseFileError(str(case.path), exc.message, line=case.line_of(key), key=key) from None


def load_case_mesh(case: "Case", readers: "Iterable[MeshReader] | None" = None) -> "Mesh":
    """Read the case's mesh in metres and check that its named boundary groups exist.

    Inside a batch (:mod:`caselint.batch`) the mesh comes from the batch's mesh store,
    which reads each mesh once or takes it from the mesh cache. ``readers`` are the mesh
    readers of the run's plugins (default: the built-in ones).

    :raises CaseFileError: the mesh cannot be read, or a boundary named in the case file is
        not in the mesh; the message points at the case-file key.
    """
    from caselint.cache import active_store
    from caselint.mesh import read_mesh

    spec = case.mesh
    store = active_store()
    read = store.read if store is not None else read_mesh
    try:
        mesh = read(spec.file, scale_to_m=spec.scale_to_m, tag_array=spec.tag_array,
                    tags=dict(spec.tags) or None, readers=readers)
    except MeshReadError as exc:
        raise CaseFileError(str(case.path), f"cannot read the mesh: {exc}",
                            line=case.line_of("mesh.file"), key="mesh.file") from exc
    for name in sorted(spec.boundaries):
        if name not in mesh.group_names:
            close = difflib.get_close_matches(name, mesh.group_names, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            known = ", ".join(mesh.group_names) or "none"
            key = f"mesh.boundaries.{name}"
            raise CaseFileError(str(case.path), f"boundary group {name!r} is not in the mesh "
                                f"{spec.file.name}{hint}; the mesh has: {known}",
                                line=case.line_of(key), key=key)
    zones = mesh.data.zone_names
    for i, region in enumerate(case.regions):
        zone = region.geometry.get("zone") if region.shape == "zone" else None
        if zone is not None and zone not in zones:
            close = difflib.get_close_matches(str(zone), zones, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            key = f"regions[{i}].zone"
            raise CaseFileError(str(case.path), f"cell zone {zone!r} is not in the mesh "
                                f"{spec.file.name}{hint}; the mesh has: "
                                f"{', '.join(zones) or 'no cell zones'}",
                                line=case.line_of(key), key=key)
    return mesh


def select_for_case(
    case: "Case", pm: "pluggy.PluginManager", rule_sets: Iterable[str] | None = None
) -> Selection:
    """The rules (with limits) and checklist a case runs under.

    ``rule_sets`` from the command line replace the case file's ``checks.rule_sets``.
    """
    names = tuple(rule_sets) if rule_sets else case.checks.rule_sets
    rules = collect_rules(pm)
    known_rules = set(rules)
    for i, waiver in enumerate(case.checks.waivers):
        if waiver.rule not in known_rules:
            close = difflib.get_close_matches(waiver.rule, sorted(known_rules), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            key = f"checks.waivers[{i}].rule"
            raise CaseFileError(str(case.path), f"waiver names unknown rule {waiver.rule!r}{hint}",
                                line=case.line_of(key), key=key)
    return select_rules(names, collect_rule_set_files(pm), rules, case.checks.rules,
                        case_file=str(case.path), case_lines=case.lines)


def lint_case(
    path: str | Path,
    *,
    rule_sets: Iterable[str] | None = None,
    pm: "pluggy.PluginManager | None" = None,
    today: dt.date | None = None,
) -> CaseReport:
    """Check one case file and return its report.

    :raises UsageError: bad case file, rule set or mesh; the message names file, line and key.
    """
    from caselint.mesh.readers import mesh_sha256

    pm = pm if pm is not None else get_plugin_manager()
    case = load_case(path, pm)
    selection = select_for_case(case, pm, rule_sets)
    needs_mesh = any("mesh" in a.rule.needs for a in selection.rules)
    readers = tuple(collect_mesh_readers(pm).values())
    mesh = load_case_mesh(case, readers) if needs_mesh else None
    if mesh is not None:
        case = with_declared_roles(case, mesh)
    report = run_case(case, selection.rules,
                      lambda: mesh if mesh is not None else load_case_mesh(case, readers),
                      label=str(path), rule_sets=selection.rule_sets,
                      checklist=selection.checklist, today=today)
    return dataclasses.replace(report, case_sha256=file_sha256(case.path),
                               mesh_sha256=mesh_sha256(case.mesh.file, readers))


def with_declared_roles(case: "Case", mesh: "Mesh") -> "Case":
    """``case`` with a role for each mesh group the case file leaves out whose declared
    type implies one (a ``wall`` patch is a wall; :mod:`caselint.mesh.roles`); the case
    file's roles win."""
    from caselint.mesh.roles import default_roles

    implied = default_roles({name: kind for name, kind in mesh.data.group_types.items()
                             if name in mesh.group_names})
    missing = {name: role for name, role in implied.items()
               if name not in case.mesh.boundaries}
    if not missing:
        return case
    roles = {**case.mesh.boundaries, **missing}
    return dataclasses.replace(case, mesh=dataclasses.replace(
        case.mesh, boundaries=dict(sorted(roles.items()))))


def file_sha256(path: Path) -> str:
    """SHA-256 of a file's bytes, read in blocks (meshes can be large)."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def lint(
    paths: Iterable[str | Path],
    *,
    rule_sets: Iterable[str] | None = None,
    pm: "pluggy.PluginManager | None" = None,
    today: dt.date | None = None,
) -> Report:
    """Check several case files; stops at the first bad input (see :func:`lint_case`)."""
    pm = pm if pm is not None else get_plugin_manager()
    rule_sets = tuple(rule_sets) if rule_sets else None
    cases = tuple(lint_case(p, rule_sets=rule_sets, pm=pm, today=today) for p in paths)
    return build_report(cases, pm, rule_sets or ())


def build_report(
    cases: Iterable[CaseReport], pm: "pluggy.PluginManager", rule_sets: Iterable[str] = ()
) -> Report:
    """A run's report: the cases, plus what describes the rules and rule-set files they used.

    ``Report.rules`` (for SARIF rule metadata) holds every rule a case has a check of;
    ``Report.rule_set_info`` every rule-set file a case ran under, with its provider and hash.
    """
    cases = tuple(cases)
    rules = collect_rules(pm)
    used_rules = sorted({c.rule for case in cases for c in case.checks} & set(rules))
    files = collect_rule_set_files(pm)
    providers = {name: plugin for plugin, names in contributions(pm)["rule_sets"].items()
                 for name in names}
    distributions = getattr(pm, "distributions", {})
    set_info = []
    for name in sorted({n for case in cases for n in case.rule_sets} & set(files)):
        plugin = providers.get(name, "")
        dist, version = distributions.get(plugin, (plugin, ""))
        set_info.append(RuleSetInfo(name, dist, version, file_sha256(files[name])))
    return Report(cases=cases, caselint_version=__version__, rule_sets=tuple(rule_sets),
                  rules=tuple(RuleInfo.of(rules[r]) for r in used_rules),
                  rule_set_info=tuple(set_info))
