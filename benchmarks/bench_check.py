"""Speed and memory of ``caselint check`` against meshio's read and VTK's filters.

For each benchmark mesh (``bench_meshes.py``: a ventilated duct meshed as hexahedra in
mesher order, hexahedra with shuffled numbering, tetrahedra, and prism layers with a
tetrahedral core), written as VTU and as binary gmsh 2.2 with a case file each (steady,
walls named, flow data given, rule set ``general``), this script times, each run in a
fresh process (``bench_workers.py``):

- meshio's read alone, per file format;
- ``caselint check`` in process (``caselint.api.lint_case`` plus the JSON report), per format;
- the same split into stages (setup, read, topology, geometry, cell metrics, each rule),
  with the peak resident set after each stage and, in one extra traced run, the peak of
  traced allocations within each stage (on the VTU case);
- VTK as the peer: its XML reader, then ``vtkMeshQuality`` (scaled Jacobian),
  ``vtkCellSizeFilter`` (volume) and ``vtkDataSetSurfaceFilter`` (boundary extraction) on
  the volume cells of the same VTU. caselint's counterpart of that subset is topology
  (which pairs every face, a superset of boundary extraction) + geometry (volumes, face
  areas and centroids) + cell metrics (scaled Jacobian, with the minimum corner Jacobian
  and edge ratio computed in the same pass).

Times are medians over ``--runs`` runs; the tables go into ``benchmarks/README.md`` between
the check-result markers. Not collected by pytest.

Run:  python benchmarks/bench_check.py                       # 1M all kinds, 5M two kinds
      python benchmarks/bench_check.py --sizes 200k --runs 1 --no-readme    # quick look
"""

from __future__ import annotations

import argparse
import importlib.util
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

import bench_meshes  # noqa: E402  (benchmarks/ is not a package)
from bench_table import render_tables, write_readme  # noqa: E402

#: Kinds measured at each size by default: every kind at 1M, the scaling pair at 5M.
DEFAULT_PLAN = {1_000_000: bench_meshes.KINDS, 5_000_000: ("hex-shuffled", "tet")}


def parse_size(text: str) -> int:
    """``200k``, ``1M``, ``5M`` or a plain number of cells."""
    text = text.strip().lower()
    factor = {"k": 1_000, "m": 1_000_000}.get(text[-1:], 1)
    return int(float(text.rstrip("km")) * factor)


def worker(mode: str, path: Path, traced: bool = False) -> dict:
    """Run one measurement in a fresh interpreter and return its JSON."""
    cmd = [sys.executable, str(HERE / "bench_workers.py"), mode, str(path)]
    cmd += ["--traced"] if traced else []
    done = subprocess.run(cmd, capture_output=True, text=True, env={**os.environ,
                          "PYTHONPATH": str(HERE.parent)})
    if done.returncode:
        raise RuntimeError(f"{mode} {path} failed:\n{done.stderr[-3000:]}")
    return json.loads(done.stdout.strip().splitlines()[-1])


def median(rows: list[dict], key: str) -> float:
    return statistics.median(r[key] for r in rows)


