"""``caselint grid-study``: the discretisation error of a finished grid study.

Inputs: the meshes (cell counts with ``--dims``, cell sizes, or the case file's
``grid_study.meshes``) finest first, and one value per mesh (``--values``) or a CSV table of
several quantities, one row per quantity and one column per mesh (local values along a
profile). The numbers come from :mod:`caselint.physics.gci` (Celik et al. 2008; Roache
1994/1997); this module validates the inputs, shapes the JSON result and draws the text
table and the optional plot. Bad input raises :class:`~caselint.errors.UsageError`.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Sequence

import numpy as np

from caselint.errors import UsageError
from caselint.physics import gci

#: Version of the JSON document ``caselint grid-study --format json`` writes.
JSON_VERSION = 1


@dataclass(frozen=True)
class StudyInput:
    """Validated inputs, finest mesh first; ``phi`` has one row per quantity."""

    h: np.ndarray
    h_unit: str                          # "m", "relative" ((1/N)^(1/dims)) or "as given"
    mesh_names: tuple[str, ...]
    cells: tuple[int, ...] | None
    dims: int | None
    quantity_names: tuple[str, ...]
    phi: np.ndarray
    from_table: bool = False
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class Study:
    """A computed grid study: its inputs and the per-quantity results."""

    input: StudyInput
    result: gci.GciResult


# -- inputs ----------------------------------------------------------------------------


def _finite(values: Sequence[float], option: str) -> np.ndarray:
    out = np.asarray([float(v) for v in values], dtype=np.float64)
    if not np.all(np.isfinite(out)):
        raise UsageError(f"{option}: every value must be a finite number, got "
                         f"{', '.join(format(v, 'g') for v in out)}")
    return out


def sizes_from_cells(cells: Sequence[int], dims: int) -> np.ndarray:
    """Relative sizes h = (1/N)^(1/dims) from cell counts given finest first."""
    if any(n <= 0 for n in cells):
        raise UsageError(f"--cells: cell counts must be positive, got {list(cells)}")
    if any(b >= a for a, b in zip(cells[:-1], cells[1:])):
        raise UsageError(f"--cells must be given finest first (most cells first, each count "
                         f"smaller than the one before), got {list(cells)}")
    return gci.representative_size(np.asarray(cells, dtype=np.float64), 1.0, dims)


def sizes_from_spacing(spacing: Sequence[float]) -> np.ndarray:
    """Cell sizes as given, checked positive and increasing (finest first)."""
    h = _finite(spacing, "--spacing")
    if np.any(h <= 0) or np.any(np.diff(h) <= 0):
        raise UsageError(f"--spacing must be positive and given finest first (each size larger "
                         f"than the one before), got {', '.join(format(v, 'g') for v in h)}")
    return h


def family_from_case(path: str):
    """The grid-study meshes of a case file, read and sorted finest first."""
    from caselint.api import load_case
    from caselint.errors import CaseFileError
    from caselint.rules.grid_refinement import KEY, read_family

    case = load_case(path)
    if not case.grid_study.meshes:
        raise CaseFileError(str(path), "the case file has no grid study; list its meshes under "
                            "grid_study: {meshes: [fine.msh, medium.msh, coarse.msh]}", key=KEY)
    members = read_family(case)
    for m in members:
        if m.size.h <= 0.0:
            raise CaseFileError(str(path), f"grid-study mesh {m.name} has no cells or a "
                                "non-positive total volume: its cell size is undefined",
                                line=case.line_of(m.key), key=m.key)
    if len({m.size.dim for m in members}) > 1:
        raise CaseFileError(str(path), "the grid-study meshes mix 2-D and 3-D meshes", key=KEY,
                            line=case.line_of(KEY))
    for a, b in zip(members[:-1], members[1:]):
        if b.size.h <= a.size.h:
            raise CaseFileError(str(path), f"grid-study meshes {a.name} and {b.name} have the "
                                f"same cell size h = {a.size.h:.6g} m", key=KEY,
                                line=case.line_of(KEY))
    return members


def read_table(path: str, n_meshes: int) -> tuple[tuple[str, ...], tuple[str, ...], np.ndarray]:
    """A CSV of quantities: header row, then ``label, phi_1, ..., phi_M`` (finest first).

    Returns (mesh column titles, quantity labels, values ``(Q, M)``). Blank lines and lines
    starting with ``#`` are skipped. Errors name the file, line and column.
    """
    file = Path(path)
    try:
        with file.open(encoding="utf-8-sig", newline="") as handle:
            rows = [(n, row) for n, row in enumerate(csv.reader(handle), start=1)
                    if row and any(c.strip() for c in row) and not row[0].lstrip().startswith("#")]
    except FileNotFoundError:
        raise UsageError(f"{path}: table file not found") from None
    except IsADirectoryError:
        raise UsageError(f"{path}: is a folder, not a CSV table") from None
    except (OSError, UnicodeDecodeError, csv.Error) as exc:
        raise UsageError(f"{path}: cannot read the CSV table: {exc}") from None
    if not rows:
        raise UsageError(f"{path}: the table is empty; expected a header row "
                         f"(label, then {n_meshes} mesh columns finest first) and data rows")
    (head_line, header), data = rows[0], rows[1:]
    header = [c.strip() for c in header]
    if _is_number(header[0]) and all(_is_number(c) for c in header[1:]):
        raise UsageError(f"{path}:{head_line}: expected a header row (a label title, then one "
                         f"title per mesh, finest first), got numbers only")
    if len(header) != n_meshes + 1:
        raise UsageError(f"{path}:{head_line}: the header has {len(header) - 1} mesh columns; "
                         f"expected {n_meshes} (one per mesh, finest first) after the label column")
    if not data:
        raise UsageError(f"{path}: the table has a header but no data rows")
    labels, values = [], np.empty((len(data), n_meshes))
    for i, (line, row) in enumerate(data):
        cells = [c.strip() for c in row]
        if len(cells) != n_meshes + 1:
            raise UsageError(f"{path}:{line}: expected {n_meshes + 1} columns (label and "
                             f"{n_meshes} values), got {len(cells)}")
        labels.append(cells[0] or f"row {i + 1}")
        for j, text in enumerate(cells[1:]):
            value = _number(text)
            if value is None:
                raise UsageError(f"{path}:{line}: column {j + 2} ({header[j + 1]!r}): expected a "
                                 f"finite number, got {text!r}")
            values[i, j] = value
    return tuple(header[1:]), tuple(labels), values


def _number(text: str) -> float | None:
    try:
        value = float(text)
    except ValueError:
        return None
    return value if math.isfinite(value) else None


def _is_number(text: str) -> bool:
    return _number(text) is not None


def study_input(*, cells=None, dims=None, spacing=None, case=None, values=None, table=None,
                order=None) -> StudyInput:
    """Check the combination of options and build the inputs (exactly one mesh source and
    one value source)."""
    sources = [name for name, given in (("--cells", cells), ("--spacing", spacing),
                                         ("--case", case)) if given is not None]
    if len(sources) != 1:
        raise UsageError("give the meshes one way: --cells N1 N2 N3 [--dims 2|3], "
                         "--spacing h1 h2 h3, or --case CASE.yaml"
                         + (f" (got {' and '.join(sources)})" if sources else ""))
    if (values is None) == (table is None):
        raise UsageError("give the results one way: --values phi1 phi2 phi3 (finest first) "
                         "or --table FILE.csv" + (" (got both)" if values is not None else ""))
    if dims is not None and cells is None:
        raise UsageError("--dims applies to --cells only (with --case the meshes say it)")
    notes: list[str] = []
    if cells is not None:
        dims = dims or 3
        h, unit, names, counts = sizes_from_cells(cells, dims), "relative", None, tuple(cells)
    elif spacing is not None:
        h, unit, names, counts = sizes_from_spacing(spacing), "as given", None, None
    else:
        members = family_from_case(case)
        h = np.array([m.size.h for m in members])
        unit, names = "m", tuple(m.name for m in members)
        counts, dims = tuple(m.size.n_cells for m in members), members[0].size.dim
    n = h.size
    if n < 2:
        raise UsageError(f"a grid study needs at least two meshes, got {n}")
    if table is not None:
        headers, labels, phi = read_table(table, n)
        names = names or headers
    else:
        phi = _finite(values, "--values")[None, :]
        labels = ("phi",)
        if phi.shape[1] != n:
            raise UsageError(f"--values: got {phi.shape[1]} values for {n} meshes; give one "
                             "value per mesh, finest first")
    if n == 2 and order is None:
        raise UsageError("two meshes show no order of convergence: give the scheme's formal "
                         "order with --order P (e.g. 2); the GCI then uses the safety factor 3 "
                         "(Roache 1994)")
    if n > 2 and order is not None:
        raise UsageError(f"--order is for two-mesh studies; with {n} meshes the order is "
                         "observed (Celik 2008)")
    if order is not None and not (math.isfinite(order) and order > 0):
        raise UsageError(f"--order must be a positive number, got {order:g}")
    if n > 3:
        notes.append(f"{n} meshes given: the procedure uses the three finest")
    names = names or tuple(f"mesh {i + 1}" for i in range(n))
    return StudyInput(h=h, h_unit=unit, mesh_names=tuple(names), cells=counts, dims=dims,
                      quantity_names=tuple(labels), phi=phi, from_table=table is not None,
                      notes=tuple(notes))


def run_study(inputs: StudyInput, order: float | None = None) -> Study:
    """Compute the study: three finest meshes with the observed order, or two with ``order``."""
    if inputs.h.size == 2:
        result = gci.two_grid(inputs.h, inputs.phi, float(order))
    else:
        result = gci.three_grid(inputs.h, inputs.phi)
    return Study(inputs, result)


# -- JSON ------------------------------------------------------------------------------


def _num(value: float) -> float | None:
    """A float for JSON, None where the procedure gives no value."""
    value = float(value)
    return value if math.isfinite(value) else None


def _pct(value: float) -> float | None:
    return None if not math.isfinite(float(value)) else 100.0 * float(value)


def _quantity(result: gci.GciResult, i: int) -> dict[str, Any]:
    return {
        "values": [float(v) for v in result.phi[i]],
        "apparent_order": _num(result.apparent_order[i]),
        "order_used": _num(result.order[i]),
        "extrapolated_value": _num(result.extrapolated_value[i]),
        "relative_error_percent": _pct(result.relative_error[i]),
        "extrapolated_error_percent": _pct(result.extrapolated_error[i]),
        "gci_fine_percent": _pct(result.gci_fine[i]),
        "gci_fine_absolute": _num(result.gci_fine_absolute[i]),
        "gci_coarse_percent": _pct(result.gci_coarse[i]),
        "asymptotic_ratio": _num(result.asymptotic_ratio[i]),
        "convergence_ratio": _num(result.ratio[i]),
        "convergence": result.convergence[i],
        "message": result.messages[i],
    }


def to_dict(study: Study) -> dict[str, Any]:
    """The JSON document: mesh data, ratios and, per quantity, the contract fields."""
    inp, res = study.input, study.result
    used = res.h.size
    out: dict[str, Any] = {
        "caselint_grid_study": JSON_VERSION,
        "method": ("Celik et al. 2008, three meshes, observed order" if used == 3 else
                   "Roache 1994, two meshes, assumed order"),
        "meshes": [{"name": inp.mesh_names[i],
                    "cells": inp.cells[i] if inp.cells is not None else None,
                    "h": float(inp.h[i]), "used": i < used} for i in range(inp.h.size)],
        "h_unit": inp.h_unit,
        "dims": inp.dims,
        "refinement_ratios": [float(r) for r in res.refinement_ratios],
        "safety_factor": res.safety_factor,
        "order_assumed": res.order_assumed,
        "notes": list(inp.notes),
    }
    if not inp.from_table:
        out.update(_quantity(res, 0))
        return out
    rows = [{"name": name, **_quantity(res, i)} for i, name in enumerate(inp.quantity_names)]
    observed = res.apparent_order[np.isfinite(res.apparent_order)]
    out["quantities"] = rows
    out["average_apparent_order"] = float(observed.mean()) if observed.size else None
    out["convergence_counts"] = {kind: res.convergence.count(kind)
                                 for kind in gci.CONVERGENCE_TYPES}
    return out


# -- text ------------------------------------------------------------------------------


def fmt(value: float, digits: int = 5) -> str:
    """A number for the table; ``n/a`` where the procedure gives none."""
    value = float(value)
    if not math.isfinite(value):
        return "n/a"
    text = f"{value:.{digits}g}"
    return "0" if text == "-0" else text


def fmt_pct(value: float) -> str:
    """A fraction shown as percent, three significant digits."""
    return "n/a" if not math.isfinite(float(value)) else f"{100.0 * float(value):.3g} %"


def _h_title(inp: StudyInput) -> str:
    if inp.h_unit == "m":
        return "h (m)"
    if inp.h_unit == "relative":
        return f"h = (1/N)^(1/{inp.dims})"
    return "h"


def draw_text(study: Study, console, plain: bool) -> None:
    """Draw the study with rich: the meshes, then the results (one row per quantity)."""
    from rich import box
    from rich.table import Table

    inp, res = study.input, study.result
    style = box.ASCII2 if plain else box.SIMPLE_HEAD
    meshes = Table(box=style, header_style="bold", title="Grid study (finest first)")
    for column in ("Mesh", "Cells", _h_title(inp)):
        meshes.add_column(column, justify="left" if column == "Mesh" else "right")
    if not inp.from_table:
        meshes.add_column("phi", justify="right")
    for i, name in enumerate(inp.mesh_names):
        row = [name, str(inp.cells[i]) if inp.cells is not None else "-", fmt(inp.h[i])]
        if not inp.from_table:
            row.append(fmt(inp.phi[0, i], 8))
        meshes.add_row(*row)
    console.print(meshes)
    ratios = ", ".join(f"r{k + 2}{k + 1} = {fmt(r, 4)}"
                       for k, r in enumerate(res.refinement_ratios))
    order_word = f"assumed order, Fs = {res.safety_factor:g}" if res.order_assumed else \
        f"observed order, Fs = {res.safety_factor:g}"
    console.print(f"Refinement ratios {ratios} ({order_word}).")
    if inp.from_table:
        _draw_quantities(study, console, style)
    else:
        _draw_single(res, console)
    for note in inp.notes:
        console.print(f"Note: {note}.")


def _draw_single(res: gci.GciResult, console) -> None:
    from rich.table import Table

    grid = Table.grid(padding=(0, 2))
    grid.add_column(style="bold", no_wrap=True)
    grid.add_column()
    if res.order_assumed:
        grid.add_row("order p", f"{fmt(res.order[0], 4)} (assumed)")
    else:
        grid.add_row("apparent order p", fmt(res.apparent_order[0], 4))
    grid.add_row("extrapolated value", fmt(res.extrapolated_value[0], 6))
    grid.add_row("approx. relative error e_a21", fmt_pct(res.relative_error[0]))
    grid.add_row("extrapolated relative error e_ext21", fmt_pct(res.extrapolated_error[0]))
    absolute = res.gci_fine_absolute[0]
    grid.add_row("GCI fine", fmt_pct(res.gci_fine[0])
                 + (f" (+/- {fmt(absolute, 4)})" if math.isfinite(absolute) else ""))
    if not res.order_assumed:
        a = res.asymptotic_ratio[0]
        remark = (f" ({abs(a - 1) * 100:.3g} % from 1; near 1 means the asymptotic range)"
                  if math.isfinite(a) else "")
        grid.add_row("asymptotic ratio GCI32/(r21^p GCI21)", fmt(a, 4) + remark)
        R = res.ratio[0]
        grid.add_row("convergence", res.convergence[0]
                     + (f" (R = e21/e32 = {fmt(R, 4)})" if math.isfinite(R) else ""))
    console.print(grid)
    if res.messages[0]:
        console.print(f"Note: {res.messages[0]}.")


def _draw_quantities(study: Study, console, style) -> None:
    from rich.table import Table

    inp, res = study.input, study.result
    table = Table(box=style, header_style="bold")
    columns = ["Quantity", *(f"phi{k + 1}" for k in range(res.h.size)), "p", "phi_ext",
               "e_a21", "GCI fine", "Convergence"]
    for c in columns:
        table.add_column(c, justify="left" if c in ("Quantity", "Convergence") else "right")
    for i, name in enumerate(inp.quantity_names):
        table.add_row(name, *(fmt(v, 6) for v in res.phi[i]), fmt(res.order[i], 4),
                      fmt(res.extrapolated_value[i], 6), fmt_pct(res.relative_error[i]),
                      fmt_pct(res.gci_fine[i]), res.convergence[i])
    console.print(table)
    counts = ", ".join(f"{res.convergence.count(k)} {k}" for k in gci.CONVERGENCE_TYPES
                       if res.convergence.count(k))
    observed = res.apparent_order[np.isfinite(res.apparent_order)]
    average = f"; average apparent order {fmt(observed.mean(), 4)}" if observed.size else ""
    console.print(f"{res.n_quantities} quantities: {counts}{average}.")
    for name, text in zip(inp.quantity_names, res.messages):
        if text:
            console.print(f"{name}: {text}.")
