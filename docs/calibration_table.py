"""Write docs/calibration-corpus.md: every mesh of the calibration corpus, caselint's verdict
on it with the default rule set, and the values that decide it.

    python docs/calibration_table.py [OUT.md]

Builds the corpus with gmsh (tests/calibration.py; gmsh from PyPI, a test dependency) in a
temporary folder, checks each case as ``caselint check --fail-on error`` does
(tests/calibration_verdicts.py, the same code the corpus tests use) and writes the table.
The numbers are those of the gmsh version named in the page: another version meshes a
little differently, the verdicts should not change (tests/test_calibration_corpus.py).
"""

from __future__ import annotations

import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

import calibration  # noqa: E402
from calibration_verdicts import Verdict, verdict  # noqa: E402

OUT = Path(__file__).with_name("calibration-corpus.md")

#: The value columns: title, rule, how to read it.
COLUMNS = (
    ("growth ratio: worst / % beyond 1.3", "growth-ratio", "share"),
    ("volume ratio", "volume-ratio", "worst"),
    ("skewness", "skewness", "worst"),
    ("non-orth. (deg)", "non-orthogonality", "worst"),
    ("cell shape (lowest)", "cell-shape", "worst"),
    ("aspect ratio", "aspect-ratio", "worst"),
)

HEAD = """# The calibration corpus

Meshes made with a real mesher (gmsh {gmsh}, from PyPI), each with a case file, and
caselint's verdict on them with the default rule set (`rule_sets: [general]`) at
`--fail-on error`. A good mesh must pass with no warning from the mesh-quality rules; a
bad one must fail on the rule that names its defect. The builders are in
`tests/calibration.py`, the assertions in `tests/test_calibration_corpus.py`; this page is
written by `python docs/calibration_table.py` (caselint {caselint}). gmsh only makes the
meshes: no value here comes from it.

The good meshes go with the case an engineer would make them for: the ones without wall
layers with inviscid flow (no boundary layer to resolve), the prism-layer plate strip with
a laminar flow whose boundary layer (7.5 mm, Blasius) its layers cover, the 2-D strut with
a turbulent flow resolved to the wall.

Values are the worst anywhere in the mesh (places: regions of interest, near no-slip walls,
elsewhere; the grades judge each place on its own). "-" is a rule that did not run (why is
in the report: no shape known, no wall, an inviscid case). The failing rules list every
rule that warned or erred, mesh-quality or not.

"""

FOOT = """
## How to read the verdicts

- `growth-ratio` is a size ratio (`caselint.mesh.size_ratio`): the worst face is held to 2
  (warning above) and 3 (error above), the share of faces beyond the common-practice 1.3
  to 10 % (warning above). The good unstructured meshes keep that share at a few per cent;
  the prism layers grown at 1.6 put far more faces there.
- `skewness` is measured against the larger of the centre distance and the cells' size
  across the face, so optimised tetrahedra read about 0.2 where the textbook
  |x_f - x_i| / |d| reads 1.3-1.5.
- `cell-shape` is the lowest scaled Jacobian: optimised tetrahedra stay above 0.14; the
  unoptimised Delaunay mesh has slivers below the error limit 0.05.
- The near-wall rules (`layer-cover`, `layer-transition`, `boundary-layer-cells`, ...) may
  warn on the good layered meshes: where a wall stack ends and how thick the boundary
  layer is locally are judged by rules calibrated apart from this corpus.
"""


def _value(v: Verdict, rule: str, how: str) -> str:
    worst = v.worst(rule)
    if worst is None:
        return "-"
    if how == "share":
        return f"{worst:.3g} / {v.share_beyond(rule, 1.3):.2g} %"
    return f"{worst:.3g}"


def _cells(v: Verdict) -> str:
    return ", ".join(f"{n} {kind}" for kind, n in sorted(v.cells.items()))


def _failing(v: Verdict) -> str:
    parts = [f"{rule} ({v.checks[rule]['severity']})" for rule in v.failing()]
    return ", ".join(parts) or "none"


def _deciding(v: Verdict) -> str:
    if v.sample.good:
        return "passes" if v.exit_code == 0 else "FAILS"
    check = v.checks[v.sample.defect]
    unit = f" {check['unit']}" if check["unit"] else ""
    relation = ">=" if check["worse"] == "lower" else "<="
    return (f"{v.sample.defect} {check['measured']:.4g}{unit} ({check['severity']}; "
            f"{relation} {check['limit']:g}{unit})")


def table(verdicts: list[Verdict]) -> str:
    """The page's markdown."""
    import caselint
    import gmsh

    titles = ["mesh", "made as", "cells", "expected", "exit", "verdict"] + [c[0] for c in COLUMNS]
    lines = ["| " + " | ".join(titles) + " |", "|" + " --- |" * len(titles)]
    for v in verdicts:
        expected = "pass" if v.sample.good else f"fails on {v.sample.defect}"
        row = [f"`{v.sample.name}`", v.sample.what, _cells(v), expected, str(v.exit_code),
               _deciding(v)] + [_value(v, rule, how) for _, rule, how in COLUMNS]
        lines.append("| " + " | ".join(row) + " |")
    failing = ["", "Rules that warn or fail on each mesh:", ""]
    failing += [f"- `{v.sample.name}`: {_failing(v)}" for v in verdicts]
    return (HEAD.format(gmsh=gmsh.__version__, caselint=caselint.__version__)
            + "\n".join(lines) + "\n" + "\n".join(failing) + "\n" + FOOT)


def main(argv: list[str]) -> int:
    out = Path(argv[0]) if argv else OUT
    with tempfile.TemporaryDirectory() as folder:
        verdicts = [verdict(sample) for sample in calibration.build_all(Path(folder))]
    out.write_text(table(verdicts), encoding="utf-8")
    print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
