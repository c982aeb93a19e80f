"""One measurement per process for ``bench_check.py``: run as ``python bench_workers.py MODE PATH``.

Each mode prints one JSON line. Times are ``time.perf_counter`` seconds; ``hwm_mb`` is the
process's peak resident set (``VmHWM``, which unlike ``ru_maxrss`` is not inherited across
``exec``); with ``--traced`` the stages also report ``tracemalloc`` peaks (numpy arrays
included) per stage, reset at the start of each stage.

Modes:

- ``meshio FILE``: ``meshio.read`` alone (the import excluded);
- ``check CASE``: ``caselint.api.lint_case`` with the case's rule sets, as ``caselint check``
  runs it, plus the JSON rendering; ``import_s`` is the import of caselint's API;
- ``stages CASE``: the same work split into stages: setup (plugins, case file, rule
  selection), read, topology, geometry, cell metrics, then each rule, timed by wrapping
  each rule's ``check`` (the engine itself is not changed); ``hwm_mb`` after each stage;
- ``vtk FILE``: VTK's reader, then on the volume cells ``vtkMeshQuality`` (scaled Jacobian),
  ``vtkCellSizeFilter`` (volume) and ``vtkDataSetSurfaceFilter`` (boundary extraction).
"""

from __future__ import annotations

import contextlib
import dataclasses
import io
import json
import resource
import sys
import time
import tracemalloc
from pathlib import Path


def hwm_mb() -> float:
    """Peak resident set of this process so far (MB).

    Linux keeps ``ru_maxrss`` across ``exec``, so a worker started by a big parent would
    report the parent's peak; ``VmHWM`` of /proc/self/status belongs to the new address
    space. ``ru_maxrss`` is the fallback where /proc is missing. Shared by every script here.
    """
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024


class Stages:
    """Times, cumulative peak RSS and (when tracing) traced peak of consecutive stages."""

    def __init__(self, traced: bool) -> None:
        self.traced = traced
        self.rows: list[dict] = []
        self._t = time.perf_counter()

    def done(self, name: str) -> None:
        """Close the stage that started at the previous call."""
        now = time.perf_counter()
        row = {"stage": name, "s": now - self._t, "hwm_mb": hwm_mb()}
        if self.traced:
            row["traced_mb"] = tracemalloc.get_traced_memory()[1] / 2**20
            tracemalloc.reset_peak()
        self.rows.append(row)
        self._t = time.perf_counter()


def run_meshio(path: str) -> dict:
    import meshio

    t = time.perf_counter()
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        meshio.read(path)
    return {"s": time.perf_counter() - t, "hwm_mb": hwm_mb()}


def run_check(path: str) -> dict:
    t0 = time.perf_counter()
    from caselint.api import build_report, lint_case
    from caselint.engine.plugins import get_plugin_manager
    from caselint.report.json_report import render_json

    t1 = time.perf_counter()
    pm = get_plugin_manager()
    case = lint_case(path, pm=pm, read_mesh=_reader_with_cli_limit())
    text = render_json(build_report([case], pm))
    t2 = time.perf_counter()
    outcomes = {c.rule: c.outcome for c in case.checks}
    return {"s": t2 - t1, "import_s": t1 - t0, "hwm_mb": hwm_mb(), "json_bytes": len(text),
            "outcomes": outcomes}


def _reader_with_cli_limit():
    """``read_mesh`` with the memory limit ``caselint check`` takes from
    ``CASELINT_MEMORY_LIMIT`` (None: the library's default, a share of what is available)."""
    import functools
    import os

    from caselint.mesh import read_mesh
    from caselint.mesh.limits import ENV_LIMIT, memory_limit

    if os.environ.get(ENV_LIMIT) is None:
        return None
    return functools.partial(read_mesh, memory_limit=memory_limit(os.environ[ENV_LIMIT],
                                                                  ENV_LIMIT))


