"""Reading speed of the face-based and polyhedral readers on a 1M-cell mesh.

The mesh is a block of cubes refined 2:1 in its core (``caselint.mesh.refined``: about
1M cells, hexahedra and, next to the refinement, polyhedra with split faces), written by
the test writers (``tests/mesh_writers.py``, ``tests/vtk_writers.py``; the VTU 2.3 and
legacy files by VTK 9, a test dependency) as:

- the face-based mesh folder: ASCII (faces as a list of faces), binary (offsets + points),
  ASCII gzip-compressed, and decomposed into 4 processor folders (binary, addressing
  files) read as one mesh;
- VTU 2.3 (appended, zlib) and VTU 2.2 (base64, zlib), every cell a polyhedron;
- legacy VTK 5.1 binary, every cell a polyhedron.

Each file is read by ``caselint.mesh.read_mesh`` (parsing, checks, shape recognition,
the face-based mesh; no geometry) in a fresh process, ``--runs`` times; the table gives
the median wall time, the process CPU time, the time of the shape recognition alone
(timed again after the read) and the peak resident set of the read (``VmHWM``). It is
written into ``benchmarks/README.md`` between the reader-results markers.

Run:  python benchmarks/bench_readers.py [--n 82] [--runs 3] [--no-readme]
Target (issue 15): a 1M-cell ASCII mesh folder reads in about a second on this machine.
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

from bench_workers import hwm_mb  # noqa: E402  (benchmarks/ is not a package)

START, END = "<!-- reader-results:start -->", "<!-- reader-results:end -->"


def make_files(n: int, folder: Path) -> tuple[dict[str, Path], dict]:
    """Write the benchmark mesh in every format; label -> path, and the mesh's counts."""
    import numpy as np
    import vtk

    from caselint.mesh.analysis import Mesh
    from caselint.mesh.refined import refined_block
    from mesh_writers import write_decomposed, write_face_folder
    from vtk_writers import vtk_polyhedral_grid, write_vtu_22_polyhedra

    axis = np.linspace(0.0, 4.0, n + 1)
    data = refined_block(axis, axis, axis, ((1.0, 3.0),) * 3)
    counts = {"cells": data.n_cells, "faces": data.n_faces, "points": data.n_points,
              "shapes": Mesh(data).cell_counts}
    files = {
        "face folder, ASCII": write_face_folder(folder / "ascii", data),
        "face folder, binary": write_face_folder(folder / "binary", data, binary=True),
        "face folder, ASCII gzip": write_face_folder(folder / "gz", data, gz=True),
    }
    centres = Mesh(data).cell_centroids
    part = (centres[:, 0] > 2.0).astype(int) + 2 * (centres[:, 1] > 2.0)
    files["face folder, decomposed (4, binary)"] = write_decomposed(
        folder / "decomposed", data, part, binary=True)
    grid = vtk_polyhedral_grid(data)
    writer = vtk.vtkXMLUnstructuredGridWriter()
    writer.SetFileName(str(folder / "v23.vtu"))
    writer.SetInputData(grid)
    writer.SetDataModeToAppended()
    assert writer.Write() == 1
    files["VTU 2.3 appended zlib (VTK 9)"] = folder / "v23.vtu"
    files["VTU 2.2 base64 zlib"] = write_vtu_22_polyhedra(folder / "v22.vtu", data)
    legacy = vtk.vtkUnstructuredGridWriter()
    legacy.SetFileName(str(folder / "v51.vtk"))
    legacy.SetInputData(grid)
    legacy.SetFileTypeToBinary()
    assert legacy.Write() == 1
    files["legacy VTK 5.1 binary (VTK 9)"] = folder / "v51.vtk"
    return files, counts


def worker(path: str) -> dict:
    """One read in this process."""
    from caselint.allocator import tune_allocator
    from caselint.mesh import read_mesh

    import dataclasses

    from caselint.mesh.shapes import recognise_shapes

    tune_allocator()
    cpu, wall = time.process_time(), time.perf_counter()
    mesh = read_mesh(path)
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    hwm = hwm_mb()
    bare = dataclasses.replace(mesh.data, shapes=())
    shapes = time.perf_counter()
    recognise_shapes(bare)
    return {"wall": wall, "cpu": cpu, "cells": mesh.n_cells, "hwm": hwm,
            "shapes": time.perf_counter() - shapes}


def size_mb(path: Path) -> float:
    files = [path] if path.is_file() else [p for p in path.rglob("*") if p.is_file()]
    return sum(p.stat().st_size for p in files) / 1e6


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=82, help="coarse cells per axis")
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--no-readme", action="store_true")
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        print(json.dumps(worker(args.worker)))
        return
    with tempfile.TemporaryDirectory() as tmp:
        files, counts = make_files(args.n, Path(tmp))
        rows = []
        for label, path in files.items():
            runs = [json.loads(subprocess.run(
                [sys.executable, __file__, "--worker", str(path)], check=True,
                capture_output=True, text=True).stdout) for _ in range(args.runs)]
            assert all(r["cells"] == counts["cells"] for r in runs), label
            rows.append((label, size_mb(path), statistics.median(r["wall"] for r in runs),
                         statistics.median(r["cpu"] for r in runs),
                         statistics.median(r["shapes"] for r in runs),
                         max(r["hwm"] for r in runs)))
            print(f"{label:40s} {rows[-1][2]:.2f} s", flush=True)
    shapes = ", ".join(f"{v:,} {k}" for k, v in counts["shapes"].items())
    load = os.getloadavg()[0]
    lines = [f"Measured {time.strftime('%Y-%m-%d')} on {os.cpu_count()} cores, Python "
             f"{platform.python_version()}, {platform.machine()}; {counts['cells']:,} cells "
             f"({shapes}), {counts['faces']:,} faces, {counts['points']:,} points; median of "
             f"{args.runs} runs, each in a fresh process; 1-minute load average before the "
             f"runs {load:.2f}.", "",
             "| file | size MB | read s | CPU s | of which shape recognition s | peak RSS MB |",
             "|---|---:|---:|---:|---:|---:|"]
    lines += [f"| {label} | {size:.0f} | **{wall:.2f}** | {cpu:.2f} | {shapes:.2f} | {hwm:.0f} |"
              for label, size, wall, cpu, shapes, hwm in rows]
    table = "\n".join(lines)
    print(table)
    if not args.no_readme:
        readme = HERE / "README.md"
        text = readme.read_text()
        head, rest = text.split(START)
        _, tail = rest.split(END)
        readme.write_text(f"{head}{START}\n{table}\n{END}{tail}")


if __name__ == "__main__":
    main()
