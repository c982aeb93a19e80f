"""The ``caselint`` command line: parse, call the library, print, map to an exit code.

The commands themselves live in :mod:`caselint.cli_commands`. This module owns the
argument parser and the one place where errors become messages and exit codes:

- 0 nothing at or above the fail level; 1 findings at or above it;
- 2 bad input or usage (``caselint: error: ...`` on stderr, never a traceback);
- 3 an internal error (one line asking for a bug report; the traceback only with
  ``CASELINT_DEBUG=1``).
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from typing import Sequence

from caselint import __version__
from caselint import cli_commands as commands
from caselint.allocator import tune_allocator
from caselint.errors import ExitCode, UsageError

#: Set to 1 to print the traceback of an internal error.
DEBUG_ENV = "CASELINT_DEBUG"

_EPILOG = (
    "exit codes: 0 nothing at or above the fail level, 1 findings at or above it, "
    "2 bad input or usage, 3 internal error. Colour only on a terminal; NO_COLOR turns it off."
)


def _block_option(parser: argparse.ArgumentParser, dest: str, default: object) -> None:
    """``--no-plugin NAME``: do not load the plugin NAME (a built-in module or an installed
    pack). The old spelling ``-p no:NAME`` is refused with a message giving the new one."""
    parser.add_argument(
        "--no-plugin", dest=dest, action="append", default=default, metavar="NAME",
        help="do not load plugin NAME (repeatable); `caselint plugins` lists the names",
    )
    parser.add_argument("-p", dest=f"{dest}_old", action="append", type=_old_block_option,
                        default=argparse.SUPPRESS, help=argparse.SUPPRESS)


def _old_block_option(value: str) -> str:
    name = value[3:] if value.startswith("no:") else value
    raise argparse.ArgumentTypeError(f"-p {value} is no longer an option; block a plugin with "
                                     f"--no-plugin {name or 'NAME'}")


def _report_options(parser: argparse.ArgumentParser, *, demo: bool = False) -> None:
    """Options shared by ``check`` and ``demo``: formats, output files, fail level, baseline."""
    parser.add_argument("--format", action="append", metavar="NAME",
                        help="output format: text (default), json, sarif, junit, markdown, html, "
                             "or one a plugin adds; repeatable, each paired in order with an "
                             "--output")
    parser.add_argument("--output", "-o", action="append", metavar="FILE",
                        help="write the report in the matching --format to FILE (replaced "
                             "atomically); '-' is stdout; without --output one format goes to "
                             "stdout")
    parser.add_argument("--stamp", action="store_true",
                        help="print today's date in the markdown and html sign-off checklists "
                             "(left out otherwise, so reports stay reproducible)")
    parser.add_argument("--baseline", metavar="FILE",
                        help="leave out the findings recorded in this baseline file (report "
                             "only new ones, or ones that got more severe)")
    parser.add_argument("--write-baseline", metavar="FILE",
                        help="record this run's open findings in FILE (JSON, sorted; replaced "
                             "atomically) for later --baseline runs")
    parser.add_argument("--fail-on", choices=("error", "warning"),
                        default=None if demo else "error",
                        help=("exit 1 when an unwaived finding is at or above this severity "
                              "(default for the demo: exit 0 once it has run)") if demo else
                             ("exit 1 when an unwaived finding is at or above this severity "
                              "(default: error)"))


def build_parser() -> argparse.ArgumentParser:
    """The argument parser of the ``caselint`` command and its sub-commands."""
    parser = argparse.ArgumentParser(
        prog="caselint",
        description="Check a CFD case (YAML case file and mesh) against set-up guidelines "
                    "before it is run.",
        epilog=_EPILOG,
    )
    parser.add_argument("--version", action="version", version=f"caselint {__version__}")
    _block_option(parser, "blocked_global", [])
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", required=True)

    def command(name: str, func, help_text: str) -> argparse.ArgumentParser:
        p = sub.add_parser(name, help=help_text, description=help_text, epilog=_EPILOG)
        _block_option(p, "blocked_local", argparse.SUPPRESS)
        p.set_defaults(func=func)
        return p

    check = command("check", commands.cmd_check, "check case files and report the findings")
    check.add_argument("cases", nargs="+", metavar="CASE",
                       help="case file (YAML), or a folder: every case.yaml, case.yml and "
                            "*.caselint.yaml below it (hidden folders skipped)")
    _report_options(check)
    check.add_argument("--rule-set", action="append", metavar="NAME",
                       help="use rule set NAME, or the rule-set YAML file at a path (relative "
                            "to the current folder), instead of those the case files name "
                            "(repeatable)")
    check.add_argument("--jobs", "-j", type=int, default=1, metavar="N",
                       help="check N case files at once, in parallel processes (default 1); "
                            "cases sharing a mesh go to one process, which reads it once")
    check.add_argument("--scheduler", metavar="ADDRESS",
                       help="check the case files on the Dask distributed scheduler at "
                            "ADDRESS (e.g. tcp://10.0.0.5:8786); with --partitions, the "
                            "partitions of each mesh run there instead; needs "
                            "dask[distributed]")
    check.add_argument("--partitions", metavar="N",
                       help="analyse each mesh in N partitions of neighbouring cells (or "
                            "'auto': the processor folders of a decomposed case, else parts "
                            "of at most 1M cells); results are identical to the whole-mesh "
                            "analysis")
    check.add_argument("--no-cache", action="store_true",
                       help="neither read nor write the mesh cache (analysed meshes of 100k "
                            "cells or more, kept by file hash in $CASELINT_CACHE_DIR, default "
                            "~/.cache/caselint); CASELINT_CACHE_DIR=off turns every cache "
                            "off")
    check.add_argument("--cells-out", metavar="FILE.vtu",
                       help="also write the cells and faces the findings name as a VTK "
                            "file (rule, severity and measured value as cell data, in the "
                            "mesh's own coordinates and ids) to open over the mesh in a "
                            "post-processor; with several case files, one file each, named "
                            "FILE-<case file name>.vtu")
    check.add_argument("--memory-limit", metavar="SIZE",
                       help="refuse a mesh whose check would need more memory than SIZE "
                            "(e.g. 8GB, 512MiB; 'off' for no limit; default: "
                            "$CASELINT_MEMORY_LIMIT, else 85%% of the available memory)")

    demo = command("demo", commands.cmd_demo, "check the example case shipped with caselint")
    _report_options(demo, demo=True)

    command("rules", commands.cmd_rules, "list the rules with their default limits and sources")
    explain = command("explain", commands.cmd_explain,
                      "explain one rule: what it measures, why, its limits and parameters")
    explain.add_argument("rule", metavar="RULE", help="rule id, as listed by `caselint rules`")

    schema = command("schema", commands.cmd_schema, "print the JSON Schema of the case file")
    schema.add_argument("--report", action="store_true",
                        help="print the JSON Schema of `--format json` reports instead")
    command("plugins", commands.cmd_plugins,
            "list the loaded plugins, their distributions and what each adds")

    mesh = command("mesh", commands.cmd_mesh,
                   "summarise a mesh: size, cell types, boundary groups, quality spread")
    mesh.add_argument("mesh", metavar="MESH",
                      help="mesh file or mesh folder (see the formats in the README)")
    mesh.add_argument("--units", choices=sorted(commands.LENGTH_UNITS), default="m",
                      help="length unit of the mesh coordinates (default: m)")
    mesh.add_argument("--format", choices=("text", "json"), default="text",
                      help="output format (default: text)")

    init = command("init", commands.cmd_init, "write a starter case file for a mesh")
    init.add_argument("mesh", metavar="MESH", help="mesh file or folder the case will use")
    init.add_argument("--output", "-o", metavar="FILE",
                      help="case file to write (default: case.yaml beside the mesh; - for "
                           "stdout); an existing file is never overwritten")

    from caselint import grid_study_command  # light: numpy loads only when the command runs

    grid = command("grid-study", grid_study_command.cmd_grid_study, grid_study_command.HELP)
    grid_study_command.add_arguments(grid)
    return parser


def _exit_status(code: object) -> int:
    """argparse's SystemExit code as an int: help and --version give 0, errors 2."""
    if code is None:
        return ExitCode.OK
    return code if isinstance(code, int) else ExitCode.USAGE


