"""Gap rays and wall walks partition by partition against the whole-mesh walks.

On the benchmark duct (``bench_meshes.py``, shuffled hexahedra, numbered by caselint's
reader in locality order), in one process with the kernels ``auto`` picks (compiled from
75,000 cells, loaded once before timing): the rays from the four walls and the wall walks
from the same faces to 0.5 m (as ``bench_marches.py``), on the whole mesh and partition by
partition (``caselint.partition.rays`` / ``stacks``, rounds run one after the other in
this process). Partitions: ranges of cell ids (compact blocks of space, as a decomposed
case has), and cells dealt at random (every step crosses a partition boundary: the worst
case, on a smaller mesh since each piece then holds most of the mesh). Cutting the pieces
and their geometry are timed apart from the walks, as the whole mesh's geometry is not
counted in its walks. Medians of ``--runs`` repeats; results compared to the bit. Not
collected by pytest.

Run:  python benchmarks/bench_partition_walks.py [--cells 1M] [--dealt-cells 200k] [--runs 3]
"""

from __future__ import annotations

import argparse
import dataclasses
import statistics
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
START, END = "<!-- partition-walks:start -->", "<!-- partition-walks:end -->"
WALLS = ("floor", "roof", "wall-north", "wall-south")


def _median_s(function, runs: int):
    times, result = [], None
    for _ in range(runs):
        t0 = time.perf_counter()
        result = function()
        times.append(time.perf_counter() - t0)
    return statistics.median(times), result


def _same(a, b) -> bool:
    return all(np.array_equal(getattr(a, f.name), getattr(b, f.name), equal_nan=True)
               for f in dataclasses.fields(b) if isinstance(getattr(b, f.name), np.ndarray))


def measure(cells: int, split_name: str, parts: int, runs: int) -> dict:
    """Whole and partitioned walks on the duct of about ``cells`` cells."""
    import bench_meshes
    from caselint.mesh import kernels, rays, wall_layers
    from caselint.mesh.formats.meshio_files import mesh_from_meshio
    from caselint.partition import exchange, plan
    from caselint.partition import rays as part_rays
    from caselint.partition import stacks as part_stacks

    tags = {k + 1: name for k, name in enumerate(bench_meshes.NAMES)}
    mesh = mesh_from_meshio(bench_meshes.build("hex-shuffled", cells),
                            tag_array="gmsh:physical", tags=tags)
    mesh.geometry, mesh.face_areas, mesh.cell_faces, mesh.cell_face_table()  # noqa: B018
    faces = np.sort(np.concatenate([mesh.group_faces(w) for w in WALLS]))
    wall = np.zeros(mesh.n_faces, dtype=bool)
    wall[faces] = True
    rays_s, hits = _median_s(lambda: rays.march(mesh, faces, wall), runs)
    walls_s, layers = _median_s(
        lambda: wall_layers._walk(mesh, faces, (1.0, 0.9, 1.3), 45.0, 200, 0.5), runs)

    data = mesh.data
    split = (plan.by_ranges(data.n_cells, parts) if split_name == "ranges" else
             plan.by_labels(np.random.default_rng(1).integers(0, parts, data.n_cells)))
    t0 = time.perf_counter()
    team = exchange.walkers(data, split)
    t1 = time.perf_counter()
    for walker in team:
        with walker.same_kernels():
            m = walker.mesh
            m.geometry, m.face_areas, m.cell_faces, m.cell_face_table()  # noqa: B018
    t2 = time.perf_counter()
    p_rays_s, (p_hits, ray_rounds) = _median_s(
        lambda: part_rays.march(data, split, faces, wall, team=team), runs)
    p_walls_s, (p_layers, walk_rounds) = _median_s(
        lambda: part_stacks.wall_layers(data, split, faces, reach_m=0.5, team=team), runs)
    piece_cells = sum(w.piece.data.n_cells for w in team)
    return {"cells": mesh.n_cells, "split": split_name, "parts": split.n_parts,
            "compiled": kernels.use_compiled(mesh.n_cells), "rays": len(faces),
            "rays_s": rays_s, "walls_s": walls_s, "cut_s": t1 - t0, "pieces_s": t2 - t1,
            "piece_cells": piece_cells, "p_rays_s": p_rays_s, "p_walls_s": p_walls_s,
            "ray_rounds": ray_rounds, "walk_rounds": walk_rounds,
            "same": _same(p_hits, hits) and _same(p_layers, layers)}


def main() -> None:
    from bench_check import parse_size
    from bench_table import publish

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", default="1M")
    parser.add_argument("--dealt-cells", default="200k")
    parser.add_argument("--parts", type=int, default=8)
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--no-readme", action="store_true")
    args = parser.parse_args()
    rows = [measure(parse_size(args.cells), "ranges", args.parts, args.runs),
            measure(parse_size(args.dealt_cells), "dealt", args.parts, args.runs)]
    lines = [f"Measured {time.strftime('%Y-%m-%d')}: the benchmark duct (shuffled hexahedra), "
             f"rays and walks from its four walls; median of {args.runs} runs in one "
             "process; rounds run one after the other.", "",
             "| mesh | partitions | kernels | cut pieces s | their geometry s "
             "| rays whole s | rays partitioned s | rounds | walls whole s "
             "| walls partitioned s | rounds | same to the bit |",
             "|---|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---|"]
    for r in rows:
        lines.append(
            f"| {r['cells']:,} cells, {r['rays']:,} rays | {r['parts']} {r['split']} "
            f"({r['piece_cells'] / r['cells']:.1f}x the cells in pieces) "
            f"| {'compiled' if r['compiled'] else 'numpy'} | {r['cut_s']:.2f} "
            f"| {r['pieces_s']:.2f} | {r['rays_s']:.2f} | {r['p_rays_s']:.2f} "
            f"| {r['ray_rounds']} | {r['walls_s']:.2f} | {r['p_walls_s']:.2f} "
            f"| {r['walk_rounds']} | {'yes' if r['same'] else '**NO**'} |")
    publish("\n".join(lines) + "\n", START, END, not args.no_readme)


if __name__ == "__main__":
    main()
