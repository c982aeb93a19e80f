"""What an output format is: a name and a function from a finished report to text."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

from caselint.model import Report


@dataclass(frozen=True)
class RenderOptions:
    """How a reporter should render: colour, terminal width, the fail level, and a date.

    ``stamp`` is the date (ISO 8601) the sign-off checklists print when asked with
    ``--stamp``; empty otherwise, so the same inputs give the same document.
    """

    color: bool = False
    width: int = 100
    fail_on: str = "error"
    stamp: str = ""


@dataclass(frozen=True)
class Reporter:
    """An output format registered through ``caselint_register_reporters``.

    ``render(report, options)`` returns the whole document as text; it computes nothing
    that the report does not already hold.
    """

    name: str
    description: str
    render: Callable[[Report, RenderOptions], str]
    suffix: str = ".txt"
