"""The library's entry points: lint case files into a report.

``lint()`` checks several case files, ``lint_case()`` one; both take a plugin manager
(default: the built-ins and installed packs) and a mesh reader (default:
:func:`caselint.mesh.read_mesh`, under the default memory limit). The plugins' hooks are
collected once per call (:class:`caselint.engine.registry.Registry`) and each case file is
parsed once. The whole ``check`` pipeline, with outputs and baselines, is
:func:`caselint.pipeline.run_check`.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import difflib
from pathlib import Path
from typing import TYPE_CHECKING, Callable, Iterable

from caselint import __version__
from caselint.engine.plugins import get_plugin_manager
from caselint.engine.registry import Registry
from caselint.engine.rulesets import Selection, select_rules
from caselint.engine.runner import run_case
from caselint.errors import CaseFileError, CaseFileErrors, MeshReadError
from caselint.files import file_sha256
from caselint.model import CaseReport, Report, RuleInfo, RuleSetInfo

if TYPE_CHECKING:
    import pluggy

    from caselint.manifest.case import Case
    from caselint.mesh.analysis import Mesh
    from caselint.mesh.readers import MeshReader

#: A function reading a mesh: ``read(path, *, scale_to_m, tag_array, tags, zone, readers)
#: -> Mesh``, raising :class:`caselint.errors.MeshReadError` (the signature of
#: :func:`caselint.mesh.read_mesh`).
ReadMesh = Callable[..., "Mesh"]


def _registry(pm: "pluggy.PluginManager | None", registry: Registry | None) -> Registry:
    if registry is not None:
        return registry
    return Registry(pm if pm is not None else get_plugin_manager())


def load_case(path: str | Path, pm: "pluggy.PluginManager | None" = None, *,
              registry: Registry | None = None) -> "Case":
    """Read and validate a case file (units converted to SI), with plugins' sections."""
    from caselint.manifest.loader import load_case as _load

    if pm is None and registry is None:
        return _load(Path(path))
    sections = _registry(pm, registry).case_sections
    return _load(Path(path), extensions={n: s.schema for n, s in sections.items()},
                 quantities={n: s.quantities for n, s in sections.items()})


