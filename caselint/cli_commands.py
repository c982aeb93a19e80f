"""What each ``caselint`` command does, once :mod:`caselint.cli` has parsed its arguments.

Each command takes the parsed arguments, calls the library, writes results to stdout and
messages to stderr, and returns an exit code. Library errors are not caught here: a
:class:`caselint.errors.UsageError` travels up to :func:`caselint.cli.main`, which prints
it and exits 2.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import shutil
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Callable, TextIO

from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from caselint.errors import ExitCode, UsageError
from caselint.model import Limits, Rule

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


# -- plugins and formats ---------------------------------------------------------------


def plugin_manager(args: argparse.Namespace) -> "pluggy.PluginManager":
    """The plugin manager with the plugins named by ``--no-plugin NAME`` blocked."""
    from caselint.engine.plugins import get_plugin_manager

    return get_plugin_manager(blocked=tuple(args.blocked))


# -- check and demo --------------------------------------------------------------------


def _memory_limit(args: argparse.Namespace) -> tuple[int | None, str]:
    """``--memory-limit``, else ``CASELINT_MEMORY_LIMIT``, else the library's default."""
    from caselint.mesh.limits import ENV_LIMIT, memory_limit

    given = getattr(args, "memory_limit", None)
    if given is not None:
        return memory_limit(given, "--memory-limit")
    return memory_limit(os.environ.get(ENV_LIMIT), ENV_LIMIT)


@contextlib.contextmanager
def _progress_bar(total: int, label: str = "checking"):
    """A progress bar on stderr while the case files are checked, when it is a terminal."""
    if not _is_terminal(sys.stderr):
        yield lambda n: None
        return
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TimeElapsedColumn

    console = Console(file=sys.stderr, no_color=not use_color(sys.stderr))
    with Progress(label, BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
                  console=console, transient=True) as bar:
        task = bar.add_task(label, total=total)
        yield lambda n: bar.advance(task, n)


@contextlib.contextmanager
def _stream_progress(note: str, steps: int):
    """A streamed mesh (:mod:`caselint.partition.streaming`): the note once on stderr, and
    a progress bar of its steps when stderr is a terminal."""
    from caselint.allocator import tune_for_streaming

    tune_for_streaming()            # this process is ours: freed memory back to the kernel
    message(f"note: {note}")
    with _progress_bar(steps, "streaming") as advance:
        yield advance


def run_check(args: argparse.Namespace, paths: list[str]) -> int:
    """Run the check pipeline (:func:`caselint.pipeline.run_check`), print what it produced
    and pick the exit code."""
    import datetime as dt

    from caselint.pipeline import CheckOptions
    from caselint.pipeline import run_check as check

    options = CheckOptions(
        paths=tuple(paths), formats=tuple(args.format or ()), outputs=tuple(args.output or ()),
        fail_on=args.fail_on, rule_sets=tuple(args.rule_set or ()), baseline=args.baseline,
        write_baseline=args.write_baseline,
        stamp=dt.date.today().isoformat() if args.stamp else "",
        jobs=getattr(args, "jobs", 1), scheduler=getattr(args, "scheduler", None),
        partitions=getattr(args, "partitions", None),
        use_cache=not getattr(args, "no_cache", True), memory_limit=_memory_limit(args),
        blocked=tuple(args.blocked), stdout_color=use_color(sys.stdout),
        stdout_width=output_width(sys.stdout), progress=_progress_bar,
        on_stream=_stream_progress, cells_out=getattr(args, "cells_out", None))
    run = check(options)
    for text in run.messages:
        message(text)
    for text in run.stdout:
        emit(sys.stdout, text)
    if run.bad_input:
        return ExitCode.USAGE
    return ExitCode.FINDINGS if run.failed else ExitCode.OK


