"""The plot of ``caselint grid-study --plot FILE``: values against cell size, with the
extrapolated value, written atomically as PNG, SVG or PDF.

matplotlib is imported only here and only when a plot is asked for; the figure is drawn
through its object interface (no pyplot, no global backend switch), so nothing opens a
window. SVG and PDF are written without a date so the same study gives the same file.
"""

from __future__ import annotations

import contextlib
import io
import math
import os
import tempfile
from pathlib import Path

import numpy as np

from caselint.errors import UsageError
from caselint.grid_study import Study, fmt, fmt_pct

#: Plot formats by file suffix.
PLOT_FORMATS = {".png": "png", ".svg": "svg", ".pdf": "pdf"}


def plot_format(path: Path) -> str:
    """The matplotlib format for ``path``'s suffix; a usage error for any other suffix."""
    fmt_name = PLOT_FORMATS.get(path.suffix.lower())
    if fmt_name is None:
        raise UsageError(f"--plot {path}: unknown plot format {path.suffix or '(no suffix)'!r}; "
                         f"use one of {', '.join(PLOT_FORMATS)}")
    return fmt_name


def _figure():
    try:
        from matplotlib.figure import Figure
    except ImportError:
        raise UsageError("--plot needs matplotlib, which is not installed "
                         "(pip install matplotlib)") from None
    return Figure(figsize=(6.4, 4.4), layout="constrained")


def _x_label(study: Study) -> str:
    inp = study.input
    if inp.h_unit == "m":
        return "representative cell size h (m)"
    if inp.h_unit == "relative":
        return f"relative cell size (1/N)^(1/{inp.dims})"
    return "cell size h"


def _draw_single(study: Study, ax) -> None:
    """phi against h, the Richardson curve through the finest meshes and phi_ext at h = 0."""
    res, inp = study.result, study.input
    h, phi = inp.h, inp.phi[0]
    ax.plot(h, phi, "o-", color="tab:blue", label="computed")
    for name, x, y in zip(inp.mesh_names, h, phi):
        ax.annotate(name, (x, y), textcoords="offset points", xytext=(4, 4), fontsize=8)
    p, ext = res.order[0], res.extrapolated_value[0]
    if math.isfinite(p) and math.isfinite(ext):
        hh = np.linspace(0.0, h.max(), 100)
        curve = ext + (phi[0] - ext) * (hh / h[0]) ** p
        ax.plot(hh, curve, "--", color="tab:gray", label=f"Richardson fit, p = {fmt(p, 3)}")
        band = res.gci_fine_absolute[0]
        ax.errorbar([h[0]], [phi[0]], yerr=[band] if math.isfinite(band) else None,
                    fmt="none", ecolor="tab:red", capsize=4,
                    label=f"GCI fine {fmt_pct(res.gci_fine[0])}")
        ax.plot([0.0], [ext], "*", color="tab:red", markersize=12,
                label=f"extrapolated {fmt(ext, 6)}")
        ax.set_title(f"Grid study: {res.convergence[0]} convergence")
    else:
        ax.set_title(f"Grid study: {res.convergence[0]}, no extrapolation")
    ax.set_xlim(left=0.0)
    ax.set_xlabel(_x_label(study))
    ax.set_ylabel(inp.quantity_names[0])
    ax.legend(fontsize=8)


def _draw_profile(study: Study, ax) -> None:
    """Each mesh's values along the table's rows, and phi_ext with its GCI band."""
    res, inp = study.result, study.input
    labels = inp.quantity_names
    try:
        x = np.array([float(v) for v in labels])
        numeric = bool(np.all(np.isfinite(x)))
    except ValueError:
        numeric = False
    if not numeric:
        x = np.arange(len(labels), dtype=np.float64)
    for j, name in enumerate(inp.mesh_names):
        ax.plot(x, inp.phi[:, j], "o-", markersize=3, label=name)
    ok = np.isfinite(res.extrapolated_value)
    if ok.any():
        band = np.where(np.isfinite(res.gci_fine_absolute[ok]), res.gci_fine_absolute[ok], 0.0)
        ax.errorbar(x[ok], res.extrapolated_value[ok], yerr=band, fmt="*", color="black",
                    capsize=3, label="extrapolated, +/- GCI fine")
    if not numeric and len(labels) <= 20:
        ax.set_xticks(x, labels, rotation=45, ha="right", fontsize=8)
    ax.set_xlabel("position" if numeric else "quantity")
    ax.set_ylabel("value")
    ax.set_title("Grid study along the table's rows")
    ax.legend(fontsize=8)


def plot_bytes(study: Study, fmt_name: str) -> bytes:
    """The plot of ``study`` as the bytes of a ``png``, ``svg`` or ``pdf`` file."""
    from matplotlib import rc_context

    fig = _figure()
    ax = fig.add_subplot()
    if study.input.from_table:
        _draw_profile(study, ax)
    else:
        _draw_single(study, ax)
    ax.grid(True, alpha=0.3)
    metadata = {"svg": {"Date": None}, "pdf": {"CreationDate": None}}.get(fmt_name)
    out = io.BytesIO()
    # A fixed salt makes SVG element ids the same from run to run.
    with rc_context({"svg.hashsalt": "caselint"}):
        fig.savefig(out, format=fmt_name, dpi=120, metadata=metadata)
    return out.getvalue()


def write_plot(study: Study, path: Path, protected: tuple[Path, ...] = ()) -> None:
    """Draw the plot and write it to ``path`` atomically (temporary file, then a rename).

    ``protected`` are input files the plot must not replace.
    """
    fmt_name = plot_format(path)
    if any(p.exists() and path.resolve() == p.resolve() for p in protected):
        raise UsageError(f"--plot {path} is one of the inputs; caselint never overwrites them")
    if not path.parent.is_dir():
        raise UsageError(f"cannot write {path}: folder {path.parent} does not exist")
    if path.is_dir():
        raise UsageError(f"cannot write {path}: it is a folder")
    data = plot_bytes(study, fmt_name)
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    except OSError as exc:
        raise UsageError(f"cannot write {path}: {exc.strerror}") from exc
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)       # mkstemp makes 0600; a plot is an ordinary file
        os.replace(tmp, path)
    except OSError as exc:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise UsageError(f"cannot write {path}: {exc.strerror or exc}") from exc
