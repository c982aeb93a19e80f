"""Rule ``qf-air-change-rate``: air changes per hour of a ventilated room.

Reads the company's own case-file section ``quillfen`` (declared in :mod:`.plugin`):
the supply volume flow, which caselint has converted to m^3/s like every quantity of the
case file, over the room volume, which is the mesh's total cell volume in m^3.
"""

from __future__ import annotations

from caselint.model import Limits, Measurement, Parameter, Rule, RuleResult, Where
from caselint.rulekit import RuleContext


def _check(ctx: RuleContext) -> RuleResult:
    flow_m3_s = ctx.case.extensions["quillfen"]["supply_flow"]
    room_m3 = float(ctx.mesh.cell_volumes.sum())
    if not room_m3 > 0:
        return RuleResult.skip("the mesh has no positive volume to ventilate")
    changes_per_hour = flow_m3_s * 3600.0 / room_m3
    target = ctx.params["design_changes_per_hour"]
    fix = ""
    if changes_per_hour < target:
        fix = (f"Raise the supply flow to at least {target * room_m3 / 3600.0:.3g} m^3/s "
               f"for {target:g} air changes per hour in this {room_m3:.4g} m^3 room, or check "
               "that the mesh covers the whole room.")
    return RuleResult((Measurement(
        changes_per_hour,
        where=Where(key="quillfen.supply_flow"),
        detail=f"{flow_m3_s:.4g} m^3/s into {room_m3:.4g} m^3 of meshed room",
        fix=fix,
    ),))


AIR_CHANGE_RATE = Rule(
    id="qf-air-change-rate",
    title="Air changes per hour of the ventilated room",
    rationale=(
        "Quillfen sizes room ventilation by air changes per hour (supply volume flow over "
        "room volume). A case whose supply flow gives fewer changes than the company "
        "standard asks for will not reproduce the room the client pays for; a very low "
        "value usually means the flow was entered per diffuser, or the mesh is in the "
        "wrong unit."
    ),
    source="Quillfen engineering standard QES-104 §3 (invented company standard for this example)",
    unit="1/h",
    measures="air change rate",
    limits=Limits(warn=20.0, error=10.0),
    hint="Check the supply flow in the quillfen section and the room volume of the mesh.",
    check=_check,
    worse="lower",
    needs=("quillfen.supply_flow", "mesh"),
    parameters=(Parameter("design_changes_per_hour", 25.0, "1/h",
                          "air changes per hour the fix hint aims for", exclusive_minimum=0),),
)