def run_stages(path: str, traced: bool) -> dict:
    if traced:
        tracemalloc.start()
    from caselint.api import load_case, load_case_mesh, select_for_case, with_declared_roles
    from caselint.engine.plugins import get_plugin_manager
    from caselint.engine.registry import Registry
    from caselint.engine.runner import run_case
    from caselint.mesh import quality

    stages = Stages(traced)
    registry = Registry(get_plugin_manager())
    case = load_case(path, registry=registry)
    selection = select_for_case(case, registry)
    stages.done("setup")
    mesh = load_case_mesh(case, None, tuple(registry.mesh_readers.values()))
    case = with_declared_roles(case, mesh)
    stages.done("read")
    mesh.cell_faces  # noqa: B018 - the faces of every cell (pairing happened in the read)
    stages.done("topology")
    mesh.cell_volumes, mesh.face_areas  # noqa: B018 - geometry
    stages.done("geometry")
    quality.scaled_jacobian(mesh)
    stages.done("cell metrics")

    def timed(rule):
        def check(ctx):
            try:
                return rule.check(ctx)
            finally:
                stages.done(f"rule {rule.id}")
        return dataclasses.replace(rule, check=check)

    rules = tuple(dataclasses.replace(a, rule=timed(a.rule)) for a in selection.rules)
    stages._t = time.perf_counter()
    run_case(case, rules, lambda: mesh)
    info = {"cells": mesh.n_cells, "points": mesh.n_points, "faces": mesh.n_faces,
            "types": mesh.cell_counts}
    return {"stages": stages.rows, "hwm_mb": hwm_mb(), "mesh": info}


def run_vtk(path: str) -> dict:
    import vtk

    t0 = time.perf_counter()
    reader = vtk.vtkXMLUnstructuredGridReader()
    reader.SetFileName(path)
    reader.Update()
    t1 = time.perf_counter()
    # The file also holds the boundary elements; VTK's filters get the volume cells only.
    pick = vtk.vtkExtractCellsByType()
    pick.SetInputData(reader.GetOutput())
    for cell in (vtk.VTK_TETRA, vtk.VTK_HEXAHEDRON, vtk.VTK_WEDGE, vtk.VTK_PYRAMID):
        pick.AddCellType(cell)
    pick.Update()
    grid = pick.GetOutput()
    t2 = time.perf_counter()
    quality = vtk.vtkMeshQuality()
    quality.SetInputData(grid)
    quality.SetHexQualityMeasureToScaledJacobian()
    quality.SetTetQualityMeasureToScaledJacobian()
    quality.SetWedgeQualityMeasureToScaledJacobian()
    quality.SetPyramidQualityMeasureToScaledJacobian()
    quality.Update()
    t3 = time.perf_counter()
    size = vtk.vtkCellSizeFilter()
    size.SetInputData(grid)
    size.ComputeVertexCountOff()
    size.ComputeLengthOff()
    size.ComputeAreaOff()
    size.ComputeVolumeOn()
    size.ComputeSumOff()
    size.Update()
    t4 = time.perf_counter()
    surface = vtk.vtkDataSetSurfaceFilter()
    surface.SetInputData(grid)
    surface.Update()
    t5 = time.perf_counter()
    return {"read_s": t1 - t0, "quality_s": t3 - t2, "volume_s": t4 - t3, "surface_s": t5 - t4,
            "filters_s": t5 - t2, "cells": grid.GetNumberOfCells(),
            "surface_cells": surface.GetOutput().GetNumberOfCells(), "hwm_mb": hwm_mb()}


def main(argv: list[str]) -> None:
    mode, path = argv[0], argv[1]
    # Every mode runs with the allocator settings `caselint check` applies to its own
    # process (caselint/allocator.py), meshio's and VTK's reads included, so that the
    # ratios compare the work and not the allocator.
    from caselint.allocator import tune_allocator

    tune_allocator()
    traced = "--traced" in argv
    out = {"meshio": lambda: run_meshio(path), "check": lambda: run_check(path),
           "stages": lambda: run_stages(path, traced), "vtk": lambda: run_vtk(path)}[mode]()
    print(json.dumps(out))


if __name__ == "__main__":
    main(sys.argv[1:])
