"""What each ``caselint`` command does, once :mod:`caselint.cli` has parsed its arguments.

Each command takes the parsed arguments, calls the library, writes results to stdout and
messages to stderr, and returns an exit code. Library errors are not caught here: a
:class:`caselint.errors.UsageError` travels up to :func:`caselint.cli.main`, which prints
it and exits 2.
"""

from __future__ import annotations

import argparse
import contextlib
import difflib
import json
import os
import shutil
import sys
import tempfile
from pathlib import Path
from typing import TYPE_CHECKING, Callable, Iterable, TextIO

from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from caselint.errors import ExitCode, UsageError
from caselint.model import SEVERITY_RANK, Limits, Report, Rule
from caselint.report.base import RenderOptions, Reporter

if TYPE_CHECKING:
    import pluggy

#: Width of text written to a file or a pipe when ``COLUMNS`` does not say otherwise.
DEFAULT_WIDTH = 100

# -- terminal output -------------------------------------------------------------------


def _is_terminal(stream: TextIO) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):  # no isatty, or already closed
        return False


def use_color(stream: TextIO) -> bool:
    """Colour only on a terminal, and never when ``NO_COLOR`` is set to a non-empty value."""
    return os.environ.get("NO_COLOR", "") == "" and _is_terminal(stream)


def output_width(stream: TextIO) -> int:
    """``COLUMNS`` when set, else the terminal's width on a TTY, else :data:`DEFAULT_WIDTH`."""
    columns = os.environ.get("COLUMNS", "")
    if columns.isdigit() and int(columns) >= 40:
        return int(columns)
    if _is_terminal(stream):
        return max(40, shutil.get_terminal_size((DEFAULT_WIDTH, 24)).columns)
    return DEFAULT_WIDTH


def emit(stream: TextIO, text: str) -> None:
    """Write text ending in a newline; characters the stream cannot encode are escaped."""
    if not text.endswith("\n"):
        text += "\n"
    encoding = getattr(stream, "encoding", None)
    if encoding:
        # A console set to a legacy code page must not turn a report into a traceback.
        text = text.encode(encoding, errors="backslashreplace").decode(encoding)
    stream.write(text)
    stream.flush()


def message(text: str) -> None:
    """A one-line message for the user, on stderr (control characters from inputs escaped)."""
    from caselint.errors import printable

    emit(sys.stderr, f"caselint: {printable(text, keep=chr(10))}")


def render_rich(draw: Callable[[Console, bool], None]) -> str:
    """Draw with rich for stdout (colour and width as for the report) and return the text."""
    from io import StringIO

    color = use_color(sys.stdout)
    out = StringIO()
    console = Console(file=out, force_terminal=color, no_color=not color,
                      color_system="standard" if color else None, width=output_width(sys.stdout),
                      highlight=False, emoji=False, markup=False, legacy_windows=False)
    draw(console, not color)
    return "\n".join(line.rstrip() for line in out.getvalue().splitlines()) + "\n"


def _table(plain: bool, *columns: str) -> Table:
    """A table with ASCII borders when plain, light rules otherwise."""
    table = Table(box=box.ASCII2 if plain else box.SIMPLE_HEAD, header_style="bold")
    for column in columns:
        table.add_column(column)
    return table


