"""A mesh at a glance: counts, groups, extent, volumes and the spread of each quality metric.

:func:`mesh_summary` gives plain JSON-safe data (ints, floats, strings, lists, no NaN)
that is the same for the same file; :func:`render_summary_text` lays it out for a
terminal with rich, with histograms drawn in block characters so it reads when piped.
Lengths are metres, volumes m^3 (2-D meshes: cell areas, m^2, though the key stays
``volume_m3``; its ``unit`` says which), angles degrees.
"""

from __future__ import annotations

import io
import math
from pathlib import Path
from typing import Any, Callable

import numpy as np

from caselint.mesh import quality

#: Percentiles reported for every metric.
PERCENTILES: tuple[int, ...] = (0, 1, 5, 25, 50, 75, 95, 99, 100)
#: Histogram bins per metric.
HISTOGRAM_BINS = 20
#: Ratio of largest to smallest value above which a positive metric is binned logarithmically.
LOG_BINS_ABOVE = 50.0


def _volume_unit(mesh) -> str:
    """Unit of cell "volumes": m^3, or m^2 for a 2-D mesh (cell areas)."""
    return "m^2" if mesh.dim == 2 else "m^3"


def _metric_table(mesh) -> list[tuple[str, str, str, Callable[[], np.ndarray]]]:
    """(name, unit, what it is taken over, values) of each summarised metric."""
    internal = mesh.neighbour >= 0
    return [
        ("volume", _volume_unit(mesh), "cells", lambda: mesh.cell_volumes),
        ("non-orthogonality", "deg", "faces", lambda: quality.non_orthogonality_deg(mesh)),
        ("skewness", "", "internal faces", lambda: quality.skewness(mesh)[internal]),
        ("scaled-jacobian", "", "cells", lambda: quality.scaled_jacobian(mesh)),
        ("edge-ratio", "", "cells", lambda: quality.edge_ratio(mesh)),
        ("growth-ratio", "", "internal faces", lambda: quality.growth_ratio(mesh)[internal]),
    ]


def _histogram(values: np.ndarray) -> dict[str, Any]:
    """Bin edges and counts; log-spaced when a positive metric spans more than 50x."""
    lo, hi = float(values.min()), float(values.max())
    if hi <= lo:
        return {"scale": "linear", "edges": [lo, hi], "counts": [int(values.size)]}
    if lo > 0 and hi / lo > LOG_BINS_ABOVE:
        edges = np.geomspace(lo, hi, HISTOGRAM_BINS + 1)
        scale = "log"
    else:
        edges = np.linspace(lo, hi, HISTOGRAM_BINS + 1)
        scale = "linear"
    edges[0], edges[-1] = lo, hi  # exact ends, so the extremes fall inside
    counts, _ = np.histogram(values, bins=edges)
    return {"scale": scale, "edges": [float(e) for e in edges], "counts": [int(c) for c in counts]}


def _metric_summary(values: np.ndarray, unit: str, over: str) -> dict[str, Any]:
    """Percentiles and histogram of finite values; non-finite ones are counted, not used."""
    values = np.asarray(values, dtype=np.float64)
    finite = np.isfinite(values)
    out: dict[str, Any] = {"unit": unit, "over": over, "count": int(values.size),
                           "non_finite": int(values.size - np.count_nonzero(finite))}
    values = values[finite]
    if values.size == 0:
        out["percentiles"] = {f"p{p}": None for p in PERCENTILES}
        out["histogram"] = {"scale": "linear", "edges": [], "counts": []}
        return out
    pct = np.percentile(values, PERCENTILES)
    out["percentiles"] = {f"p{p}": float(v) for p, v in zip(PERCENTILES, pct)}
    out["histogram"] = _histogram(values)
    return out


