"""A decomposed case checked whole and in partitions: time, peak memory, same report.

The mesh is the benchmark duct of ``bench_meshes.py`` (hexahedra graded to the walls, the
near-wall rules run), written by the test writer (``tests/mesh_writers.py``) as a
decomposed face-based mesh-folder case: ``--procs`` processor folders (slabs along the
duct, binary files, addressing files), with its case file. It is checked as
``caselint check CASE --no-cache --format json`` three ways, each in a fresh process:

- ``whole``: the whole-mesh analysis;
- ``partitions``: ``--partitions auto`` (the processor folders), analysed one after the
  other in the process, the rays and wall walks too (exchange rounds between the pieces);
- ``cluster``: ``--partitions auto --scheduler ADDRESS`` on a Dask ``LocalCluster`` of
  ``--workers`` worker processes started by this script; the workers read their pieces
  from the processor folders (the client sends where they are), and the rays and wall
  walks run there too, the walkers kept on the workers between rounds. The client's peak
  and the largest worker's are recorded apart.

Recorded: median wall time of ``--runs`` runs, time per million cells, the process's peak
resident set (``VmHWM``), and whether the JSON report (run time removed) equals the whole
run's. With ``--memory-limit SIZE`` each run also gets that limit. Results go into
``benchmarks/README.md`` between the partition-results markers.

Run:  python benchmarks/bench_partitions.py [--cells 4M] [--procs 8] [--runs 1] [--no-readme]
Not collected by pytest.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "tests"))

from bench_table import publish  # noqa: E402  (benchmarks/ is not a package)
from bench_workers import hwm_mb  # noqa: E402

START, END = "<!-- partition-results:start -->", "<!-- partition-results:end -->"


def parse_size(text: str) -> int:
    """``4M`` -> 4000000, ``500k`` -> 500000."""
    text = text.strip().lower()
    scale = {"k": 1_000, "m": 1_000_000}.get(text[-1:], 1)
    return int(float(text.rstrip("km")) * scale)


def make_case(n_cells: int, procs: int, folder: Path) -> tuple[Path, dict]:
    """The decomposed duct and its case file; the case file's path and the mesh's counts."""
    import numpy as np

    import bench_meshes
    from caselint.mesh.formats.meshio_files import mesh_from_meshio
    from mesh_writers import write_decomposed

    data = mesh_from_meshio(bench_meshes.hex_block(n_cells)).data
    from caselint.mesh.analysis import Mesh

    x = Mesh(data).cell_centroids[:, 0]
    part = np.minimum((x / bench_meshes.LENGTH_M * procs).astype(int), procs - 1)
    write_decomposed(folder / "duct", data, part, binary=True)
    case = folder / "duct.caselint.yaml"
    case.write_text(bench_meshes.case_text("duct", tagged=False))
    return case, {"cells": data.n_cells, "faces": data.n_faces, "points": data.n_points}


def worker(argv: list[str]) -> None:
    """Run ``caselint`` with ``argv`` in this process; print wall time, exit code, peak."""
    from caselint.cli import main

    start = time.perf_counter()
    try:
        code = main(argv)
    except SystemExit as exc:
        code = exc.code
    print(json.dumps({"wall_s": time.perf_counter() - start, "code": code, "hwm_mb": hwm_mb()}))


def run_once(case: Path, out: Path, extra: list[str]) -> dict:
    """One ``caselint check`` in a fresh process."""
    argv = ["check", str(case), "--no-cache", "--format", "json", "--output", str(out), *extra]
    done = subprocess.run([sys.executable, __file__, "--worker", *argv],
                          capture_output=True, text=True)
    lines = [line for line in done.stdout.splitlines() if line.startswith("{")]
    if not lines:
        raise RuntimeError(f"worker failed: {done.stderr[-2000:]}")
    result = json.loads(lines[-1])
    result["stderr"] = done.stderr.strip().splitlines()[-1:] if done.stderr.strip() else []
    return result


def workers_peak(address: str) -> float:
    """The largest peak resident set of the cluster's workers so far (MB)."""
    import distributed

    def peak() -> float:                  # sent by value: the workers cannot import this file
        for line in open("/proc/self/status").read().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024
        return float("nan")

    with distributed.Client(address) as client:
        return max(client.run(peak).values())


