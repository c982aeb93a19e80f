"""Gap rays and wall-layer walks: compiled kernels against the numpy reference (1M cells).

Each run is a fresh process that builds the benchmark duct (``bench_meshes.py``, shuffled
hexahedra, in memory: no file), computes its geometry (untimed), then times the rays from
the four walls (``caselint.mesh.rays.wall_rays``, as ``gap-cells`` casts them) and the wall
walks (``caselint.mesh.wall_layers.wall_layers`` from the same faces, ``reach_m`` 0.5 m:
the boundary-layer thickness ``boundary-layer-cells`` takes for the benchmark case, half
the hydraulic diameter of the fully developed duct flow), with ``CASELINT_KERNELS=numpy``
and ``=numba`` in alternation (kernels compiled once before). Medians go into ``benchmarks/README.md``
between the marches markers. Not collected by pytest.

Run:  python benchmarks/bench_marches.py [--cells 1M] [--runs 3]
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
sys.path.insert(0, str(HERE))
START, END = "<!-- marches-results:start -->", "<!-- marches-results:end -->"
WALLS = ("floor", "roof", "wall-north", "wall-south")


def work(cells: int) -> dict:
    import numpy as np

    import bench_meshes
    from caselint.allocator import tune_allocator
    from caselint.mesh import rays, wall_layers
    from caselint.mesh.formats.meshio_files import mesh_from_meshio

    tune_allocator()
    tags = {k + 1: name for k, name in enumerate(bench_meshes.NAMES)}
    mesh = mesh_from_meshio(bench_meshes.build("hex-shuffled", cells),
                            tag_array="gmsh:physical", tags=tags)
    mesh.geometry, mesh.face_areas, mesh.cell_faces, mesh.cell_face_table()  # noqa: B018
    faces = np.concatenate([mesh.group_faces(w) for w in WALLS])
    t0 = time.perf_counter()
    hits = rays.wall_rays(mesh, WALLS)
    t1 = time.perf_counter()
    layers = wall_layers.wall_layers(mesh, faces, reach_m=0.5)
    t2 = time.perf_counter()
    return {"cells": mesh.n_cells, "rays": hits.n_rays, "walks": len(layers.faces),
            "walked": int(layers.n_walked.sum()), "rays_s": t1 - t0, "walls_s": t2 - t1,
            "digest": [float(hits.width.sum()), int(hits.cells.sum()),
                       float(layers.thickness.sum()), int(layers.n_layers.sum())]}


def main() -> None:
    from bench_check import parse_size

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", default="1M")
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--no-readme", action="store_true")
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        print(json.dumps(work(int(args.worker))))
        return
    cells = parse_size(args.cells)

    def run(mode: str) -> dict:
        env = {**os.environ, "PYTHONPATH": str(HERE.parent), "CASELINT_KERNELS": mode}
        done = subprocess.run([sys.executable, __file__, "--worker", str(cells)], env=env,
                              capture_output=True, text=True, check=True)
        return json.loads(done.stdout.strip().splitlines()[-1])

    run("numba")                                  # compile (or load) the kernels once
    results: dict[str, list[dict]] = {"numpy": [], "numba": []}
    for _ in range(args.runs):
        for mode in results:
            results[mode].append(run(mode))
            print(mode, results[mode][-1], file=sys.stderr)
    same = all(r["digest"] == results["numpy"][0]["digest"] for rs in results.values() for r in rs)
    med = {m: {k: statistics.median(r[k] for r in rs) for k in ("rays_s", "walls_s")}
           for m, rs in results.items()}
    info = results["numpy"][0]
    lines = [f"Measured {time.strftime('%Y-%m-%d')}: {info['cells']:,} shuffled hexahedra, "
             f"{info['rays']:,} rays, {info['walks']:,} walks ({info['walked']:,} cells walked); "
             f"median of {args.runs} fresh processes per path, alternating; same results both "
             f"ways: {'yes' if same else 'NO'}; 1-minute load average at the end "
             f"{os.getloadavg()[0]:.2f}.", "",
             "| march | numpy s | compiled s | **speed-up** | target |", "|---|---:|---:|---:|---|"]
    for key, name in (("rays_s", "gap rays"), ("walls_s", "wall walks")):
        a, b = med["numpy"][key], med["numba"][key]
        lines.append(f"| {name} | {a:.2f} | {b:.2f} | **{a / b:.1f} x** | at least 5 x: "
                     f"{'**met**' if a / b >= 5 else '**not met**'} |")
    text = "\n".join(lines) + "\n"
    from bench_table import publish

    publish(text, START, END, not args.no_readme)


if __name__ == "__main__":
    main()