def summarize(mesh) -> dict[str, Any]:
    """Summary of an already-read :class:`caselint.mesh.Mesh` (see :func:`mesh_summary`)."""
    n_internal = int(np.count_nonzero(mesh.neighbour >= 0))
    boundary = mesh.boundary_faces
    groups = mesh.face_group[boundary]
    counts = np.bincount(groups[groups >= 0], minlength=len(mesh.group_names))
    lo, hi = mesh.bounds
    volumes = np.asarray(mesh.cell_volumes, dtype=np.float64)
    finite_v = volumes[np.isfinite(volumes)]
    return {
        "file": str(mesh.path),
        "dim": int(mesh.dim),
        "points": int(mesh.n_points),
        "cells": {"total": int(mesh.n_cells),
                  "by_type": {k: int(v) for k, v in sorted(mesh.cell_counts.items())}},
        "faces": {"total": int(mesh.n_faces), "internal": n_internal,
                  "boundary": int(boundary.size)},
        "boundary_groups": [
            {"name": name, "faces": int(counts[i])} for i, name in enumerate(mesh.group_names)
        ],
        "ungrouped_boundary_faces": int(np.count_nonzero(groups < 0)),
        "extent_m": {"min": [float(v) for v in lo], "max": [float(v) for v in hi],
                     "size": [float(b - a) for a, b in zip(lo, hi)]},
        "volume_m3": {
            "unit": _volume_unit(mesh),
            "min": float(finite_v.min()) if finite_v.size else None,
            "max": float(finite_v.max()) if finite_v.size else None,
            "total": float(finite_v.sum()) if finite_v.size else 0.0,
            "non_positive": int(np.count_nonzero(volumes <= 0)),
        },
        "metrics": {
            name: _metric_summary(values() if mesh.n_cells else np.empty(0), unit, over)
            for name, unit, over, values in _metric_table(mesh)
        },
    }


def mesh_summary(path: str | Path, scale_to_m: float = 1.0, *, tag_array: str | None = None,
                 tags: dict[int, str] | None = None,
                 memory_limit: tuple[int | None, str] | None = None) -> dict[str, Any]:
    """Read a mesh and summarise it; raises :class:`caselint.errors.MeshReadError` if unreadable."""
    from caselint.mesh import read_mesh

    mesh = read_mesh(path, scale_to_m=scale_to_m, tag_array=tag_array, tags=tags,
                     memory_limit=memory_limit)
    out = summarize(mesh)
    out["scale_to_m"] = float(scale_to_m)
    return out


# -- text rendering ------------------------------------------------------------------------

_BLOCKS = " ▏▎▍▌▋▊▉█"
#: Column headers of the percentile table, short enough for 100 columns.
_SHORT = {"volume": "volume", "non-orthogonality": "non-orth.", "skewness": "skewness",
          "scaled-jacobian": "scaled\nJacobian", "edge-ratio": "edge\nratio",
          "growth-ratio": "growth\nratio"}
#: Magnitudes below this are round-off of an exact zero; shown as "~0" rather than "3e-17".
_ROUND_OFF = 1e-12


def _bar(fraction: float, width: int, plain: bool = False) -> str:
    """A horizontal bar of ``width`` characters filled to ``fraction`` in eighths.

    ``plain`` draws it in ASCII ``#`` (whole characters) for pipes and plain terminals.
    """
    fraction = max(0.0, min(1.0, fraction))
    if plain:
        return ("#" * int(round(fraction * width))).ljust(width)
    eighths = int(round(fraction * width * 8))
    full, part = divmod(eighths, 8)
    bar = "█" * full + (_BLOCKS[part] if part else "")
    return bar.ljust(width)


def _num(value: float | None) -> str:
    """A number in a short fixed form for tables."""
    if value is None or not math.isfinite(value):
        return "-"
    if value == 0:
        return "0"
    if abs(value) < _ROUND_OFF:
        return "~0"
    if 1e-3 <= abs(value) < 1e5:
        return f"{value:.4g}"
    return f"{value:.3e}"


def _histogram_lines(metric: dict[str, Any], bar_width: int, plain: bool = False) -> list[str]:
    hist = metric["histogram"]
    edges, counts = hist["edges"], hist["counts"]
    if not counts:
        return ["  (no values)"]
    top = max(counts) or 1
    lines = []
    for i, count in enumerate(counts):
        dash = "-" if plain else "–"
        label = f"{_num(edges[i]):>10} {dash} {_num(edges[i + 1]):<10}"
        lines.append(f"  {label} {_bar(count / top, bar_width, plain)} {count}")
    return lines