def report_text(path: Path) -> str | None:
    """The JSON report without its run time, for comparison (None when not written)."""
    if not path.is_file():
        return None
    report = json.loads(path.read_text())
    for case in report.get("cases", []):
        case.pop("duration_s", None)
    return json.dumps(report, sort_keys=True)


def measure(case: Path, runs: int, workers: int, limit: str | None) -> dict:
    """Every way, ``runs`` times; medians, peaks and whether the reports are equal."""
    import distributed

    extra = ["--memory-limit", limit] if limit else []
    ways = {"whole": [], "partitions": ["--partitions", "auto"]}
    rows = {}
    with distributed.LocalCluster(n_workers=workers, threads_per_worker=1, processes=True,
                                  dashboard_address=None) as cluster:
        ways["cluster"] = ["--partitions", "auto", "--scheduler", cluster.scheduler_address]
        for name, options in ways.items():
            out = case.parent / f"report-{name}.json"
            results = [run_once(case, out, [*options, *extra]) for _ in range(runs)]
            rows[name] = {
                "wall_s": statistics.median(r["wall_s"] for r in results),
                "hwm_mb": max(r["hwm_mb"] for r in results),
                "code": results[-1]["code"], "stderr": results[-1]["stderr"],
                "report": report_text(out),
                "workers_mb": workers_peak(cluster.scheduler_address) if name == "cluster"
                else None,
            }
    whole = rows["whole"]["report"]
    for row in rows.values():
        row["same"] = row.pop("report") == whole and whole is not None
    return rows


def table(rows: dict, counts: dict, args) -> str:
    """The Markdown results block."""
    lines = [
        f"Measured {time.strftime('%Y-%m-%d')} on {os.cpu_count()} cores, Python "
        f"{platform.python_version()}, {platform.machine()}; {counts['cells']:,} hexahedra in "
        f"{args.procs} processor folders (binary); median of {args.runs} run(s), each in a "
        f"fresh process; LocalCluster of {args.workers} worker processes"
        + (f"; --memory-limit {args.memory_limit}" if args.memory_limit else "") + ".",
        "",
        "| way | exit | wall s | s per M cells | peak RSS MB (client) | peak RSS MB (each "
        "worker) | report equal to whole |",
        "|---|---:|---:|---:|---:|---:|---|",
    ]
    for name, row in rows.items():
        per = row["wall_s"] / (counts["cells"] / 1e6)
        workers = "-" if row["workers_mb"] is None else f"{row['workers_mb']:.0f}"
        lines.append(f"| {name} | {row['code']} | {row['wall_s']:.1f} | {per:.2f} | "
                     f"{row['hwm_mb']:.0f} | {workers} | {'yes' if row['same'] else 'no'} |")
    for name, row in rows.items():
        if row["code"] not in (0, 1) and row["stderr"]:
            lines.append(f"\n{name}: {row['stderr'][0]}")
    return "\n".join(lines)


def main() -> None:
    if len(sys.argv) > 1 and sys.argv[1] == "--worker":
        worker(sys.argv[2:])
        return
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", default="4M", help="about this many cells (default 4M)")
    parser.add_argument("--procs", type=int, default=8, help="processor folders (default 8)")
    parser.add_argument("--workers", type=int, default=2, help="Dask workers (default 2)")
    parser.add_argument("--runs", type=int, default=1, help="runs per way (default 1)")
    parser.add_argument("--memory-limit", help="give each run this --memory-limit")
    parser.add_argument("--work", help="folder for the case (default: a temporary one)")
    parser.add_argument("--no-readme", action="store_true", help="print the table only")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(args.work or tmp)
        folder.mkdir(parents=True, exist_ok=True)
        case, counts = make_case(parse_size(args.cells), args.procs, folder)
        rows = measure(case, args.runs, args.workers, args.memory_limit)
    text = table(rows, counts, args)
    publish(text + "\n", START, END, readme=not args.no_readme)


if __name__ == "__main__":
    main()
