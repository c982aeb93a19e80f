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

``--block cubes`` writes the same block unrefined instead (hexahedra only), ``--formats``
picks formats by the start of their label (``--formats "face folder, ASCII"``).

Each file is read by ``caselint.mesh.read_mesh`` (parsing, checks, shape recognition,
the face-based mesh; no geometry) in a fresh process, ``--runs`` times; the table gives
the median wall time of the read, of the whole process (interpreter start, imports, read,
exit; timed by the parent, less the shape recognition timed after the read), the CPU time
of the read, the time of the shape recognition alone (timed again after the read) and the
peak resident set of the read (``VmHWM``). With ``--baseline DIR`` (a folder holding an
older ``caselint`` package, e.g. ``git archive COMMIT caselint | tar -x -C DIR``) every
file is also read by that code, in turns with the current code, and the table gives both
and their ratio. Before the timed runs each code reads the first file once, so that
numba's kernel cache is filled.
The table is written into ``benchmarks/README.md`` between the reader-results markers.

Run:  python benchmarks/bench_readers.py [--n 82] [--block refined|cubes] [--runs 3]
                                         [--baseline DIR] [--formats LABEL...] [--no-readme]
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


def make_files(n: int, folder: Path, block: str = "refined",
               formats: tuple[str, ...] = ()) -> tuple[dict[str, Path], dict]:
    """Write the benchmark mesh in every format (or those whose label starts with one of
    ``formats``); label -> path, and the mesh's counts."""
    import numpy as np
    import vtk

    from caselint.mesh.analysis import Mesh
    from caselint.mesh.refined import refined_block
    from mesh_writers import write_decomposed, write_face_folder
    from vtk_writers import vtk_polyhedral_grid, write_vtu_22_polyhedra

    axis = np.linspace(0.0, 4.0, n + 1)
    core = ((1.0, 3.0),) * 3 if block == "refined" else ((9.0, 9.5),) * 3   # (outside)
    data = refined_block(axis, axis, axis, core)
    counts = {"cells": data.n_cells, "faces": data.n_faces, "points": data.n_points,
              "shapes": Mesh(data).cell_counts}

    def decomposed(path: Path) -> Path:
        centres = Mesh(data).cell_centroids
        part = (centres[:, 0] > 2.0).astype(int) + 2 * (centres[:, 1] > 2.0)
        return write_decomposed(path, data, part, binary=True)

    def vtk_file(path: Path, xml: bool) -> Path:
        writer = vtk.vtkXMLUnstructuredGridWriter() if xml else vtk.vtkUnstructuredGridWriter()
        writer.SetFileName(str(path))
        writer.SetInputData(vtk_polyhedral_grid(data))
        if xml:
            writer.SetDataModeToAppended()
        else:
            writer.SetFileTypeToBinary()
        assert writer.Write() == 1
        return path

    writers = {
        "face folder, ASCII": lambda: write_face_folder(folder / "ascii", data),
        "face folder, binary": lambda: write_face_folder(folder / "binary", data, binary=True),
        "face folder, ASCII gzip": lambda: write_face_folder(folder / "gz", data, gz=True),
        "face folder, decomposed (4, binary)": lambda: decomposed(folder / "decomposed"),
        "VTU 2.3 appended zlib (VTK 9)": lambda: vtk_file(folder / "v23.vtu", True),
        "VTU 2.2 base64 zlib": lambda: write_vtu_22_polyhedra(folder / "v22.vtu", data),
        "legacy VTK 5.1 binary (VTK 9)": lambda: vtk_file(folder / "v51.vtk", False),
    }
    files = {label: write() for label, write in writers.items()
             if not formats or label.startswith(tuple(formats))}
    return files, counts


def worker(path: str) -> dict:
    """One read in this process."""
    import caselint
    from caselint.allocator import tune_allocator
    from caselint.mesh import read_mesh

    import dataclasses

    from caselint.mesh.shapes import recognise_shapes

    tune_allocator()
    cpu, wall = time.process_time(), time.perf_counter()
    mesh = read_mesh(path)
    wall, cpu = time.perf_counter() - wall, time.process_time() - cpu
    hwm = hwm_mb()
    after = time.perf_counter()
    bare = dataclasses.replace(mesh.data, shapes=())
    shapes = time.perf_counter()
    recognise_shapes(bare)
    done = time.perf_counter()
    return {"wall": wall, "cpu": cpu, "cells": mesh.n_cells, "hwm": hwm,
            "shapes": done - shapes, "after": done - after,
            "code": str(Path(caselint.__file__).parent)}


