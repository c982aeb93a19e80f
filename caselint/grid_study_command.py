"""The ``caselint grid-study`` sub-command: its options and what it prints.

Kept apart from :mod:`caselint.cli_commands` so the parser stays light (numpy and
matplotlib are imported only when the command runs) and the command's options live beside
its logic in :mod:`caselint.grid_study`. Exit codes: 0 when the study was computed, even
when it shows divergence (that is a result, reported in words); 2 for bad input.
"""

from __future__ import annotations

import argparse
import json
import re
import sys
from pathlib import Path

from caselint.errors import ExitCode

HELP = ("discretisation error of a finished grid study: refinement ratios, apparent order, "
        "extrapolated value and GCI (Celik et al. 2008)")

#: argparse before Python 3.13 takes ``-2e-3`` for an option; this is the newer pattern.
_NEGATIVE_NUMBER = re.compile(r"-\.?\d")


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number of cells, got {text!r}")
    if value <= 0:
        raise argparse.ArgumentTypeError(f"expected a positive number of cells, got {text!r}")
    return value


def _number(text: str) -> float:
    try:
        return float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a number, got {text!r}") from None


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """The options of ``caselint grid-study``."""
    # Values such as -2e-3 must read as numbers, not options (the pattern of Python 3.13).
    if hasattr(parser, "_negative_number_matcher"):
        parser._negative_number_matcher = _NEGATIVE_NUMBER
    meshes = parser.add_argument_group("meshes, finest first (one of)")
    meshes.add_argument("--cells", nargs="+", type=_positive_int, metavar="N",
                        help="cell counts; h = (1/N)^(1/dims)")
    meshes.add_argument("--spacing", nargs="+", type=_number, metavar="H",
                        help="representative cell sizes, any one length unit")
    meshes.add_argument("--case", metavar="CASE",
                        help="case file whose grid_study.meshes are read (h = (V/N)^(1/3) in m; "
                             "sorted finest first)")
    parser.add_argument("--dims", type=int, choices=(2, 3),
                        help="with --cells: 2 for a planar mesh (default 3)")
    results = parser.add_argument_group("results, finest mesh first (one of)")
    results.add_argument("--values", nargs="+", type=_number, metavar="PHI",
                         help="the quantity on each mesh")
    results.add_argument("--table", metavar="FILE.csv",
                         help="several quantities: a header row, then one row per quantity "
                              "(label, then one value per mesh), e.g. values along a profile")
    parser.add_argument("--order", type=_number, metavar="P",
                        help="two meshes only: the assumed (formal) order; Fs = 3")
    parser.add_argument("--format", choices=("text", "json"), default="text",
                        help="output format (default: text)")
    parser.add_argument("--plot", metavar="FILE",
                        help="also draw the values against h with the extrapolated value "
                             "(.png, .svg or .pdf; replaced atomically)")


def cmd_grid_study(args: argparse.Namespace) -> int:
    """``caselint grid-study``: compute the study and print it as a table or JSON."""
    from caselint import cli_commands as commands
    from caselint.grid_study import draw_text, run_study, study_input, to_dict
    from caselint.grid_study_plot import plot_format

    plot = Path(args.plot) if args.plot else None
    if plot is not None:
        plot_format(plot)                       # a bad suffix fails before any work
    inputs = study_input(cells=args.cells, dims=args.dims, spacing=args.spacing, case=args.case,
                         values=args.values, table=args.table, order=args.order)
    study = run_study(inputs, args.order)
    if plot is not None:
        from caselint.grid_study_plot import write_plot

        protected = tuple(Path(p) for p in (args.case, args.table) if p)
        write_plot(study, plot, protected)
    if args.format == "json":
        text = json.dumps(to_dict(study), indent=2, ensure_ascii=False, allow_nan=False)
    else:
        text = commands.render_rich(lambda console, plain: draw_text(study, console, plain))
    commands.emit(sys.stdout, text)
    if plot is not None:
        commands.message(f"wrote the plot {plot}")
    return ExitCode.OK
