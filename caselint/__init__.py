"""caselint: a solver-agnostic pre-run checklist and case linter for CFD cases."""

from caselint.engine.hookspecs import hookimpl

__version__ = "0.1.0"

__all__ = ["hookimpl", "__version__"]
