"""Pairing ``--format`` and ``--output`` options: which format goes to which destination.

``--format`` and ``--output`` repeat and pair in order, so one run can write several
reports: ``--format sarif -o r.sarif --format junit -o r.xml``. One ``--format`` without
``--output`` goes to stdout, as does ``-o -``; one ``--output`` without ``--format`` gets
the text report. Anything else that does not pair up is a usage error.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from pathlib import Path

from caselint.errors import UsageError

#: ``--output`` value meaning standard output.
STDOUT = "-"


@dataclass(frozen=True)
class Destination:
    """One report to write: the format's name and the file (None for stdout)."""

    format: str
    path: Path | None


def pair_outputs(formats: list[str] | None, outputs: list[str] | None) -> list[Destination]:
    """Pair the ``--format`` and ``--output`` options given, in order.

    :raises UsageError: the counts do not pair up, two reports go to stdout, or two go to
        the same file.
    """
    formats, outputs = list(formats or []), list(outputs or [])
    if not formats:
        formats = ["text"] * max(1, len(outputs))
        if len(outputs) > 1:
            raise UsageError(f"{len(outputs)} --output options but no --format: give one "
                             "--format per --output")
    if not outputs and len(formats) == 1:
        outputs = [STDOUT]
    if len(formats) != len(outputs):
        raise UsageError(f"{len(formats)} --format options but {len(outputs)} --output "
                         "options: give one --output per --format, in the same order "
                         f"('--output {STDOUT}' is stdout)")
    if outputs.count(STDOUT) > 1:
        raise UsageError("only one report can go to stdout ('--output -')")
    seen: dict[str, str] = {}
    pairs = []
    for name, out in zip(formats, outputs):
        if out == STDOUT:
            pairs.append(Destination(name, None))
            continue
        key = os.path.normcase(os.path.abspath(out))
        if key in seen:
            raise UsageError(f"--output {out} is given twice (for --format {seen[key]} and "
                             f"--format {name})")
        seen[key] = name
        pairs.append(Destination(name, Path(out)))
    return pairs