def load_case_mesh(case: "Case", read_mesh: ReadMesh | None = None,
                   readers: "Iterable[MeshReader] | None" = None) -> "Mesh":
    """Read the case's mesh in metres with ``read_mesh`` (default: :func:`caselint.mesh.read_mesh`)
    and check that its named boundary groups exist. ``readers`` are the mesh readers of the
    run's plugins (default: the built-in ones).

    :raises CaseFileError: the mesh cannot be read, or a boundary named in the case file is
        not in the mesh; the message points at the case-file key.
    """
    if read_mesh is None:
        from caselint.mesh import read_mesh

    spec = case.mesh
    try:
        mesh = read_mesh(spec.file, scale_to_m=spec.scale_to_m, tag_array=spec.tag_array,
                         tags=dict(spec.tags) or None, zone=spec.zone, readers=readers)
    except MeshReadError as exc:
        raise CaseFileError(str(case.path), f"cannot read the mesh: {exc}",
                            line=case.line_of("mesh.file"), key="mesh.file") from exc
    problems = []
    for name in sorted(spec.boundaries):
        if name not in mesh.group_names:
            close = difflib.get_close_matches(name, mesh.group_names, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            known = ", ".join(mesh.group_names) or "none"
            key = f"mesh.boundaries.{name}"
            problems.append(CaseFileError(str(case.path), f"boundary group {name!r} is not in "
                                          f"the mesh {spec.file.name}{hint}; the mesh has: "
                                          f"{known}", line=case.line_of(key), key=key))
    zones = mesh.data.zone_names
    for i, region in enumerate(case.regions):
        zone = region.geometry.get("zone") if region.shape == "zone" else None
        if zone is not None and zone not in zones:
            close = difflib.get_close_matches(str(zone), zones, n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            key = f"regions[{i}].zone"
            problems.append(CaseFileError(str(case.path), f"cell zone {zone!r} is not in the "
                                          f"mesh {spec.file.name}{hint}; the mesh has: "
                                          f"{', '.join(zones) or 'no cell zones'}",
                                          line=case.line_of(key), key=key))
    if problems:
        raise CaseFileErrors.of(problems)
    return mesh


def select_for_case(case: "Case", registry: Registry,
                    rule_sets: Iterable[str] | None = None) -> Selection:
    """The rules (with limits) and checklist a case runs under.

    ``rule_sets`` from the command line replace the case file's ``checks.rule_sets``;
    names of registered sets, or paths of rule-set files (relative to the current folder).
    """
    rules = registry.rules
    problems = []
    for i, waiver in enumerate(case.checks.waivers):
        if waiver.rule not in rules:
            close = difflib.get_close_matches(waiver.rule, sorted(rules), n=1)
            hint = f" (did you mean {close[0]!r}?)" if close else ""
            key = f"checks.waivers[{i}].rule"
            problems.append(CaseFileError(str(case.path), f"waiver names unknown rule "
                                          f"{waiver.rule!r}{hint}", line=case.line_of(key),
                                          key=key))
    if problems:
        raise CaseFileErrors.of(problems)
    if rule_sets:
        names, base = tuple(rule_sets), Path.cwd()
    else:
        names, base = case.checks.rule_sets, case.path.parent
    return select_rules(names, registry.rule_set_files, rules, case.checks.rules,
                        case_file=str(case.path), case_lines=case.lines, base=base,
                        from_command_line=bool(rule_sets))


def lint_case(
    case: "str | Path | Case",
    *,
    rule_sets: Iterable[str] | None = None,
    pm: "pluggy.PluginManager | None" = None,
    registry: Registry | None = None,
    read_mesh: ReadMesh | None = None,
    today: dt.date | None = None,
    label: str | None = None,
) -> CaseReport:
    """Check one case file (a path, or a case already loaded) and return its report.

    ``label`` is how the report names the case file (default: the path as given).
    :raises UsageError: bad case file, rule set or mesh; the message names file, line and key.
    """
    from caselint.mesh.reader import mesh_sha256

    registry = _registry(pm, registry)
    if isinstance(case, (str, Path)):
        label = str(case) if label is None else label
        case = load_case(case, registry=registry)
    selection = select_for_case(case, registry, rule_sets)
    readers = tuple(registry.mesh_readers.values())
    loaded: list["Mesh"] = []

    def mesh() -> "Mesh":
        if not loaded:
            loaded.append(load_case_mesh(case, read_mesh, readers))
        return loaded[0]

    if any("mesh" in a.rule.needs for a in selection.rules):
        case = with_declared_roles(case, mesh())   # a bad mesh is bad input before any rule
    report = run_case(case, selection.rules, mesh, label=label, rule_sets=selection.rule_sets,
                      checklist=selection.checklist, today=today, read_mesh=read_mesh)
    return dataclasses.replace(report, case_sha256=file_sha256(case.path),
                               mesh_sha256=mesh_sha256(case.mesh.file, readers),
                               rule_set_files=selection.files)


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


def lint(
    paths: Iterable[str | Path],
    *,
    rule_sets: Iterable[str] | None = None,
    pm: "pluggy.PluginManager | None" = None,
    read_mesh: ReadMesh | None = None,
    today: dt.date | None = None,
) -> Report:
    """Check several case files; stops at the first bad input (see :func:`lint_case`)."""
    registry = _registry(pm, None)
    rule_sets = tuple(rule_sets) if rule_sets else None
    cases = tuple(lint_case(p, rule_sets=rule_sets, registry=registry, read_mesh=read_mesh,
                            today=today) for p in paths)
    return build_report(cases, registry, rule_sets or ())


def build_report(cases: Iterable[CaseReport], registry: "Registry | pluggy.PluginManager",
                 rule_sets: Iterable[str] = ()) -> Report:
    """A run's report: the cases, plus what describes the rules and rule-set files they used.

    ``Report.rules`` (for SARIF rule metadata) holds every rule a case has a check of (from
    the cases' own descriptions, so the declarative rules of a rule-set file named by path
    are there too); ``Report.rule_set_info`` every rule-set file a case ran under, with its
    provider and hash. ``registry`` may be a plugin manager.
    """
    cases = tuple(cases)
    if not isinstance(registry, Registry):
        registry = Registry(registry)
    described = {info.id: info for case in cases for info in case.rule_info}
    rules = {**{r: RuleInfo.of(rule) for r, rule in registry.rules.items()}, **described}
    used_rules = sorted({c.rule for case in cases for c in case.checks} & set(rules))
    providers = registry.rule_set_providers
    distributions = getattr(registry.pm, "distributions", {})
    files = {name: path for case in cases for name, path in case.rule_set_files}
    set_info = []
    for name in sorted(files):
        plugin = providers.get(name)
        dist, version = distributions.get(plugin, (plugin, "")) if plugin else ("file", "")
        set_info.append(RuleSetInfo(name, dist, version, file_sha256(files[name])))
    return Report(cases=cases, caselint_version=__version__, rule_sets=tuple(rule_sets),
                  rules=tuple(rules[r] for r in used_rules),
                  rule_set_info=tuple(set_info))