def write_atomically(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file in the same folder and a rename.

    A reader never sees a half-written report, and an interrupted run leaves the old file.
    """
    if not path.parent.is_dir():
        raise UsageError(f"cannot write {path}: folder {path.parent} does not exist")
    if path.is_dir():
        raise UsageError(f"cannot write {path}: it is a folder")
    umask = os.umask(0)
    os.umask(umask)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    except OSError as exc:
        raise UsageError(f"cannot write {path}: {exc.strerror}") from exc
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as handle:
            handle.write(text)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; a report is an ordinary file
        os.replace(tmp, path)
    except BaseException as exc:
        # Whatever stopped the write (a full disk, Ctrl-C, text that cannot be encoded),
        # no temporary file is left beside the report.
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        if isinstance(exc, OSError):
            raise UsageError(f"cannot write {path}: {exc.strerror or exc}") from exc
        raise


# -- plugins and formats ---------------------------------------------------------------


def plugin_manager(args: argparse.Namespace) -> "pluggy.PluginManager":
    """The plugin manager with the plugins named by ``-p no:NAME`` blocked."""
    from caselint.engine.plugins import get_plugin_manager

    return get_plugin_manager(blocked=tuple(args.blocked))


def did_you_mean(name: str, known: Iterable[str]) -> str:
    """`` (did you mean 'x'?)`` for the closest known name, or an empty string."""
    close = difflib.get_close_matches(name, list(known), n=1)
    return f" (did you mean {close[0]!r}?)" if close else ""


def pick_reporter(pm: "pluggy.PluginManager", name: str) -> Reporter:
    """The output format called ``name``; a usage error listing the known ones otherwise."""
    from caselint.engine.registry import collect_reporters

    reporters = collect_reporters(pm)
    if name not in reporters:
        raise UsageError(f"unknown output format {name!r}{did_you_mean(name, reporters)}; "
                         f"available: {', '.join(reporters) or 'none'}")
    return reporters[name]


# -- check and demo --------------------------------------------------------------------


def fails(report: Report, fail_on: str) -> bool:
    """True when an open finding is at or above ``fail_on``, or a rule could not run."""
    threshold = SEVERITY_RANK[fail_on]
    for case in report.cases:
        if any(c.outcome == "error" for c in case.checks):
            return True
        if any(not f.waived and SEVERITY_RANK[f.severity] >= threshold for f in case.findings):
            return True
    return False


def _same_file(a: Path, b: Path) -> bool:
    """Whether two paths name the same file (after resolving links and ``..``)."""
    return a.resolve() == b.resolve()


def mesh_input_folders(mesh: Path) -> list[Path]:
    """A mesh file, or the folders holding the files a mesh folder is read from."""
    if not mesh.is_dir():
        return [mesh]
    from caselint.mesh.readers import mesh_files

    return sorted({file.parent for file in mesh_files(mesh)}) or [mesh]


def _protect_inputs(path: Path, what: str, inputs: list[Path], kind: str) -> None:
    """Refuse to write a report or baseline over an input file, or into an input folder
    (a mesh folder)."""
    if any(_same_file(path, p) or (p.is_dir() and path.resolve().is_relative_to(p.resolve()))
           for p in inputs):
        raise UsageError(f"{what} {path} is {kind}; caselint never overwrites its inputs")


def run_check(args: argparse.Namespace, paths: list[str]) -> int:
    """Lint each case file, report the ones that could be read, and pick the exit code.

    Folders expand to the case files below them; each ``--format`` is rendered and written
    to its ``--output``; ``--baseline`` leaves out known findings, ``--write-baseline``
    records this run's.
    """
    import datetime as dt

    from caselint.api import build_report
    from caselint.baseline import apply_baseline, baseline_text, load_baseline
    from caselint.manifest.discovery import expand_case_paths
    from caselint.report.outputs import pair_outputs

    pm = plugin_manager(args)
    targets = [(pick_reporter(pm, d.format), d.path)
               for d in pair_outputs(args.format, args.output)]
    paths = expand_case_paths(paths)
    written = [(p, "--output") for _, p in targets if p is not None]
    if args.write_baseline:
        written.append((Path(args.write_baseline), "--write-baseline"))
    for path, option in written:
        _protect_inputs(path, option, [Path(p) for p in paths], "one of the case files")
    baseline = load_baseline(args.baseline) if args.baseline else None
    rule_sets = tuple(args.rule_set or ())
    checked, bad_input = [], False
    for outcome in _lint_all(args, paths, rule_sets, pm):
        if outcome.error is not None:
            # One bad case file must not hide the findings of the others.
            message(f"error: {outcome.error}")
            bad_input = True
        else:
            checked.append((outcome.path, outcome.report))
    cases = tuple(case for _, case in checked)
    # CaseReport.mesh is relative to the case file's folder.
    meshes = [Path(path).parent / case.mesh for path, case in checked if case.mesh]
    meshes = [folder for mesh in meshes for folder in mesh_input_folders(mesh)]
    for path, option in written:
        _protect_inputs(path, option, meshes, "a mesh file of a case")
    report = build_report(cases, pm, rule_sets)
    if args.write_baseline:
        if bad_input:
            message(f"baseline {args.write_baseline} not written: a case file could not be "
                    "checked, so the baseline would miss its findings")
        else:
            text = baseline_text(report)
            write_atomically(Path(args.write_baseline), text)
            count = len(json.loads(text)["findings"])
            message(f"wrote baseline {args.write_baseline} ({count} open finding"
                    f"{'' if count == 1 else 's'})")
    if baseline is not None:
        report = apply_baseline(report, baseline)
        hidden = sum(case.baselined for case in report.cases)
        message(f"{hidden} known finding{'' if hidden == 1 else 's'} left out (recorded in "
                f"baseline {baseline.path})")
    if cases or not bad_input:
        stamp = dt.date.today().isoformat() if args.stamp else ""
        rendered = []
        for reporter, path in targets:  # render every format before writing any
            if path is None:
                options = RenderOptions(color=use_color(sys.stdout),
                                        width=output_width(sys.stdout), fail_on=args.fail_on,
                                        stamp=stamp)
            else:
                options = RenderOptions(color=False, width=DEFAULT_WIDTH, fail_on=args.fail_on,
                                        stamp=stamp)
            rendered.append((path, reporter.render(report, options)))
        for path, text in rendered:
            if path is None:
                emit(sys.stdout, text)
            else:
                write_atomically(path, text)
    if bad_input:
        return ExitCode.USAGE
    return ExitCode.FINDINGS if fails(report, args.fail_on) else ExitCode.OK


def _lint_all(args: argparse.Namespace, paths: list[str], rule_sets: tuple[str, ...],
              pm: "pluggy.PluginManager") -> list:
    """Check the case files (``--jobs``, ``--scheduler``, mesh cache), in the order given.

    A progress bar goes to stderr when it is a terminal and there is more than one case.
    """
    from caselint.batch import lint_batch
    from caselint.cache import MeshCache, cache_dir

    jobs, scheduler = getattr(args, "jobs", 1), getattr(args, "scheduler", None)
    if scheduler is not None and jobs != 1:
        raise UsageError("give either --jobs or --scheduler, not both (the scheduler's "
                         "workers decide how many cases run at once)")
    folder = None if getattr(args, "no_cache", True) else cache_dir()
    cache = None if folder is None else MeshCache(folder)
    options = dict(rule_sets=rule_sets or None, pm=pm, blocked=tuple(args.blocked), jobs=jobs,
                   scheduler=scheduler, cache=cache)
    if len(paths) < 2 or not _is_terminal(sys.stderr):
        return lint_batch(paths, **options)
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeElapsedColumn

    console = Console(file=sys.stderr, no_color=not use_color(sys.stderr))
    with Progress("checking", BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
                  console=console, transient=True) as bar:
        task = bar.add_task("cases", total=len(paths))
        return lint_batch(paths, progress=lambda n: bar.advance(task, n), **options)


def cmd_check(args: argparse.Namespace) -> int:
    """``caselint check``: lint the case files given."""
    from caselint.mesh.limits import limit_option

    with limit_option(getattr(args, "memory_limit", None)):
        return run_check(args, list(args.cases))


def cmd_demo(args: argparse.Namespace) -> int:
    """``caselint demo``: lint the example case shipped with caselint."""
    from caselint.demo import demo_case_path

    path = demo_case_path()
    message(f"checking the shipped example case {path}")
    args.rule_set = None
    if args.fail_on is not None:
        return run_check(args, [str(path)])
    # The demo's findings are built in on purpose; it succeeds when it has shown them.
    args.fail_on = "error"
    code = run_check(args, [str(path)])
    return ExitCode.OK if code == ExitCode.FINDINGS else code


# -- rules, explain, plugins -----------------------------------------------------------


def _limit_text(rule: Rule, value: float | None) -> str:
    """``> 1.3`` for a maximum, ``< 0.2`` for a minimum, ``off`` for a disabled grade."""
    from caselint.report.text import format_number

    if value is None:
        return "off"
    return f"{'>' if rule.worse == 'higher' else '<'} {format_number(value)}"


def cmd_rules(args: argparse.Namespace) -> int:
    """``caselint rules``: every registered rule with its default limits and source."""
    from caselint.engine.registry import collect_rules

    rules = collect_rules(plugin_manager(args))

    def draw(console: Console, plain: bool) -> None:
        table = _table(plain, "Rule", "Warning", "Error", "Unit", "Title")
        table.columns[0].no_wrap = True
        for rule in rules.values():
            per_case = (rule.limits.warn is None and rule.limits.error is None
                        and bool(rule.parameters))
            warn, error = (("per case", "per case") if per_case else
                           (_limit_text(rule, rule.limits.warn),
                            _limit_text(rule, rule.limits.error)))
            table.add_row(rule.id, warn, error, rule.unit, rule.title)
        console.print(table)
        count = f"{len(rules)} rule{'' if len(rules) == 1 else 's'}"
        console.print(f"{count}; `caselint explain RULE` gives the rationale, source and "
                      "parameters of one.")

    emit(sys.stdout, render_rich(draw))
    return ExitCode.OK


def _limits_sentence(rule: Rule, limits: Limits) -> str:
    """``warning above 1.3; error above 2`` with the unit, or why there are none."""
    from caselint.report.text import format_number

    word = "above" if rule.worse == "higher" else "below"
    parts = [f"{grade} {word} {format_number(value)}{(' ' + rule.unit) if rule.unit else ''}"
             for grade, value in (("warning", limits.warn), ("error", limits.error))
             if value is not None]
    if parts:
        return "; ".join(parts)
    if rule.parameters:
        return "chosen per case from the parameters below"
    return "none (the rule only reports its measurement)"


def cmd_explain(args: argparse.Namespace) -> int:
    """``caselint explain RULE``: what a rule measures, why, its limits, parameters and source."""
    from caselint.engine.registry import collect_rules, rule_origins

    pm = plugin_manager(args)
    rules = collect_rules(pm)
    rule = rules.get(args.rule)
    if rule is None:
        raise UsageError(f"unknown rule {args.rule!r}{did_you_mean(args.rule, rules)}; "
                         "`caselint rules` lists the rules")
    origin = rule_origins(pm).get(rule.id, "")
    dist = getattr(pm, "distributions", {}).get(origin)
    provided = f"{origin} ({dist[0]} {dist[1]})".strip() if dist else origin

    def draw(console: Console, plain: bool) -> None:
        console.print(Text().append(rule.id, "bold").append(f": {rule.title}"))
        console.print()
        console.print(rule.rationale)
        console.print()
        grid = Table.grid(padding=(0, 2))
        grid.add_column(no_wrap=True, style="bold")
        grid.add_column(ratio=1)
        grid.add_row("measures", rule.measures or rule.title)
        grid.add_row("unit", rule.unit or "(dimensionless)")
        grid.add_row("worse when", "higher (limits are maxima)" if rule.worse == "higher"
                     else "lower (limits are minima)")
        grid.add_row("default limits", _limits_sentence(rule, rule.limits))
        grid.add_row("case data needed", ", ".join(rule.needs) or "none")
        grid.add_row("fix hint", rule.hint)
        grid.add_row("source", rule.source)
        grid.add_row("provided by", provided or "(unknown plugin)")
        console.print(grid)
        console.print()
        if rule.parameters:
            table = _table(plain, "Parameter", "Default", "Unit", "Meaning")
            for p in rule.parameters:
                table.add_row(p.name, str(p.default), p.unit, p.description)
            console.print(table)
        else:
            console.print("Parameters: none beyond the warning and error limits.")

    emit(sys.stdout, render_rich(draw))
    return ExitCode.OK


def cmd_plugins(args: argparse.Namespace) -> int:
    """``caselint plugins``: the plugins loaded, their distributions and what each adds."""
    from caselint.engine.plugins import plugin_listing

    pm = plugin_manager(args)
    rows = plugin_listing(pm)

    def draw(console: Console, plain: bool) -> None:
        table = _table(plain, "Plugin", "Distribution", "Registers")
        for row in rows:
            adds = [f"{kind.replace('_', ' ')}: {', '.join(row[kind])}"
                    for kind in ("rules", "rule_sets", "case_sections", "reporters",
                                 "mesh_readers")
                    if row.get(kind)]
            dist = f"{row['distribution']} {row['version']}".strip()
            table.add_row(row["name"], dist,
                          "\n".join(adds) or "(no rules, rule sets, formats or readers)")
        console.print(table)
        if args.blocked:
            console.print(f"Blocked: {', '.join(sorted(set(args.blocked)))}")

    emit(sys.stdout, render_rich(draw))
    return ExitCode.OK


# -- schema, mesh, init ----------------------------------------------------------------


def cmd_schema(args: argparse.Namespace) -> int:
    """``caselint schema``: the case-file JSON Schema (or, with --report, the report's)."""
    if args.report:
        from caselint.report.json_report import report_schema_text

        text = report_schema_text()
    else:
        from caselint.manifest.schema import schema_text

        text = schema_text()
    emit(sys.stdout, text)
    return ExitCode.OK


#: Length units accepted by ``caselint mesh --units``, as metres per unit.
LENGTH_UNITS: dict[str, float] = {
    "m": 1.0, "dm": 0.1, "cm": 0.01, "mm": 1e-3, "um": 1e-6, "km": 1e3,
    "in": 0.0254, "ft": 0.3048,
}


def cmd_mesh(args: argparse.Namespace) -> int:
    """``caselint mesh``: size, cell types, boundary groups and quality spread of a mesh."""
    from caselint.mesh.summary import mesh_summary, render_summary_text

    summary = mesh_summary(args.mesh, LENGTH_UNITS[args.units])
    if args.format == "json":
        text = json.dumps(summary, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False)
    else:
        text = render_summary_text(summary, use_color(sys.stdout), output_width(sys.stdout))
    emit(sys.stdout, text)
    return ExitCode.OK


def cmd_init(args: argparse.Namespace) -> int:
    """``caselint init``: write a starter case file for a mesh, never over an existing file."""
    out = Path(args.output) if args.output else None
    if out is not None and (out.exists() or out.is_symlink()):
        raise UsageError(f"{out} already exists; caselint init never overwrites a file "
                         "(give another name with --output)")
    from caselint.manifest.starter import write_starter

    # Without --output the starter goes beside the mesh; write_starter refuses to overwrite.
    written = write_starter(Path(args.mesh), out)
    message(f"wrote {written}; complete it for your case, then run `caselint check {written}`")
    return ExitCode.OK
