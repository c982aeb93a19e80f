"""The ``check`` pipeline as a library function: protect the inputs, lint, apply baselines,
render every output format and write the files.

:func:`run_check` does everything ``caselint check`` does except print: it returns what
goes to stdout, the messages for the user and whether the run found input it could not
read, and the command line prints them and picks the exit code. One bad case file does
not hide the findings of the others: its message is kept and the rest are reported.
"""

from __future__ import annotations

import contextlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Callable, ContextManager, Iterator

from caselint.errors import UsageError
from caselint.model import SEVERITY_RANK, CaseReport, Report

if TYPE_CHECKING:
    import pluggy

    from caselint.engine.registry import Registry
    from caselint.partition.streaming import OnStream
    from caselint.report.base import Reporter

#: Width of text reports written to files.
FILE_WIDTH = 100

#: Given the number of case files, a context manager yielding ``advance(n)``: progress.
Progress = Callable[[int], ContextManager[Callable[[int], None]]]


@dataclass(frozen=True)
class CheckOptions:
    """What ``caselint check`` was asked to do (see ``caselint check --help``).

    ``stdout_color`` and ``stdout_width`` shape the report written to stdout; files get
    plain text :data:`FILE_WIDTH` wide. ``stamp`` is the date printed in sign-off reports
    (empty: none). ``memory_limit`` is a :data:`caselint.mesh.limits.MemoryLimit`.
    """

    paths: tuple[str, ...]
    formats: tuple[str, ...] = ()
    outputs: tuple[str, ...] = ()
    fail_on: str = "error"
    rule_sets: tuple[str, ...] = ()
    baseline: str | None = None
    write_baseline: str | None = None
    stamp: str = ""
    jobs: int = 1
    scheduler: str | None = None
    partitions: str | None = None
    use_cache: bool = True
    memory_limit: tuple[int | None, str] | None = None
    blocked: tuple[str, ...] = ()
    cells_out: str | None = None
    stdout_color: bool = False
    stdout_width: int = FILE_WIDTH
    progress: Progress | None = None
    on_stream: "OnStream | None" = None


@dataclass
class CheckRun:
    """What a check produced: the report, the text for stdout, messages for the user."""

    report: Report | None = None
    stdout: list[str] = field(default_factory=list)
    messages: list[str] = field(default_factory=list)
    bad_input: bool = False
    fail_on: str = "error"

    @property
    def failed(self) -> bool:
        """True when an open finding is at or above the fail level, or a rule could not run."""
        return self.report is not None and fails(self.report, self.fail_on)


def fails(report: Report, fail_on: str) -> bool:
    """True when an open finding is at or above ``fail_on``, or a rule could not run."""
    threshold = SEVERITY_RANK[fail_on]
    for case in report.cases:
        if any(c.outcome == "error" for c in case.checks):
            return True
        if any(not f.waived and SEVERITY_RANK[f.severity] >= threshold for f in case.findings):
            return True
    return False


def _protect_inputs(path: Path, what: str, inputs: list[Path], kind: str) -> None:
    """Refuse to write a report or baseline over an input file, or into an input folder
    (a mesh folder)."""
    target = path.resolve()
    if any(target == p.resolve() or (p.is_dir() and target.is_relative_to(p.resolve()))
           for p in inputs):
        raise UsageError(f"{what} {path} is {kind}; caselint never overwrites its inputs")


def mesh_input_folders(mesh: Path) -> list[Path]:
    """A mesh file, or the folders holding the files a mesh folder is read from."""
    if not mesh.is_dir():
        return [mesh]
    from caselint.mesh.reader import mesh_files

    return sorted({file.parent for file in mesh_files(mesh)}) or [mesh]


def pick_reporter(registry: "Registry", name: str) -> "Reporter":
    """The output format called ``name``; a usage error listing the known ones otherwise."""
    from caselint.engine.entries import suggest

    reporters = registry.reporters
    if name not in reporters:
        raise UsageError(f"unknown output format {name!r}{suggest(name, reporters)}; "
                         f"available: {', '.join(reporters) or 'none'}")
    return reporters[name]


@contextlib.contextmanager
def _no_progress(total: int) -> Iterator[Callable[[int], None]]:
    yield lambda n: None


