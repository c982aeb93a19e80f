"""The few errors caselint raises, and the exit codes the command line maps them to.

Library code raises; only :mod:`caselint.cli` prints and picks an exit code.
"""

from __future__ import annotations

import enum
import unicodedata
from dataclasses import dataclass


def printable(text: str, keep: str = "") -> str:
    """``text`` with control, format and line-separator characters escaped (``\\x1b``).

    Keys and values from an input file reach the terminal in messages: an escape sequence
    or a bidi override there must show as text, not act. Characters in ``keep`` stay.
    """
    if text.isprintable() and not keep:
        return text
    out = []
    for char in text:
        if char in keep or char.isprintable() or \
                unicodedata.category(char) not in ("Cc", "Cf", "Zl", "Zp", "Cs", "Co", "Cn"):
            out.append(char)
        else:
            out.append(char.encode("unicode_escape").decode("ascii"))
    return "".join(out)


class ExitCode(enum.IntEnum):
    """Exit codes of the ``caselint`` command."""

    #: Nothing at or above the fail level.
    OK = 0
    #: Findings at or above the fail level.
    FINDINGS = 1
    #: Bad input or usage: the message names the file, line and key.
    USAGE = 2
    #: An internal error in caselint itself.
    INTERNAL = 3


class CaselintError(Exception):
    """Base of every error caselint raises on purpose."""


class UsageError(CaselintError):
    """The command line or an input file is wrong in a way the user can fix."""


@dataclass
class CaseFileError(UsageError):
    """An error in a case file or rule set, with where it is and what was expected.

    ``line`` and ``column`` are 1-based; ``key`` is the dotted key path
    (``physics.fluid.density``), empty for the document itself.
    """

    file: str
    message: str
    line: int | None = None
    column: int | None = None
    key: str = ""

    def __post_init__(self) -> None:
        super().__init__(str(self))

    def __str__(self) -> str:
        where = self.file
        if self.line is not None:
            where += f":{self.line}"
            if self.column is not None:
                where += f":{self.column}"
        key = f" [{printable(self.key)}]" if self.key else ""
        return f"{where}:{key} {self.message}"


#: Most problems of one file reported in one run; the rest are counted.
MAX_REPORTED_PROBLEMS = 20


@dataclass
class CaseFileErrors(CaseFileError):
    """Every problem found in one file, reported together (see :meth:`of`).

    The fields of :class:`CaseFileError` are those of the first problem by line, so code
    that reads one error still finds the first; ``problems`` holds them all, in line
    order, at most :data:`MAX_REPORTED_PROBLEMS`; ``more`` counts those left out.
    """

    problems: tuple[CaseFileError, ...] = ()
    more: int = 0

    @classmethod
    def of(cls, problems: "list[CaseFileError]") -> CaseFileError:
        """One error for ``problems`` (at least one): itself when there is only one."""
        unique = list({str(e): e for e in reversed(problems)}.values())[::-1]
        unique.sort(key=lambda e: (e.line or 0, e.column or 0, e.key, e.message))
        if len(unique) == 1:
            return unique[0]
        first = unique[0]
        return cls(first.file, first.message, first.line, first.column, first.key,
                   problems=tuple(unique[:MAX_REPORTED_PROBLEMS]),
                   more=max(0, len(unique) - MAX_REPORTED_PROBLEMS))

    def __str__(self) -> str:
        count = len(self.problems) + self.more
        lines = [f"{self.file}: {count} problems"]
        # one line each: a key or value quoted in a message may hold a line break
        lines += [f"  {printable(str(problem))}" for problem in self.problems]
        if self.more:
            lines.append(f"  ... and {self.more} more (the first {len(self.problems)} are "
                         "listed; fix these and run again)")
        return "\n".join(lines)


class MeshReadError(UsageError):
    """A mesh file is missing, unreadable, or holds nothing caselint can check."""

    def __init__(self, file: str, message: str) -> None:
        self.file = file
        self.message = message
        super().__init__(f"{file}: {message}")

    def __reduce__(self):
        # rebuilt from both parts when it crosses to another process (a Dask task's error)
        return type(self), (self.file, self.message)


class PluginLoadError(UsageError):
    """A plugin distribution failed to load, or two plugins register the same id."""
