"""The pack's hook implementations: a rule, a rule set and a case-file section.

Installed, it is found through the entry point ``quillfen`` in the group ``caselint``
(see pyproject.toml); ``caselint plugins`` lists it, ``--no-plugin quillfen`` blocks it.
"""

from __future__ import annotations

from pathlib import Path

from caselint import hookimpl
from caselint.model import CaseSection, Rule

from quillfen_rules.air_changes import AIR_CHANGE_RATE

_RULE_SETS = Path(__file__).parent / "rule_sets"

#: The ``quillfen`` section of a case file, validated with the rest of the case file.
QUILLFEN_SECTION = CaseSection(
    name="quillfen",
    schema={
        "type": "object",
        "description": "Quillfen project data (added by the quillfen-rules pack).",
        "additionalProperties": False,
        "required": ["project"],
        "properties": {
            "project": {"type": "string", "pattern": "^QF-[0-9]{4}$",
                        "description": "Quillfen project number, QF-NNNN."},
            "supply_flow": {"type": ["number", "string"],
                            "description": "Total supply volume flow into the room, e.g. "
                                           "'0.85 m^3/s' or '3060 m^3/h'."},
            "design_reviewer": {"type": "string",
                                "description": "Name of the Quillfen design reviewer."},
        },
    },
    quantities={"supply_flow": "volume_flow"},
)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The pack's Python rules."""
    return [AIR_CHANGE_RATE]


@hookimpl
def caselint_register_rule_sets() -> list[Path]:
    """The pack's rule sets."""
    return sorted(_RULE_SETS.glob("*.yaml"))


@hookimpl
def caselint_register_case_sections() -> list[CaseSection]:
    """The pack's case-file section."""
    return [QUILLFEN_SECTION]
