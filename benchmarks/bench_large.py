"""One large run: meshio's read and ``caselint check`` of a 20M-cell mesh, time and peak memory.

The full comparison (``bench_check.py``) runs every measurement several times; at 20M
cells one run of each takes minutes, so this script makes one VTU mesh (``bench_meshes``,
default the shuffled hexahedra), then runs meshio's read and the check once each in a
fresh process (``bench_workers.py``) and writes one table row into ``benchmarks/README.md``
between the large-result markers. Not collected by pytest.

Run:  python benchmarks/bench_large.py [--cells 20M] [--kind hex-shuffled]
"""

from __future__ import annotations

import argparse
import contextlib
import io
import os
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import bench_meshes  # noqa: E402
from bench_check import parse_size, worker  # noqa: E402
from bench_table import write_readme  # noqa: E402

START, END = "<!-- large-results:start -->", "<!-- large-results:end -->"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", default="20M", help="cells (default 20M)")
    parser.add_argument("--kind", default="hex-shuffled", choices=bench_meshes.KINDS)
    parser.add_argument("--work", help="folder for the mesh (default: a temporary one)")
    parser.add_argument("--no-readme", action="store_true", help="print the row only")
    parser.add_argument("--memory-limit", default="off",
                        help="CASELINT_MEMORY_LIMIT for the check (default off: the default "
                             "limit, 75 %% of the available memory, refuses 20M hexahedra on "
                             "a 24 GB machine by its estimate of 1000 bytes a cell)")
    args = parser.parse_args()
    os.environ["CASELINT_MEMORY_LIMIT"] = args.memory_limit
    import meshio

    n = parse_size(args.cells)
    with tempfile.TemporaryDirectory(prefix="caselint-large-", dir=args.work) as tmp:
        t = time.perf_counter()
        mesh = bench_meshes.build(args.kind, n)
        vtu = Path(tmp) / "large.vtu"
        plain = meshio.Mesh(mesh.points, mesh.cells,
                            cell_data={"gmsh:physical": mesh.cell_data["gmsh:physical"]})
        del mesh
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
            meshio.write(vtu, plain)
        cells = sum(len(b.data) for b in plain.cells if b.type in ("hexahedron", "tetra", "wedge"))
        del plain
        case = Path(tmp) / "large.caselint.yaml"
        case.write_text(bench_meshes.case_text(vtu.name, tagged=True))
        print(f"mesh of {cells:,} cells written in {time.perf_counter() - t:.0f} s", file=sys.stderr)
        read = worker("meshio", vtu)
        print(f"meshio read {read}", file=sys.stderr)
        check = worker("check", case)
        print(f"check {check}", file=sys.stderr)
        size_mb = vtu.stat().st_size / 2**20
    row = (f"| {args.kind} {cells / 1e6:.1f}M | VTU (zlib) | {size_mb:.0f} | {read['s']:.1f} "
           f"| {check['s']:.1f} | **{check['s'] / read['s']:.1f}** | {check['s'] / cells * 1e6:.2f} "
           f"| {check['hwm_mb'] / 1024:.1f} | {check['hwm_mb'] / (cells / 1e6):.0f} |")
    text = (f"Measured {time.strftime('%Y-%m-%d')}, one run each in a fresh process; 1-minute "
            f"load average at the end {os.getloadavg()[0]:.2f}.\n\n"
            "| mesh | format | file MB | meshio read s | caselint check s | check / read "
            "| µs per cell | peak RSS GB | MB per M cells |\n"
            "|---|---|---:|---:|---:|---:|---:|---:|---:|\n" + row + "\n")
    print(text)
    if not args.no_readme:
        write_readme(HERE / "README.md", text, START, END)


if __name__ == "__main__":
    main()
