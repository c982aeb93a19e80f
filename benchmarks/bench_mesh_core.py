"""Throughput and memory of the mesh core on a 1M-cell hexahedral mesh.

Generates a 100 x 100 x 100 hexahedral block in mesher order and with shuffled point and
cell numbering, writes each as VTU (meshio's default zlib compression) and as binary
gmsh 2.2, then times, each in a fresh process:

- ``read``: ``meshio.read`` alone;
- ``full``: ``caselint.mesh.read_mesh`` + topology + geometry + every quality metric,
  with the time of each stage.

Times are the median of ``--runs`` runs (``time.perf_counter``; the process CPU time,
``time.process_time``, is shown too because it is less disturbed by other load); memory is the peak
resident set of the worker process (``VmHWM`` of /proc/self/status) and, in one extra run, the
peak of numpy/Python allocations traced by ``tracemalloc``. The table is written into
``benchmarks/README.md`` between the result markers.

Run:  python benchmarks/bench_mesh_core.py [--n 100] [--runs 3]
Target (from the issue): under 10 s and 1.5 GB for a 1M-cell hex mesh on a 2-core machine.
Not collected by pytest (the test suite lives in tests/).
"""

from __future__ import annotations

import argparse
import contextlib
import io
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from bench_workers import hwm_mb  # noqa: E402  (benchmarks/ is not a package)
START, END = "<!-- results:start -->", "<!-- results:end -->"


def make_files(n: int, folder: Path) -> dict[str, Path]:
    """Write the benchmark meshes; returns label -> path."""
    import meshio
    import numpy as np

    from caselint.mesh.blocks import shuffled, structured_hex, write_gmsh22

    axis = np.linspace(0.0, 1.0, n + 1)
    ordered = structured_hex(axis, axis, axis)
    files = {}
    for label, mesh in (("mesher order", ordered), ("shuffled", shuffled(ordered, seed=1))):
        key = label.split()[0]
        vtu, msh = folder / f"{key}.vtu", folder / f"{key}.msh"
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
            meshio.write(vtu, mesh)
        write_gmsh22(mesh, msh, binary=True)
        files[f"VTU (zlib), {label}"] = vtu
        files[f"gmsh 2.2 binary, {label}"] = msh
    return files


def worker(mode: str, path: str, traced: bool) -> dict:
    """One measurement in this process: returns seconds per stage and memory in MB."""
    from caselint.allocator import tune_allocator

    tune_allocator()          # as `caselint check` does for its own process, in both modes
    if traced:
        tracemalloc.start()
    stages: dict[str, float] = {}
    cpu0 = time.process_time()
    t0 = time.perf_counter()
    if mode == "read":
        import meshio

        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
            meshio.read(path)
        stages["read"] = time.perf_counter() - t0
    else:
        from caselint.mesh import quality, read_mesh

        mesh = read_mesh(path)
        t1 = time.perf_counter()
        mesh.cell_faces  # noqa: B018 - each cell's faces (the faces were paired in the read)
        t2 = time.perf_counter()
        mesh.cell_volumes, mesh.face_areas  # noqa: B018 - geometry
        t3 = time.perf_counter()
        for metric in (quality.non_orthogonality_deg, quality.skewness, quality.growth_ratio,
                       quality.scaled_jacobian, quality.min_corner_jacobian, quality.edge_ratio):
            metric(mesh)
        t4 = time.perf_counter()
        stages = {"read": t1 - t0, "topology": t2 - t1, "geometry": t3 - t2, "metrics": t4 - t3}
        stages["check"] = float(mesh.cell_volumes.sum())
    stages["total"] = time.perf_counter() - t0
    stages["cpu"] = time.process_time() - cpu0
    out = {"stages": stages, "rss_mb": hwm_mb()}
    if traced:
        out["traced_mb"] = tracemalloc.get_traced_memory()[1] / 2**20
    return out


def run_worker(mode: str, path: Path, traced: bool = False) -> dict:
    cmd = [sys.executable, __file__, "--worker", mode, str(path)] + (["--traced"] if traced else [])
    done = subprocess.run(cmd, capture_output=True, text=True, check=True)
    return json.loads(done.stdout.strip().splitlines()[-1])


def measure(files: dict[str, Path], runs: int) -> list[dict]:
    rows = []
    for label, path in files.items():
        reads = [run_worker("read", path) for _ in range(runs)]
        fulls = [run_worker("full", path) for _ in range(runs)]
        traced = run_worker("full", path, traced=True)
        med = {k: statistics.median(f["stages"][k] for f in fulls)
               for k in ("read", "topology", "geometry", "metrics", "total", "cpu")}
        rows.append({
            "file": label, "size_mb": path.stat().st_size / 2**20,
            "meshio_read_s": statistics.median(r["stages"]["total"] for r in reads),
            **{f"{k}_s": v for k, v in med.items()},
            "rss_mb": max(f["rss_mb"] for f in fulls),
            "read_rss_mb": max(r["rss_mb"] for r in reads),
            "traced_mb": traced["traced_mb"],
        })
        print(f"{label}: {rows[-1]}", file=sys.stderr)
    return rows


def table(rows: list[dict], n: int, runs: int, load: float) -> str:
    head = (f"Measured {time.strftime('%Y-%m-%d')} on {os.cpu_count()} cores, Python "
            f"{platform.python_version()}, {platform.machine()}; {n ** 3:,} hexahedra, "
            f"{(n + 1) ** 3:,} points; median of {runs} runs, each in a fresh process; "
            f"1-minute load average before the runs {load:.2f}.\n\n")
    lines = ["| file | size MB | meshio read s | caselint read s | topology s | geometry s "
             "| metrics s | **total s** | total CPU s | peak RSS MB (meshio only) "
             "| peak RSS MB | traced peak MB |",
             "|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|"]
    for r in rows:
        lines.append(
            f"| {r['file']} | {r['size_mb']:.0f} | {r['meshio_read_s']:.2f} | {r['read_s']:.2f} "
            f"| {r['topology_s']:.2f} | {r['geometry_s']:.2f} | {r['metrics_s']:.2f} "
            f"| **{r['total_s']:.2f}** | {r['cpu_s']:.2f} | {r['read_rss_mb']:.0f} "
            f"| {r['rss_mb']:.0f} "
            f"| {r['traced_mb']:.0f} |")
    return head + "\n".join(lines) + "\n"


def write_readme(text: str) -> None:
    readme = HERE / "README.md"
    old = readme.read_text() if readme.exists() else f"# Benchmarks\n\n{START}\n{END}\n"
    before, rest = old.split(START, 1)
    after = rest.split(END, 1)[1]
    readme.write_text(f"{before}{START}\n{text}{END}{after}")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=100, help="cells per axis (default 100)")
    parser.add_argument("--runs", type=int, default=3, help="runs per measurement (default 3)")
    parser.add_argument("--no-readme", action="store_true", help="print the table only")
    parser.add_argument("--worker", nargs=2, metavar=("MODE", "PATH"), help=argparse.SUPPRESS)
    parser.add_argument("--traced", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        print(json.dumps(worker(args.worker[0], args.worker[1], args.traced)))
        return
    with tempfile.TemporaryDirectory(prefix="caselint-bench-") as tmp:
        files = make_files(args.n, Path(tmp))
        load = os.getloadavg()[0]
        text = table(measure(files, args.runs), args.n, args.runs, load)
    print(text)
    if not args.no_readme:
        write_readme(text)


if __name__ == "__main__":
    main()