def render_summary_text(summary: dict[str, Any], color: bool = False, width: int = 100) -> str:
    """Tables of the summary and a block-character histogram per metric, as text."""
    from rich import box
    from rich.console import Console
    from rich.markup import escape
    from rich.table import Table

    buf = io.StringIO()
    console = Console(file=buf, width=width, force_terminal=color, no_color=not color,
                      color_system="standard" if color else None, highlight=False)
    console.print(f"[bold]Mesh[/bold] {escape(summary['file'])}")

    table_box = box.ASCII2 if not color else box.HEAVY_HEAD
    overview = Table(title="Overview", title_justify="left", show_header=False, box=table_box)
    # "[m]" would be read as markup: escape every label that carries a unit
    overview.add_column("item")
    overview.add_column("value")
    cells = summary["cells"]
    by_type = ", ".join(f"{k} {v}" for k, v in cells["by_type"].items()) or "none"
    faces = summary["faces"]
    ext = summary["extent_m"]
    vol = summary["volume_m3"]
    overview.add_row("cells", f"{cells['total']} ({by_type})")
    overview.add_row("points", str(summary["points"]))
    overview.add_row("faces", f"{faces['total']} ({faces['internal']} internal, "
                              f"{faces['boundary']} boundary)")
    overview.add_row(escape("extent min [m]"), "  ".join(_num(v) for v in ext["min"]))
    overview.add_row(escape("extent max [m]"), "  ".join(_num(v) for v in ext["max"]))
    overview.add_row(escape("size [m]"), "  ".join(_num(v) for v in ext["size"]))
    overview.add_row(escape(f"cell volume [{vol['unit']}]"),
                     f"min {_num(vol['min'])}, max {_num(vol['max'])}, "
                                          f"total {_num(vol['total'])}")
    if vol["non_positive"]:
        overview.add_row("non-positive volumes", str(vol["non_positive"]))
    console.print(overview)

    groups = Table(title="Boundary groups", title_justify="left", box=table_box)
    groups.add_column("group")
    groups.add_column("faces", justify="right")
    for group in summary["boundary_groups"]:
        groups.add_row(escape(group["name"]), str(group["faces"]))
    if summary["ungrouped_boundary_faces"]:
        groups.add_row("(in no group)", str(summary["ungrouped_boundary_faces"]))
    console.print(groups)

    # metrics as columns, percentiles as rows: fits 100 columns with full numbers
    metrics = Table(title="Quality metrics: percentiles", title_justify="left", box=table_box)
    metrics.add_column("", no_wrap=True)
    for name, metric in summary["metrics"].items():
        unit = f"[{metric['unit']}]" if metric["unit"] else ""
        header = _SHORT.get(name, name) + (f"\n{unit}" if unit else "")
        metrics.add_column(escape(header), justify="right", overflow="fold")
    for p in PERCENTILES:
        label = {0: "min", 50: "median", 100: "max"}.get(p, f"p{p}")
        metrics.add_row(label, *(_num(m["percentiles"][f"p{p}"])
                                 for m in summary["metrics"].values()))
    console.print(metrics)
    console.print("  taken over: " + "; ".join(
        f"{name} {m['count']} {m['over']}" for name, m in summary["metrics"].items()))
    console.print()

    bar_width = max(10, width - 40)
    for name, metric in summary["metrics"].items():
        unit = f" [{metric['unit']}]" if metric["unit"] else ""
        scale = " (log bins)" if metric["histogram"]["scale"] == "log" else ""
        console.print(f"[bold]{escape(name + unit)}[/bold] over {metric['count']} "
                      f"{metric['over']}{scale}")
        console.print("\n".join(_histogram_lines(metric, bar_width, plain=not color)), markup=False)
    return buf.getvalue()