def measure(kind: str, n_cells: int, folder: Path, runs: int, formats: tuple[str, ...]) -> dict:
    """Every measurement of one mesh; returns a row for the tables."""
    t = time.perf_counter()
    written = bench_meshes.write(kind, n_cells, folder)
    cases = {fmt: paths for fmt, paths in written.items() if fmt in formats or fmt == "vtu"}
    print(f"[{kind} {n_cells:,}] meshes written in {time.perf_counter() - t:.0f} s",
          file=sys.stderr)
    row: dict = {"kind": kind, "target_cells": n_cells, "formats": {}}
    for fmt, (case, mesh_file) in cases.items():
        reads = [worker("meshio", mesh_file) for _ in range(runs)]
        checks = [worker("check", case) for _ in range(runs)]
        row["formats"][fmt] = {
            "size_mb": mesh_file.stat().st_size / 2**20,
            "meshio_s": median(reads, "s"), "meshio_hwm_mb": max(r["hwm_mb"] for r in reads),
            "check_s": median(checks, "s"), "import_s": median(checks, "import_s"),
            "check_hwm_mb": max(c["hwm_mb"] for c in checks),
            "outcomes": checks[0]["outcomes"],
        }
        print(f"[{kind} {n_cells:,}] {fmt}: {row['formats'][fmt]}", file=sys.stderr)
    vtu_case, vtu = cases["vtu"]
    staged = [worker("stages", vtu_case) for _ in range(runs)]
    traced = worker("stages", vtu_case, traced=True)
    names = [s["stage"] for s in staged[0]["stages"]]
    row["stages"] = [{
        "stage": name,
        "s": statistics.median(run["stages"][i]["s"] for run in staged),
        "hwm_mb": max(run["stages"][i]["hwm_mb"] for run in staged),
        "traced_mb": traced["stages"][i]["traced_mb"],
    } for i, name in enumerate(names)]
    row["mesh"] = staged[0]["mesh"]
    vtks = [worker("vtk", vtu) for _ in range(runs)]
    row["vtk"] = {k: median(vtks, k) for k in ("read_s", "quality_s", "volume_s", "surface_s",
                                              "filters_s")}
    row["vtk"]["hwm_mb"] = max(v["hwm_mb"] for v in vtks)
    print(f"[{kind} {n_cells:,}] stages and VTK done", file=sys.stderr)
    for case, mesh_file in written.values():   # large meshes: free the disk for the next one
        case.unlink()
        mesh_file.unlink()
    return row


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", help="comma-separated cell counts (e.g. 1M,5M); default: "
                                        "1M for every kind and 5M for hex-shuffled and tet")
    parser.add_argument("--kinds", help=f"comma-separated kinds of {bench_meshes.KINDS}")
    parser.add_argument("--runs", type=int, default=3, help="runs per measurement (default 3)")
    parser.add_argument("--work", help="folder for the generated meshes (default: a temporary one)")
    parser.add_argument("--json", help="also write the raw results to this file")
    parser.add_argument("--large-formats", default="vtu",
                        help="formats checked on meshes above 2M cells (default vtu; "
                             "vtu,msh for both)")
    parser.add_argument("--no-readme", action="store_true", help="print the tables only")
    parser.add_argument("--merge", help="raw results (--json) of an earlier run: its rows for "
                                        "meshes not measured now are kept in the tables")
    args = parser.parse_args()
    if args.sizes or args.kinds:
        kinds = tuple(args.kinds.split(",")) if args.kinds else bench_meshes.KINDS
        sizes = [parse_size(s) for s in (args.sizes or "1M").split(",")]
        plan = {size: kinds for size in sizes}
    else:
        plan = DEFAULT_PLAN
    load = os.getloadavg()[0]
    rows = []
    with tempfile.TemporaryDirectory(prefix="caselint-bench-", dir=args.work) as tmp:
        for size, kinds in plan.items():
            for kind in kinds:
                formats = tuple(args.large_formats.split(",")) if size > 2_000_000 \
                    else ("vtu", "msh")
                rows.append(measure(kind, size, Path(tmp), args.runs, formats))
                if args.json:       # keep what is done if a later, larger run fails
                    Path(args.json).write_text(json.dumps({"rows": rows}, indent=1))
    if args.merge:
        measured = {(r["kind"], r["target_cells"]) for r in rows}
        earlier = json.loads(Path(args.merge).read_text())["rows"]
        kept = [r for r in earlier if (r["kind"], r["target_cells"]) not in measured]
        order = {(r["kind"], r["target_cells"]): i for i, r in enumerate(earlier)}
        rows = sorted(kept + rows, key=lambda r: (r["target_cells"],
                                                  order.get((r["kind"], r["target_cells"]), 99)))
    meta = {"date": time.strftime("%Y-%m-%d"), "cores": os.cpu_count(),
            "python": platform.python_version(), "machine": platform.machine(),
            "runs": args.runs, "load": load,
            # numba imports scipy.linalg (when installed) to look for a BLAS: 0.14 s a run
            "scipy": importlib.util.find_spec("scipy") is not None}
    if args.json:
        Path(args.json).write_text(json.dumps({"meta": meta, "rows": rows}, indent=1))
    text = render_tables(rows, meta)
    print(text)
    if not args.no_readme:
        write_readme(HERE / "README.md", text)


if __name__ == "__main__":
    main()
