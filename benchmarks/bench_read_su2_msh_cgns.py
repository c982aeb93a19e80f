"""Reading speed of caselint's own mesh readers on a 1M-cell mesh, one row per format.

The mesh is the ``hex`` duct of ``bench_meshes.py`` (about 1M hexahedra, six named
sides). It is written as VTU (the reference, read through meshio), SU2 (ASCII), the
face-based ``.msh`` (ASCII and binary sections) and CGNS/HDF5 (element sections, and the
same cells as NGON_n/NFACE_n polyhedra). Each file is read with ``read_mesh`` (reading,
building faces with owner and neighbour, renumbering, groups) in a fresh process per
run; the median of the runs is reported with the worker's peak resident memory.

    python benchmarks/bench_read_su2_msh_cgns.py                # 1M cells, 3 runs, updates README
    python benchmarks/bench_read_su2_msh_cgns.py --n 20000 --runs 1 --no-readme
"""

from __future__ import annotations

import argparse
import json
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import meshio
import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "tests"))

from bench_meshes import ROLES, hex_block  # noqa: E402

MARK = ("<!-- su2-msh-cgns:start -->", "<!-- su2-msh-cgns:end -->")


def _element_mesh(m: meshio.Mesh):
    from mixed_mesh import ElementMesh

    names = {int(v[0]): k for k, v in m.field_data.items()}
    quads, tag = m.cells[1].data, np.asarray(m.cell_data["gmsh:physical"][1])
    return ElementMesh(m.points, [("hexahedron", m.cells[0].data)],
                       [("quad", quads[tag == t], names[t]) for t in sorted(names)])


def write_su2(mesh, path: Path) -> None:
    """SU2 ASCII, element and point tables formatted by numpy."""
    hexes = mesh.blocks[0][1]
    groups = sorted({g for _, _, g in mesh.boundary})
    with open(path, "w") as out:
        out.write(f"NDIME= 3\nNELEM= {len(hexes)}\n")
        np.savetxt(out, np.column_stack([np.full(len(hexes), 12), hexes]), fmt="%d")
        out.write(f"NPOIN= {len(mesh.points)}\n")
        np.savetxt(out, mesh.points, fmt="%.17g")
        out.write(f"NMARK= {len(groups)}\n")
        for g in groups:
            quads = np.concatenate([c for _, c, name in mesh.boundary if name == g])
            out.write(f"MARKER_TAG= {g}\nMARKER_ELEMS= {len(quads)}\n")
            np.savetxt(out, np.column_stack([np.full(len(quads), 9), quads]), fmt="%d")


def write_msh(data, path: Path, binary: bool) -> None:
    """The face-based .msh: quadrilateral faces (face type 4) by zone, hexahedral cells."""
    faces = data.face_points.reshape(-1, 4)[:, ::-1] + 1        # right-hand normal into c0
    c0 = data.owner + 1
    c1 = np.where(data.neighbour >= 0, data.neighbour + 1, 0)
    zones = [("interior", "interior", np.flatnonzero(data.neighbour >= 0))] + [
        ("wall" if ROLES[g] == "wall" else {"inlet": "velocity-inlet",
                                            "outlet": "pressure-outlet"}[ROLES[g]], g,
         np.flatnonzero(data.face_group == i)) for i, g in enumerate(data.group_names)]
    bc = {"interior": 2, "wall": 3, "velocity-inlet": 10, "pressure-outlet": 5}
    with open(path, "wb") as out:
        out.write(b"(2 3)\n(10 (0 1 %x 0 3))\n(12 (0 1 %x 0))\n(13 (0 1 %x 0))\n"
                  % (data.n_points, data.n_cells, data.n_faces))
        if binary:
            out.write(b"(3010 (1 1 %x 1 3)(" % data.n_points + data.points.astype("<f8")
                      .tobytes() + b")End of Binary Section 3010)\n")
        else:
            out.write(b"(10 (1 1 %x 1 3)(\n" % data.n_points)
            np.savetxt(out, data.points, fmt="%.17g")
            out.write(b"))\n")
        out.write(b"(12 (2 1 %x 1 4))\n" % data.n_cells)
        first = 1
        for z, (kind, name, ids) in enumerate(zones, start=3):
            rows = np.column_stack([faces[ids], c0[ids], c1[ids]])
            head = (z, first, first + len(ids) - 1, bc[kind])
            if binary:
                out.write(b"(3013 (%x %x %x %x 4)(" % head + rows.astype("<i4").tobytes()
                          + b")End of Binary Section 3013)\n")
            else:
                out.write(b"(13 (%x %x %x %x 4)(\n" % head)
                np.savetxt(out, rows, fmt="%x")
                out.write(b"))\n")
            out.write(b"(45 (%d %s %s)())\n" % (z, kind.encode(), name.encode()))
            first += len(ids)