def cmd_check(args: argparse.Namespace) -> int:
    """``caselint check``: lint the case files given."""
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
    from caselint.engine.registry import Registry

    rules = Registry(plugin_manager(args)).rules

    def draw(console: Console, plain: bool) -> None:
        table = _table(plain, "Rule", "Warning", "Error", "Unit", "Title")
        table.columns[0].no_wrap = True
        for rule in rules.values():
            per_case = (rule.limits.warn is None and rule.limits.error is None
                        and (bool(rule.parameters) or rule.main_description != ""))
            warn, error = (("per case", "per case") if per_case else
                           (_limit_text(rule, rule.limits.warn),
                            _limit_text(rule, rule.limits.error)))
            table.add_row(rule.id, warn, error, rule.unit, rule.title)
        console.print(table)
        count = f"{len(rules)} rule{'' if len(rules) == 1 else 's'}"
        console.print(f"{count}; the limits are those of each rule's main grade; `caselint "
                      "explain RULE` gives the rationale, source, every grade and the "
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
        return "; ".join(parts) + f" (grade {rule.main_grade})"
    if rule.main_description:
        return f"chosen per case (grade {rule.main_grade}: {rule.main_description})"
    if rule.parameters:
        return "chosen per case from the parameters below"
    return "none (the rule only reports its measurement)"


def _grade_rows(rule: Rule) -> list[tuple[str, ...]]:
    """One row per grade: name, what it judges, warning, error, unit, source."""
    from caselint.engine.extent import place_words

    rows = []
    for grade in rule.all_grades:
        worse = grade.worse or rule.worse
        unit = grade.unit if grade.unit is not None else rule.unit
        sign = ">" if worse == "higher" else "<"
        judges = grade.description
        if grade.places:
            judges = ("share beyond the quality limit" if grade.share else "worst value") + \
                f" {place_words(grade.places)}"
            if grade.share:
                beyond = "main warning limit" if grade.beyond is None else f"{grade.beyond:g}"
                judges += f" (beyond: {beyond})"

        def limit(value: float | None) -> str:
            from caselint.report.text import format_number

            return "off" if value is None else f"{sign} {format_number(value)}"

        rows.append((grade.name + (" (main)" if grade.name == rule.main_grade else ""),
                     judges or "", limit(grade.warn), limit(grade.error), unit,
                     grade.source or rule.source))
    return rows


def cmd_explain(args: argparse.Namespace) -> int:
    """``caselint explain RULE``: what a rule measures, why, its grades, parameters, source."""
    from caselint.engine.entries import suggest
    from caselint.engine.needs import describe
    from caselint.engine.registry import Registry

    pm = plugin_manager(args)
    registry = Registry(pm)
    rules = registry.rules
    rule = rules.get(args.rule)
    if rule is None:
        raise UsageError(f"unknown rule {args.rule!r}{suggest(args.rule, rules)}; "
                         "`caselint rules` lists the rules")
    origin = registry.rule_origins.get(rule.id, "")
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
        grid.add_row("case data needed", ", ".join(describe(n) for n in rule.needs) or "none")
        grid.add_row("fix hint", rule.hint)
        grid.add_row("source", rule.source)
        grid.add_row("provided by", provided or "(unknown plugin)")
        console.print(grid)
        console.print()
        table = _table(plain, "Grade", "Judges", "Warning", "Error", "Unit", "Source")
        for row in _grade_rows(rule):
            table.add_row(*row)
        console.print(table)
        console.print("A rule set or case file overrides a grade by name: "
                      f"{rule.id}: {{grades: {{{rule.all_grades[-1].name}: {{warn: ...}}}}}}; "
                      "warn and error alone set the main grade.")
        console.print()
        if rule.parameters:
            table = _table(plain, "Parameter", "Default", "Unit", "Takes", "Meaning")
            for p in rule.parameters:
                table.add_row(p.name, str(p.default), p.unit, p.expected(), p.description)
            console.print(table)
        else:
            console.print("Parameters: none beyond the grades.")

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

    summary = mesh_summary(args.mesh, LENGTH_UNITS[args.units], memory_limit=_memory_limit(args))
    if args.format == "json":
        text = json.dumps(summary, sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False)
    else:
        text = render_summary_text(summary, use_color(sys.stdout), output_width(sys.stdout))
    emit(sys.stdout, text)
    return ExitCode.OK


def cmd_init(args: argparse.Namespace) -> int:
    """``caselint init``: write a starter case file for a mesh, never over an existing file."""
    if args.output == "-":
        from caselint.manifest.starter import starter_for

        # to stdout: the mesh path in it is relative to the current folder
        sys.stdout.write(starter_for(Path(args.mesh), Path.cwd()))
        return ExitCode.OK
    out = Path(args.output) if args.output else None
    if out is not None and (out.exists() or out.is_symlink()):
        raise UsageError(f"{out} already exists; caselint init never overwrites a file "
                         "(give another name with --output, or - for stdout)")
    from caselint.manifest.starter import write_starter

    # Without --output the starter goes beside the mesh; write_starter refuses to overwrite.
    written = write_starter(Path(args.mesh), out)
    message(f"wrote {written}; complete it for your case, then run `caselint check {written}`")
    return ExitCode.OK
