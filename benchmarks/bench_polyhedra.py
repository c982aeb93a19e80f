"""Analysis time per cell of a polyhedral mesh against a hexahedral one (about 1M cells each).

The polyhedral mesh is a hexahedral block of the unit cube refined 2:1 inside a box
(``caselint.mesh.refined.refined_block``): the coarse cells next to the refined region have
up to 9+ faces with hanging nodes, the refined cells are hexahedra. The hexahedral meshes are
the same builder with nothing refined (face-based data, as a face-based reader would give)
and a shuffled element block read through the element path (``meshio_data``: renumbered,
half-faces paired). No file is involved: each worker builds its ``MeshData`` (untimed), then
times, in one fresh process, what the default rules compute from a mesh:

- topology and geometry: cell-face lists, face and cell geometry;
- metrics: non-orthogonality and skewness, growth ratio, face warp, scaled Jacobian (NaN on
  polyhedra), closure, faces with too few points, folded polyhedra, connected pieces,
  coincident points;
- marches: gap rays from the four side walls, wall-layer stacks walked 0.1 m from them.

The kernels are those ``caselint check`` would choose (compiled above the threshold).
Medians of ``--runs`` fresh processes go into ``benchmarks/README.md`` between the
polyhedra markers. Not collected by pytest.

Run:  python benchmarks/bench_polyhedra.py [--runs 3] [--n 100]
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
START, END = "<!-- polyhedra-results:start -->", "<!-- polyhedra-results:end -->"
WALLS = ("ymin", "ymax", "zmin", "zmax")
#: The refined box: 0.6 x 0.6 x 0.4 of the cube, an eighth of the cells split in eight.
REFINE = ((0.2, 0.8), (0.2, 0.8), (0.3, 0.7))


def build(kind: str, n: int):
    """The mesh data of ``kind`` with about ``n**3`` cells (polyhedra: n scaled to match)."""
    import numpy as np

    from caselint.mesh.refined import refined_block

    if kind == "polyhedra":
        m = round(n / 2.008 ** (1 / 3))           # refinement doubles the cell count
        axis = np.linspace(0.0, 1.0, m + 1)
        return refined_block(axis, axis, axis, REFINE)
    axis = np.linspace(0.0, 1.0, n + 1)
    if kind == "hex-faces":
        return refined_block(axis, axis, axis, ((2.0, 3.0),) * 3)     # nothing refined
    from caselint.mesh.blocks import shuffled, structured_hex
    from caselint.mesh.formats.meshio_files import meshio_data

    return meshio_data(shuffled(structured_hex(axis, axis, axis), seed=1))


def work(kind: str, n: int) -> dict:
    """Build, then time the analysis stages in this process."""
    import numpy as np

    from caselint.allocator import tune_allocator

    tune_allocator()
    from caselint.mesh import quality, rays, wall_layers
    from caselint.mesh.analysis import Mesh
    from caselint.rules import mesh_integrity

    data = build(kind, n)
    mesh = Mesh(data)
    times: dict[str, float] = {}
    t = time.perf_counter()

    def done(name: str) -> None:
        nonlocal t
        now = time.perf_counter()
        times[name] = now - t
        t = now

    mesh.cell_faces, mesh.geometry, mesh.face_areas  # noqa: B018
    done("topology + geometry")
    quality.non_orthogonality_deg(mesh), quality.growth_ratio(mesh), quality.face_warp_deg(mesh)
    quality.scaled_jacobian(mesh), quality.folded_polyhedra(mesh)
    mesh_integrity.cell_closure(mesh), mesh_integrity.short_faces(mesh)
    mesh_integrity.cell_pieces(mesh), mesh_integrity.coincident_points(mesh)
    done("metrics")
    hits = rays.wall_rays(mesh, WALLS)
    faces = np.concatenate([mesh.group_faces(w) for w in WALLS])
    layers = wall_layers.wall_layers(mesh, faces, reach_m=0.1)
    done("rays + walls")
    from caselint.mesh import kernels

    return {"kind": kind, "cells": mesh.n_cells, "faces": mesh.n_faces,
            "polyhedra": int(np.count_nonzero(mesh.cell_shape < 0)),
            "max_faces": int(mesh.cell_faces.counts().max()), "rays": hits.n_rays,
            "walked": int(layers.n_walked.sum()), "compiled": kernels.use_compiled(mesh.n_cells),
            "times": times, "total": sum(times.values())}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--n", type=int, default=100, help="cells per axis of the hexahedra")
    parser.add_argument("--no-readme", action="store_true")
    parser.add_argument("--worker", nargs=2, help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        print(json.dumps(work(args.worker[0], int(args.worker[1]))))
        return
    kinds = ("hex-elements", "hex-faces", "polyhedra")
    results: dict[str, list[dict]] = {k: [] for k in kinds}
    env = {**os.environ, "PYTHONPATH": str(HERE.parent)}
    for _ in range(args.runs):
        for kind in kinds:               # alternating: the kinds share the machine's state
            done = subprocess.run([sys.executable, __file__, "--worker", kind, str(args.n)],
                                  capture_output=True, text=True, env=env, check=True)
            results[kind].append(json.loads(done.stdout.strip().splitlines()[-1]))
            print(kind, results[kind][-1]["total"], file=sys.stderr)
    stages = list(results[kinds[0]][0]["times"])
    rows = []
    for kind in kinds:
        runs = results[kind]
        med = {s: statistics.median(r["times"][s] for r in runs) for s in stages}
        total = statistics.median(r["total"] for r in runs)
        rows.append((kind, runs[0], med, total, total / runs[0]["cells"] * 1e6))
    base = rows[0][4]
    lines = [f"Measured {time.strftime('%Y-%m-%d')}, median of {args.runs} fresh processes each "
             f"(kinds alternating); 1-minute load average at the end {os.getloadavg()[0]:.2f}.",
             "", "| mesh | cells | faces | polyhedra | most faces a cell | "
             + " | ".join(f"{s} s" for s in stages) + " | **total s** | µs per cell "
             "| per cell / hex-elements |",
             "|---|---:|---:|---:|---:|" + "---:|" * len(stages) + "---:|---:|---:|"]
    for kind, info, med, total, per_cell in rows:
        lines.append(f"| {kind} | {info['cells']:,} | {info['faces']:,} | {info['polyhedra']:,} "
                     f"| {info['max_faces']} | " + " | ".join(f"{med[s]:.2f}" for s in stages)
                     + f" | **{total:.2f}** | {per_cell:.2f} | **{per_cell / base:.2f}** |")
    text = "\n".join(lines) + "\n"
    from bench_table import publish

    publish(text, START, END, not args.no_readme)


if __name__ == "__main__":
    main()
