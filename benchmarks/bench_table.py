"""Markdown tables of ``bench_check.py``'s results, and the targets they are judged against."""

from __future__ import annotations

from pathlib import Path

START, END = "<!-- check-results:start -->", "<!-- check-results:end -->"

#: Targets of the mesh-core issue (2-core machine, ratios measured in one run).
CHECK_OVER_READ = 2.5          # caselint check / meshio read, 1M shuffled hexahedra
CHECK_OVER_READ_GOAL = 2.0
MB_PER_M_CELLS = 600.0         # peak memory per million cells (goal 400)
MB_PER_M_CELLS_GOAL = 400.0
SUBSET_OVER_VTK = 1.0          # shared metric subset / VTK's filters
PER_CELL_5M_OVER_1M = 1.3      # time per cell, 5M over 1M


def _label(row: dict) -> str:
    return f"{row['kind']} {row['mesh']['cells'] / 1e6:.2f}M"


def _subset_s(row: dict) -> float:
    """caselint's counterpart of VTK's three filters: topology + geometry + cell metrics."""
    times = {s["stage"]: s["s"] for s in row["stages"]}
    return times["topology"] + times["geometry"] + times["cell metrics"]


def summary_table(rows: list[dict]) -> str:
    lines = ["| mesh | format | file MB | meshio read s | caselint check s | check / read "
             "| peak RSS MB | MB per M cells | import s |",
             "|---|---|---:|---:|---:|---:|---:|---:|---:|"]
    for row in rows:
        cells_m = row["mesh"]["cells"] / 1e6
        for fmt, f in row["formats"].items():
            lines.append(
                f"| {_label(row)} | {'VTU (zlib)' if fmt == 'vtu' else 'gmsh 2.2 binary'} "
                f"| {f['size_mb']:.0f} | {f['meshio_s']:.2f} | {f['check_s']:.2f} "
                f"| **{f['check_s'] / f['meshio_s']:.1f}** | {f['check_hwm_mb']:.0f} "
                f"| {f['check_hwm_mb'] / cells_m:.0f} | {f['import_s']:.2f} |")
    return "\n".join(lines)


def vtk_table(rows: list[dict]) -> str:
    lines = ["| mesh | VTK read s | VTK quality / volume / surface s | **VTK filters s** "
             "| caselint topology / geometry / cell metrics s | **caselint subset s** "
             "| subset / VTK |",
             "|---|---:|---:|---:|---:|---:|---:|"]
    for row in rows:
        v = row["vtk"]
        times = {s["stage"]: s["s"] for s in row["stages"]}
        subset = _subset_s(row)
        lines.append(
            f"| {_label(row)} | {v['read_s']:.2f} | {v['quality_s']:.2f} / {v['volume_s']:.2f} "
            f"/ {v['surface_s']:.2f} | **{v['filters_s']:.2f}** | {times['topology']:.2f} / "
            f"{times['geometry']:.2f} / {times['cell metrics']:.2f} | **{subset:.2f}** "
            f"| {subset / v['filters_s']:.1f} |")
    return "\n".join(lines)


def stage_table(rows: list[dict]) -> str:
    names: list[str] = []
    for row in rows:
        names += [s["stage"] for s in row["stages"] if s["stage"] not in names]
    head = "| stage | " + " | ".join(_label(r) for r in rows) + " |"
    lines = [head, "|---|" + "---:|" * len(rows)]
    per = [{s["stage"]: s for s in row["stages"]} for row in rows]
    for name in names:
        cells = []
        for stages in per:
            s = stages.get(name)
            cells.append("" if s is None else f"{s['s']:.2f} s / {s['traced_mb']:.0f} MB")
        lines.append(f"| {name} | " + " | ".join(cells) + " |")
    totals = [f"**{sum(s['s'] for s in row['stages']):.2f} s** / peak RSS "
              f"{max(s['hwm_mb'] for s in row['stages']):.0f} MB" for row in rows]
    lines.append("| all stages | " + " | ".join(totals) + " |")
    return "\n".join(lines)


def scaling_rows(rows: list[dict]) -> list[tuple[str, dict, dict]]:
    """(kind, small row, large row) for kinds measured at two sizes."""
    out = []
    for kind in dict.fromkeys(r["kind"] for r in rows):
        mine = sorted((r for r in rows if r["kind"] == kind), key=lambda r: r["mesh"]["cells"])
        if len(mine) >= 2:
            out.append((kind, mine[0], mine[-1]))
    return out