def _internal_error(exc: BaseException) -> int:
    """One line asking for a bug report; the traceback only when CASELINT_DEBUG=1."""
    text = " ".join(str(exc).split()) or "(no message)"
    commands.message(f"internal error: {type(exc).__name__}: {text}; please report this as "
                     f"a bug with the command you ran (set {DEBUG_ENV}=1 for the traceback)")
    if os.environ.get(DEBUG_ENV, "") not in ("", "0"):
        commands.emit(sys.stderr, "".join(traceback.format_exception(exc)))
    return ExitCode.INTERNAL


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line with ``argv`` (default: ``sys.argv[1:]``) and return its exit code."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:
        return _exit_status(exc.code)
    args.blocked = list(args.blocked_global) + list(getattr(args, "blocked_local", []))
    tune_allocator()      # this process is ours: allocator settings for big meshes
    previous = _on_sigterm(_terminate)
    try:
        return int(args.func(args))
    except UsageError as exc:
        commands.message(f"error: {exc}")
        return ExitCode.USAGE
    except KeyboardInterrupt:
        commands.message("interrupted")
        return 130  # the shell's convention for SIGINT
    except _Terminated:
        commands.message("terminated")
        return 143  # 128 + SIGTERM, as the shell reports it
    except BrokenPipeError:
        # The reader (head, less) went away. Point stdout at devnull so the interpreter's
        # final flush stays quiet; the report was not delivered, so do not claim success.
        try:
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        except (AttributeError, OSError, ValueError):
            pass
        return ExitCode.FINDINGS
    except Exception as exc:  # the boundary: anything unexpected becomes exit 3
        return _internal_error(exc)
    finally:
        _on_sigterm(previous)


class _Terminated(BaseException):
    """SIGTERM arrived (a CI job's time-out, a kill): raised in the main thread so that the
    ``finally`` blocks run, a streamed check's scratch folder among them."""


def _terminate(signum, frame) -> None:
    raise _Terminated()


def _on_sigterm(handler):
    """Install ``handler`` for SIGTERM and return the one it replaces (None where signals
    cannot be set: not the main thread, no SIGTERM on the platform)."""
    import signal

    if handler is None or not hasattr(signal, "SIGTERM"):
        return None
    try:
        return signal.signal(signal.SIGTERM, handler)
    except ValueError:            # not the main thread of the main interpreter
        return None


if __name__ == "__main__":
    sys.exit(main())
