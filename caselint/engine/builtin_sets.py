"""Registers the rule sets shipped with caselint (``rules/*.yaml``) and its mesh readers as a
built-in plugin."""

from __future__ import annotations

from pathlib import Path

from caselint.engine.hookspecs import hookimpl
from caselint.resources import shipped_dir


@hookimpl
def caselint_register_mesh_readers() -> list:
    """The mesh readers caselint ships (:mod:`caselint.mesh.formats`)."""
    from caselint.mesh.formats import BUILTIN_READERS

    return list(BUILTIN_READERS)


@hookimpl
def caselint_register_rule_sets() -> list[Path]:
    """The shipped rule-set files, sorted by name."""
    return sorted(shipped_dir("rules").glob("*.yaml"))
