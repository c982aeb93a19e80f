"""What caselint says about each calibration-corpus mesh (tests/calibration.py): the exit
code of ``caselint check --fail-on error``, every rule's outcome, and the values that
decide the verdict, for the corpus tests and the table in docs/calibration-corpus.md.

The check runs in-process through the command line's own entry point, with the JSON
report, once per mesh.
"""

from __future__ import annotations

import contextlib
import io
import json
from dataclasses import dataclass, field

from caselint.cli import main
from caselint.mesh import read_mesh
from calibration import QUALITY_RULES, Sample

#: The worst value of each mesh-quality rule is its distribution's top (or bottom, for a
#: rule whose values get worse when lower); the rules not graded by place report it as
#: measured.
_WORST_PERCENT = {"higher": 100.0, "lower": 0.0}


@dataclass(frozen=True)
class Verdict:
    """caselint's verdict on one corpus mesh."""

    sample: Sample
    exit_code: int
    checks: dict[str, dict]
    cells: dict[str, int] = field(default_factory=dict)

    def failing(self, severity: str | None = None) -> list[str]:
        """Rule ids that fail (at ``severity``, or at any severity), sorted."""
        return sorted(rule for rule, c in self.checks.items() if c["outcome"] == "fail"
                      and (severity is None or c["severity"] == severity))

    def worst(self, rule: str) -> float | None:
        """The worst value a rule measured anywhere in the mesh (None: skipped)."""
        check = self.checks[rule]
        if check["outcome"] == "skipped":
            return None
        spreads = check.get("distributions") or []
        if not spreads:
            return check["measured"]
        at = _WORST_PERCENT[spreads[0]["worse"]]
        values = [p["value"] for s in spreads for p in s["percentiles"] if p["percent"] == at]
        return max(values) if spreads[0]["worse"] == "higher" else min(values)

    def share_beyond(self, rule: str, limit: float) -> float | None:
        """Percent of the rule's entities beyond ``limit`` (None without a distribution)."""
        for spread in self.checks[rule].get("distributions") or []:
            for beyond in spread["beyond"]:
                if beyond["limit"] == limit:
                    return beyond["percent"]
        return None

    def quality_warnings(self) -> list[str]:
        """The mesh-quality rules that fail at any severity."""
        return [rule for rule in self.failing() if rule in QUALITY_RULES]


def verdict(sample: Sample) -> Verdict:
    """Check the sample's case with the default rule set at ``--fail-on error``."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(["check", str(sample.case), "--format", "json", "--fail-on", "error",
                     "--no-cache"])
    if code not in (0, 1):
        raise RuntimeError(f"caselint check {sample.case} exited {code}: {err.getvalue()}")
    (case,) = json.loads(out.getvalue())["cases"]
    mesh = read_mesh(sample.case.with_suffix(".msh"))
    return Verdict(sample, code, {c["rule"]: c for c in case["checks"]}, mesh.cell_counts)