def run_check(options: CheckOptions, pm: "pluggy.PluginManager | None" = None) -> CheckRun:
    """Check the case files of ``options`` and render and write the reports.

    Folders expand to the case files below them; each format is rendered and written to
    its output file (atomically) or returned for stdout; ``baseline`` leaves out known
    findings and ``write_baseline`` records this run's.
    :raises UsageError: bad options, an unknown format, an output that is an input file.
    """
    from caselint.api import build_report
    from caselint.baseline import apply_baseline, baseline_text, load_baseline
    from caselint.batch import lint_batch
    from caselint.cache import MeshCache
    from caselint.cachedir import cache_dir
    from caselint.engine.plugins import get_plugin_manager
    from caselint.engine.registry import Registry
    from caselint.files import write_atomically
    from caselint.manifest.discovery import expand_case_paths
    from caselint.report.base import RenderOptions
    from caselint.report.outputs import pair_outputs

    registry = Registry(pm if pm is not None else get_plugin_manager(blocked=options.blocked))
    targets = [(pick_reporter(registry, d.format), d.path)
               for d in pair_outputs(list(options.formats), list(options.outputs))]
    paths = expand_case_paths(options.paths)
    written = [(p, "--output") for _, p in targets if p is not None]
    if options.write_baseline:
        written.append((Path(options.write_baseline), "--write-baseline"))
    cells_files = _cells_file_names(options.cells_out, paths)
    written += [(p, "--cells-out") for p in cells_files.values()]
    for path, option in written:
        _protect_inputs(path, option, [Path(p) for p in paths], "one of the case files")
    baseline = load_baseline(options.baseline) if options.baseline else None
    partitions = None
    if options.partitions is not None:
        from caselint.partition.runners import PartitionRequest

        partitions = PartitionRequest.parse(options.partitions, options.scheduler)
    if options.scheduler is not None and options.jobs != 1:
        raise UsageError("give either --jobs or --scheduler, not both (the scheduler's "
                         "workers decide how many cases run at once)")
    folder = cache_dir() if options.use_cache else None
    progress = options.progress if options.progress and len(paths) > 1 else _no_progress
    run = CheckRun(fail_on=options.fail_on)
    with progress(len(paths)) as advance:
        outcomes = lint_batch(paths, rule_sets=options.rule_sets or None, registry=registry,
                              blocked=options.blocked, jobs=options.jobs,
                              scheduler=None if partitions is not None else options.scheduler,
                              partitions=partitions,
                              cache=None if folder is None else MeshCache(folder),
                              memory_limit=options.memory_limit, progress=advance,
                              on_stream=options.on_stream)
    checked = []
    for outcome in outcomes:
        run.messages.extend(f"note: {note}" for note in outcome.notes)
        if outcome.error is not None:
            run.messages.append(f"error: {outcome.error}")
            run.bad_input = True
        else:
            checked.append((outcome.path, outcome.report))
    cases = tuple(case for _, case in checked)
    # CaseReport.mesh is relative to the case file's folder.
    meshes = [Path(path).parent / case.mesh for path, case in checked if case.mesh]
    meshes = [folder for mesh in meshes for folder in mesh_input_folders(mesh)]
    for path, option in written:
        _protect_inputs(path, option, meshes, "a mesh file of a case")
    report = build_report(cases, registry, options.rule_sets)
    if options.write_baseline:
        if run.bad_input:
            run.messages.append(f"baseline {options.write_baseline} not written: a case file "
                                "could not be checked, so the baseline would miss its findings")
        else:
            import json

            text = baseline_text(report)
            write_atomically(Path(options.write_baseline), text)
            count = len(json.loads(text)["findings"])
            run.messages.append(f"wrote baseline {options.write_baseline} ({count} open "
                                f"finding{'' if count == 1 else 's'})")
    if baseline is not None:
        report = apply_baseline(report, baseline)
        hidden = sum(case.baselined for case in report.cases)
        run.messages.append(f"{hidden} known finding{'' if hidden == 1 else 's'} left out "
                            f"(recorded in baseline {baseline.path})")
    run.report = report
    if cases or not run.bad_input:
        rendered = []
        for reporter, path in targets:  # render every format before writing any
            color, width = ((options.stdout_color, options.stdout_width) if path is None
                            else (False, FILE_WIDTH))
            render = RenderOptions(color=color, width=width, fail_on=options.fail_on,
                                   stamp=options.stamp)
            rendered.append((path, reporter.render(report, render)))
        for path, text in rendered:
            if path is None:
                run.stdout.append(text)
            else:
                write_atomically(path, text)
        for (path, _), case in zip(checked, report.cases):
            if path in cells_files:
                run.messages.append(_write_cells_file(path, case, cells_files[path], registry,
                                                      options.memory_limit))
    return run


def _cells_file_names(cells_out: str | None, paths: list[str]) -> dict[str, Path]:
    """Case file -> its cells file: ``cells_out`` itself for one case, else
    ``<stem>-<case file stem>.vtu`` beside it (the case files' folders told apart where
    two share a name)."""
    if cells_out is None:
        return {}
    target = Path(cells_out)
    if len(paths) == 1:
        return {paths[0]: target}
    stems = [Path(p).stem for p in paths]
    names = [s if stems.count(s) == 1 else f"{Path(p).parent.name}-{s}"
             for s, p in zip(stems, paths)]
    return {p: target.with_name(f"{target.stem}-{n}{target.suffix or '.vtu'}")
            for p, n in zip(paths, names)}


def _write_cells_file(path: str, case: "CaseReport", target: Path, registry: "Registry",
                      memory_limit) -> str:
    """Read the case's mesh again and write the cells its findings name; a message."""
    import functools

    from caselint.api import load_case, load_case_mesh
    from caselint.mesh import read_mesh
    from caselint.report.cells_file import write_cells_file

    loaded = load_case(path, registry=registry)
    mesh = load_case_mesh(loaded, functools.partial(read_mesh, memory_limit=memory_limit),
                          tuple(registry.mesh_readers.values()))
    count = write_cells_file(target, mesh, case.findings, loaded.mesh.scale_to_m)
    return f"wrote cells file {target} ({count} named by the findings)"
