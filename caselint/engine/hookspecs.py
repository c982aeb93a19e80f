"""Hook specifications: every way a plugin (built-in or installed) extends caselint.

Plugins implement these with ``@caselint.hookimpl``; installed packs are found through
the entry-point group ``caselint``. Hooks are called by keyword. ``register_*`` hooks
return lists that the engine flattens and indexes by id; a duplicate id is an error
naming both plugins. Call order is never relied on: results are sorted by id.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import pluggy

if TYPE_CHECKING:
    from pathlib import Path

    from caselint.mesh.readers import MeshReader
    from caselint.model import CaseSection, Rule
    from caselint.report.base import Reporter

#: Marker for hook specifications (used only here).
hookspec = pluggy.HookspecMarker("caselint")
#: Marker for hook implementations; import it as ``from caselint import hookimpl``.
hookimpl = pluggy.HookimplMarker("caselint")


# -- rules and rule sets ---------------------------------------------------------------


@hookspec
def caselint_register_rules() -> "list[Rule]":
    """Register rules.

    :returns: A list of :class:`caselint.model.Rule`. Every plugin's list is collected;
        the engine refuses two rules with the same id and names both plugins.
    """


@hookspec
def caselint_register_rule_sets() -> "list[Path]":
    """Register rule-set files.

    :returns: A list of paths to rule-set YAML files. A set's name is its file stem;
        a set may ``extends:`` any other registered set. Duplicate names are an error.
    """


# -- case file -------------------------------------------------------------------------


@hookspec
def caselint_register_case_sections() -> "list[CaseSection]":
    """Register top-level case-file sections of a plugin's own.

    :returns: A list of :class:`caselint.model.CaseSection` (name and JSON Schema 2020-12
        fragment). The section is validated with the rest of the case file, errors carry
        file, line and key, and its data reaches rules as ``ctx.case.extensions[name]``.
        A name that clashes with a built-in key or another plugin's section is an error.
    """


# -- meshes ----------------------------------------------------------------------------


@hookspec
def caselint_register_mesh_readers() -> "list[MeshReader]":
    """Register mesh readers.

    :returns: A list of :class:`caselint.mesh.readers.MeshReader`: the file suffixes or
        folders each reads, an optional content check, and a function returning
        :class:`caselint.mesh.model.MeshData`. Duplicate names are an error. A reader with
        a content check is asked before readers without one, so a pack can take over a
        suffix another format shares.
    """


# -- output ----------------------------------------------------------------------------


@hookspec
def caselint_register_reporters() -> "list[Reporter]":
    """Register output formats.

    :returns: A list of :class:`caselint.report.base.Reporter`, each selectable with
        ``--format NAME``. Duplicate names are an error.
    """