def scaling_table(rows: list[dict]) -> str:
    lines = ["| mesh | format | small: check s, µs per cell | large: check s, µs per cell "
             "| **per-cell ratio** | worst stage (per-cell ratio) |",
             "|---|---|---:|---:|---:|---|"]
    for kind, small, large in scaling_rows(rows):
        ns, nl = small["mesh"]["cells"], large["mesh"]["cells"]
        small_stages = {s["stage"]: s["s"] for s in small["stages"]}
        ratios = {s["stage"]: (s["s"] / nl) / (small_stages[s["stage"]] / ns)
                  for s in large["stages"]
                  if small_stages.get(s["stage"], 0) > 0.05 and s["s"] > 0.05}
        worst = max(ratios, key=ratios.get) if ratios else ""
        for fmt in large["formats"]:
            a, b = small["formats"][fmt]["check_s"], large["formats"][fmt]["check_s"]
            lines.append(
                f"| {kind} {ns / 1e6:.2f}M → {nl / 1e6:.2f}M | {fmt} | {a:.2f}, {a / ns * 1e6:.2f} "
                f"| {b:.2f}, {b / nl * 1e6:.2f} | **{(b / nl) / (a / ns):.2f}** "
                f"| {worst} ({ratios.get(worst, float('nan')):.2f}) |")
    return "\n".join(lines)


def targets(rows: list[dict]) -> str:
    """The issue's targets, each with the measured numbers and met / not met."""

    def verdict(ok: bool) -> str:
        return "**met**" if ok else "**not met**"

    out = []
    for row in rows:
        if row["kind"] != "hex-shuffled" or abs(row["mesh"]["cells"] - 1e6) > 1e5:
            continue
        for fmt, f in row["formats"].items():
            ratio = f["check_s"] / f["meshio_s"]
            out.append(f"- 1M shuffled hexahedra ({fmt}): check {f['check_s']:.2f} s = "
                       f"{ratio:.1f} x meshio's read ({f['meshio_s']:.2f} s); target "
                       f"{CHECK_OVER_READ} x: {verdict(ratio <= CHECK_OVER_READ)} "
                       f"(goal {CHECK_OVER_READ_GOAL} x: {verdict(ratio <= CHECK_OVER_READ_GOAL)})")
    for row in rows:
        cells_m = row["mesh"]["cells"] / 1e6
        worst = max(f["check_hwm_mb"] for f in row["formats"].values())
        out.append(f"- peak memory, {_label(row)}: {worst:.0f} MB = {worst / cells_m:.0f} MB per "
                   f"million cells; target {MB_PER_M_CELLS:.0f}: "
                   f"{verdict(worst / cells_m <= MB_PER_M_CELLS)} (goal "
                   f"{MB_PER_M_CELLS_GOAL:.0f}: {verdict(worst / cells_m <= MB_PER_M_CELLS_GOAL)})")
    for row in rows:
        subset, vtk = _subset_s(row), row["vtk"]["filters_s"]
        out.append(f"- shared metric subset, {_label(row)}: caselint {subset:.2f} s, VTK "
                   f"{vtk:.2f} s ({subset / vtk:.1f} x); target no slower: "
                   f"{verdict(subset <= SUBSET_OVER_VTK * vtk)}")
    for kind, small, large in scaling_rows(rows):
        for fmt in large["formats"]:
            a = small["formats"][fmt]["check_s"] / small["mesh"]["cells"]
            b = large["formats"][fmt]["check_s"] / large["mesh"]["cells"]
            out.append(f"- scaling, {kind} ({fmt}): time per cell {b / a:.2f} x the smaller "
                       f"mesh's; target {PER_CELL_5M_OVER_1M}: "
                       f"{verdict(b / a <= PER_CELL_5M_OVER_1M)}")
    return "\n".join(out)


def render_tables(rows: list[dict], meta: dict) -> str:
    """Every table and the target verdicts, as Markdown."""
    head = (f"Measured {meta['date']} on {meta['cores']} cores, Python {meta['python']}, "
            f"{meta['machine']}; median of {meta['runs']} runs, each in a fresh process; "
            f"1-minute load average before the runs {meta['load']:.2f}"
            + ("" if "scipy" not in meta else
               f"; scipy {'installed' if meta['scipy'] else 'not installed'}") + ".\n")
    parts = [head, "#### Targets\n", targets(rows), "\n#### caselint check against meshio's read\n",
             summary_table(rows), "\n#### The metric subset against VTK (same VTU)\n",
             vtk_table(rows), "\n#### Stages (VTU case): time / traced peak within the stage\n",
             stage_table(rows)]
    scaling = scaling_table(rows)
    if scaling.count("\n") > 1:
        parts += ["\n#### Scaling\n", scaling]
    return "\n".join(parts) + "\n"


def write_readme(readme: Path, text: str, start: str = START, end: str = END) -> None:
    """Replace the text between the markers ``start`` and ``end`` of ``readme`` (the
    check-result markers by default; appended if absent)."""
    old = readme.read_text() if readme.exists() else "# Benchmarks\n"
    if start not in old:
        old = f"{old.rstrip()}\n\n{start}\n{end}\n"
    before, rest = old.split(start, 1)
    after = rest.split(end, 1)[1]
    readme.write_text(f"{before}{start}\n{text}{end}{after}")


def publish(text: str, start: str, end: str, readme: bool) -> None:
    """Print ``text`` and, when ``readme``, put it between the markers of the README."""
    print(text)
    if readme:
        write_readme(Path(__file__).resolve().parent / "README.md", text, start, end)