def read_once(path: Path, code: Path | None) -> dict:
    """One read in a fresh process by the current code, or by the package in ``code``; its
    result with the process's wall time (less the shape recognition timed after the read)."""
    env = dict(os.environ)
    if code is not None:
        env["PYTHONPATH"] = os.pathsep.join([str(code), env.get("PYTHONPATH", "")])
    start = time.perf_counter()
    done = subprocess.run([sys.executable, __file__, "--worker", str(path)], check=True,
                          capture_output=True, text=True, env=env)
    result = json.loads(done.stdout)
    result["process"] = time.perf_counter() - start - result["after"]
    expected = (code / "caselint") if code is not None else HERE.parent / "caselint"
    assert Path(result["code"]).resolve() == expected.resolve(), result["code"]
    return result


def size_mb(path: Path) -> float:
    files = [path] if path.is_file() else [p for p in path.rglob("*") if p.is_file()]
    return sum(p.stat().st_size for p in files) / 1e6


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=82, help="coarse cells per axis")
    parser.add_argument("--block", choices=("refined", "cubes"), default="refined")
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--baseline", type=Path, help="folder holding an older caselint")
    parser.add_argument("--formats", nargs="*", default=(), help="labels (their start)")
    parser.add_argument("--no-readme", action="store_true")
    parser.add_argument("--worker", help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.worker:
        print(json.dumps(worker(args.worker)))
        return
    codes = [None] if args.baseline is None else [args.baseline.resolve(), None]
    with tempfile.TemporaryDirectory() as tmp:
        files, counts = make_files(args.n, Path(tmp), args.block, tuple(args.formats))
        load = os.getloadavg()[0]
        for code in codes:                   # fill each code's kernel cache
            read_once(next(iter(files.values())), code)
        rows = []
        for label, path in files.items():
            runs = {code: [] for code in codes}
            for _ in range(args.runs):       # in turns, so that both meet the same load
                for code in codes:
                    runs[code].append(read_once(path, code))
            assert all(r["cells"] == counts["cells"] for rs in runs.values() for r in rs)
            med = {code: {k: statistics.median(r[k] for r in rs)
                          for k in ("wall", "process", "cpu", "shapes")}
                   for code, rs in runs.items()}
            rows.append((label, size_mb(path), med,
                         max(r["hwm"] for r in runs[None])))
            print(f"{label:40s} " + " / ".join(f"{m['wall']:.2f} s" for m in med.values()),
                  flush=True)
    print(table(rows, counts, args, load, codes))
    if not args.no_readme:
        readme = HERE / "README.md"
        text = readme.read_text()
        head, rest = text.split(START)
        _, tail = rest.split(END)
        readme.write_text(f"{head}{START}\n{table(rows, counts, args, load, codes)}\n{END}{tail}")


def table(rows: list, counts: dict, args, load: float, codes: list) -> str:
    """The results as the Markdown block of the README."""
    shapes = ", ".join(f"{v:,} {k}" for k, v in counts["shapes"].items())
    lines = [f"Measured {time.strftime('%Y-%m-%d')} on {os.cpu_count()} cores, Python "
             f"{platform.python_version()}, {platform.machine()}; {counts['cells']:,} cells "
             f"({shapes}), {counts['faces']:,} faces, {counts['points']:,} points; median of "
             f"{args.runs} runs, each in a fresh process; 1-minute load average before the "
             f"runs {load:.2f}.", ""]
    if len(codes) == 1:
        lines += ["| file | size MB | read s | process s | CPU s | of which shape "
                  "recognition s | peak RSS MB |", "|---|---:|---:|---:|---:|---:|---:|"]
        lines += [f"| {label} | {size:.0f} | **{m[None]['wall']:.2f}** | "
                  f"{m[None]['process']:.2f} | {m[None]['cpu']:.2f} | {m[None]['shapes']:.2f} "
                  f"| {hwm:.0f} |" for label, size, m, hwm in rows]
        return "\n".join(lines)
    base = codes[0]
    lines[0] += (f" Baseline: the package in `{base.name}` (an older commit), read in turns "
                 "with the current code.")
    lines += ["| file | size MB | read s, baseline | read s | ratio | process s, baseline | "
              "process s | ratio | shape recognition s, baseline / now | peak RSS MB |",
              "|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|"]
    for label, size, m, hwm in rows:
        old, new = m[base], m[None]
        lines.append(f"| {label} | {size:.0f} | {old['wall']:.2f} | **{new['wall']:.2f}** | "
                     f"{old['wall'] / new['wall']:.1f} | {old['process']:.2f} | "
                     f"**{new['process']:.2f}** | {old['process'] / new['process']:.1f} | "
                     f"{old['shapes']:.2f} / {new['shapes']:.2f} | {hwm:.0f} |")
    return "\n".join(lines)


if __name__ == "__main__":
    main()