def write_files(n_cells: int, folder: Path) -> dict[str, Path]:
    """Every format of the benchmark mesh in ``folder``."""
    from cgns_writer import write_cgns_elements, write_cgns_ngon

    from caselint.mesh import read_mesh

    m = hex_block(n_cells)
    meshio.write(folder / "duct.vtu", m)
    mesh = _element_mesh(m)
    files = {"VTU (zlib), through meshio": folder / "duct.vtu"}
    write_su2(mesh, folder / "duct.su2")
    files["SU2 ASCII"] = folder / "duct.su2"
    data = read_mesh(files["SU2 ASCII"]).data        # faces with owner, neighbour, groups
    for binary in (False, True):
        path = folder / f"duct-{'binary' if binary else 'ascii'}.msh"
        write_msh(data, path, binary)
        files[f"face-based .msh, {'binary' if binary else 'ASCII'}"] = path
    files["CGNS, HEXA_8 section"] = write_cgns_elements(mesh, folder / "duct.cgns")
    files["CGNS, NGON_n/NFACE_n"] = write_cgns_ngon(data, folder / "duct-ngon.cgns")
    return files


def _worker(path: str) -> None:
    t0 = time.perf_counter()
    from caselint.mesh import read_mesh

    mesh = read_mesh(path)
    seconds = time.perf_counter() - t0
    from bench_workers import hwm_mb

    print(json.dumps({"s": seconds, "rss": hwm_mb(), "cells": mesh.n_cells,
                      "groups": len(mesh.group_names)}))


def measure(files: dict[str, Path], runs: int) -> list[tuple]:
    rows = []
    for label, path in files.items():
        out = [json.loads(subprocess.run([sys.executable, __file__, "--worker", str(path)],
                                         check=True, capture_output=True,
                                         text=True).stdout) for _ in range(runs)]
        rows.append((label, path.stat().st_size / 1e6, statistics.median(r["s"] for r in out),
                     max(r["rss"] for r in out), out[0]["cells"], out[0]["groups"]))
        print(rows[-1], flush=True)
    return rows


def table(rows, runs: int) -> str:
    lines = [f"Measured {time.strftime('%Y-%m-%d')} on {platform.machine()}, Python "
             f"{platform.python_version()}; {rows[0][4]:,} hexahedra; median of {runs} runs, "
             "each in a fresh process (import of caselint included).", "",
             "| file | size MB | read_mesh s | peak RSS MB | groups |",
             "|---|---:|---:|---:|---:|"]
    lines += [f"| {r[0]} | {r[1]:.0f} | {r[2]:.2f} | {r[3]:.0f} | {r[5]} |" for r in rows]
    return "\n".join(lines)


def main(argv: list[str]) -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, default=1_000_000)
    parser.add_argument("--runs", type=int, default=3)
    parser.add_argument("--no-readme", action="store_true")
    parser.add_argument("--only", help="measure the formats whose label holds this text")
    parser.add_argument("--worker")
    args = parser.parse_args(argv)
    if args.worker:
        _worker(args.worker)
        return
    with tempfile.TemporaryDirectory() as tmp:
        files = write_files(args.n, Path(tmp))
        rows = measure({k: v for k, v in files.items() if (args.only or "") in k}, args.runs)
    text = table(rows, args.runs)
    print(text)
    if not args.no_readme:
        readme = HERE / "README.md"
        old = readme.read_text()
        start, end = old.index(MARK[0]) + len(MARK[0]), old.index(MARK[1])
        readme.write_text(old[:start] + "\n" + text + "\n" + old[end:])


if __name__ == "__main__":
    main(sys.argv[1:])
