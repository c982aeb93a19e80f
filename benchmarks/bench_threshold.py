"""Where the compiled kernels start to pay: ``caselint check`` with the numpy kernels and with
numba's, by mesh size, each run in a fresh process.

numba's import and the loading of the cached kernels cost a fixed time per process; below
some size the numpy path is faster. For each size this script writes the benchmark duct
(``bench_meshes.py``, shuffled hexahedra, VTU) and times the check (``bench_workers.py
check``, the mesh cache off) with ``CASELINT_KERNELS=numpy`` and ``=numba`` alternately,
after one untimed compiled run that fills the kernel cache. The medians go into
``benchmarks/README.md`` between the threshold markers; the crossover is what
``caselint.mesh.kernels.MIN_CELLS`` records. Not collected by pytest.

Run:  python benchmarks/bench_threshold.py [--sizes 5k,10k,20k,50k,100k] [--runs 5]
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import bench_meshes  # noqa: E402
from bench_check import parse_size, worker  # noqa: E402

START, END = "<!-- threshold-results:start -->", "<!-- threshold-results:end -->"


def timed(mode: str, case: Path) -> dict:
    """One check in a fresh process with the kernels of ``mode``."""
    os.environ["CASELINT_KERNELS"] = mode
    try:
        return worker("check", case)
    finally:
        del os.environ["CASELINT_KERNELS"]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="5k,10k,20k,50k,100k")
    parser.add_argument("--runs", type=int, default=5)
    parser.add_argument("--no-readme", action="store_true")
    args = parser.parse_args()
    rows = []
    with tempfile.TemporaryDirectory(prefix="caselint-threshold-") as tmp:
        for size in (parse_size(s) for s in args.sizes.split(",")):
            case, _ = bench_meshes.write("hex-shuffled", size, Path(tmp))["vtu"]
            timed("numba", case)                       # fill the kernel cache
            runs: dict[str, list[float]] = {"numpy": [], "numba": []}
            for _ in range(args.runs):
                for mode in runs:
                    runs[mode].append(timed(mode, case)["s"])
            cells = bench_meshes.hex_block(size).cells_dict["hexahedron"].shape[0]
            row = {"cells": cells, **{m: statistics.median(v) for m, v in runs.items()}}
            rows.append(row)
            print(row, file=sys.stderr)
    lines = [f"Measured {time.strftime('%Y-%m-%d')}, median of {args.runs} runs each, fresh "
             f"processes, kernels cached; 1-minute load average at the end "
             f"{os.getloadavg()[0]:.2f}.", "",
             "| cells | check s, numpy kernels | check s, compiled kernels | compiled / numpy |",
             "|---:|---:|---:|---:|"]
    for r in rows:
        lines.append(f"| {r['cells']:,} | {r['numpy']:.2f} | {r['numba']:.2f} "
                     f"| **{r['numba'] / r['numpy']:.2f}** |")
    text = "\n".join(lines) + "\n"
    from bench_table import publish

    publish(text, START, END, not args.no_readme)


if __name__ == "__main__":
    main()
