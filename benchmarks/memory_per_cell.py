"""Measure the memory ``caselint check`` needs per cell, for the constants of mesh/limits.py.

    python benchmarks/memory_per_cell.py            # 50k and 200k cells
    python benchmarks/memory_per_cell.py --small 20000 --large 80000

For each volume cell type it builds two meshes of the same block (hexahedra; tetrahedra,
six per hexahedron; wedges, two per hexahedron; pyramids, six per hexahedron around a
centre point), writes them as binary gmsh 2.2, and runs ``caselint.api.lint_case`` with
the ``general`` rule set on a case with walls, flow data and a time step (so the
near-wall and time-step rules run too) in a fresh process each. The peak resident memory
(``VmHWM``) of the larger run minus that of the smaller, over the difference in cells,
is the marginal cost per cell: the interpreter, imports and fixed costs cancel. Points
are charged per cell at the block's points-per-cell ratio. The mesh cache is switched off
(``CASELINT_CACHE_DIR`` points at an empty temporary folder and meshes are read once).
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import numpy as np

CASE = """caselint: 1
case: {{name: memory probe}}
mesh:
  file: {mesh}
  boundaries: {{xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall, zmax: wall}}
physics:
  fluid: {{density: 1.2, viscosity: 1.8e-5}}
  flow: {{kind: internal, velocity: 2.0, direction: [1, 0, 0], length: 0.5}}
  turbulence: {{model: k-omega-sst, wall_treatment: resolved}}
time: {{mode: transient, step: 1e-3, end: 1.0}}
checks: {{rule_sets: [general]}}
"""

WORKER = """
import sys, time
from pathlib import Path
start = time.perf_counter()
from caselint.api import lint_case
report = lint_case(sys.argv[1])
took = time.perf_counter() - start
for line in Path("/proc/self/status").read_text().splitlines():
    if line.startswith("VmHWM:"):
        print(int(line.split()[1]) * 1024, took, len(report.checks))
"""


def block(cell_type: str, n: int):
    """A meshio block of about ``n`` cells of ``cell_type`` on the unit cube, sides grouped."""
    import meshio

    from caselint.mesh.blocks import structured_hex, tetrahedralise

    per_hex = {"hexahedron": 1, "tetra": 6, "wedge": 2, "pyramid": 6}[cell_type]
    k = max(2, round((n / per_hex) ** (1 / 3)))
    axis = np.linspace(0.0, 1.0, k + 1)
    m = structured_hex(axis, axis, axis)
    if cell_type == "hexahedron":
        return m
    if cell_type == "tetra":
        return tetrahedralise(m)
    hexes = m.cells[0].data
    if cell_type == "wedge":
        # two prisms per hexahedron, split along the diagonal 0-2 / 4-6 of the x-y faces
        cells = np.vstack([hexes[:, [0, 1, 2, 4, 5, 6]], hexes[:, [0, 2, 3, 4, 6, 7]]])
        return meshio.Mesh(m.points, [("wedge", cells), m.cells[1]],
                           cell_data=_volume_data(m, len(cells)), field_data=m.field_data)
    centres = m.points[hexes].mean(axis=1)
    c = len(m.points) + np.arange(len(hexes))
    faces = ((0, 3, 2, 1), (4, 5, 6, 7), (0, 1, 5, 4), (1, 2, 6, 5), (2, 3, 7, 6), (3, 0, 4, 7))
    cells = np.vstack([np.column_stack([hexes[:, list(f)], c]) for f in faces])
    return meshio.Mesh(np.vstack([m.points, centres]), [("pyramid", cells), m.cells[1]],
                       cell_data=_volume_data(m, len(cells)), field_data=m.field_data)


def _volume_data(m, n_cells: int) -> dict:
    """The block's gmsh tags with the volume block's resized to ``n_cells`` cells."""
    return {k: [np.zeros(n_cells, dtype=np.int64), v[1]] for k, v in m.cell_data.items()}


def measure(cell_type: str, n: int, folder: Path) -> tuple[int, int, int, float]:
    """(cells, points, peak bytes, seconds) of one check in a fresh process."""
    from caselint.mesh.blocks import write_gmsh22

    m = block(cell_type, n)
    mesh = folder / f"{cell_type}-{n}.msh"
    write_gmsh22(m, mesh, binary=True)
    case = folder / f"{cell_type}-{n}.yaml"
    case.write_text(CASE.format(mesh=mesh.name), encoding="utf-8")
    env = dict(os.environ, CASELINT_DISABLE_PLUGIN_AUTOLOAD="1",
               CASELINT_CACHE_DIR=str(folder / "cache"), CASELINT_MEMORY_LIMIT="off")
    out = subprocess.run([sys.executable, "-c", WORKER, str(case)], capture_output=True,
                         text=True, env=env, check=True).stdout.split()
    cells = sum(len(b.data) for b in m.cells if b.type == cell_type)
    return cells, len(m.points), int(out[0]), float(out[1])


def main(argv: list[str] | None = None) -> int:
    """Print the marginal bytes per cell (points included) of each cell type, as JSON."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--small", type=int, default=50_000)
    parser.add_argument("--large", type=int, default=200_000)
    parser.add_argument("--types", default="hexahedron,tetra,wedge,pyramid",
                        help="cell types to measure, comma-separated")
    args = parser.parse_args(argv)
    results = {}
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        for cell_type in args.types.split(","):
            c0, p0, b0, t0 = measure(cell_type, args.small, folder)
            c1, p1, b1, t1 = measure(cell_type, args.large, folder)
            results[cell_type] = {
                "cells": [c0, c1], "points": [p0, p1], "peak_mb": [b0 / 1e6, b1 / 1e6],
                "seconds": [round(t0, 2), round(t1, 2)],
                "bytes_per_cell": round((b1 - b0) / (c1 - c0)),
                "points_per_cell": round((p1 - p0) / (c1 - c0), 3),
            }
            print(cell_type, results[cell_type], flush=True)
    print(json.dumps(results, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
