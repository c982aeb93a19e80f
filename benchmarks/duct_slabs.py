"""The benchmark duct written straight into processor folders, one slab at a time.

``bench_partitions.make_case`` builds the whole mesh in memory and splits it
(``tests/mesh_writers.write_decomposed``): fine up to some 20M cells, impossible at 100M on
this machine. This writer makes the same duct (``bench_meshes.hex_block``: the same grid,
the same cells and points with the same ids, the same slabs along x, the same patch names
and types) directly as a decomposed case: each processor folder's points, faces, owner,
neighbour, boundary and addressing files are computed from the structured indices of its
slab alone, so memory stays at one slab whatever the size.

Numbering (the undecomposed mesh the addressing files refer to): points and cells x
fastest, as ``structured_hex``; faces: the internal faces normal to x, y, z (owner the
lower cell, the normal towards the neighbour), then the patches in the order of their
names (floor, inlet, outlet, roof, wall-north, wall-south), each pointing out of the
mesh. A face between two slabs belongs to the lower slab; the upper slab lists it turned
round (first point kept) with a negative face address, as a decomposition writes it; the
two sides list it in the same (j, k) order.

Checked against ``make_case`` on small meshes by ``--verify`` (same report; see
``main``).

Run:  python benchmarks/duct_slabs.py --cells 100M --procs 64 --work DIR [--gz]
      python benchmarks/duct_slabs.py --verify
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "tests"))

#: Patches in the order the undecomposed folder lists them (sorted names), all of type patch.
PATCHES = ("floor", "inlet", "outlet", "roof", "wall-north", "wall-south")


def slab_bounds(nx: int, procs: int) -> list[tuple[int, int]]:
    """The x-index range of each processor's cells: the cell centre's x over the length,
    times ``procs``, as ``make_case`` splits them."""
    centres = (np.arange(nx) + 0.5) / nx
    part = np.minimum((centres * procs).astype(int), procs - 1)
    return [(int(np.searchsorted(part, p)), int(np.searchsorted(part, p, side="right")))
            for p in range(procs)]


class Slab:
    """The cells ``i0 <= i < i1`` of an ``nx x ny x nz`` block: its local and global ids."""

    def __init__(self, shape: tuple[int, int, int], i0: int, i1: int) -> None:
        self.nx, self.ny, self.nz = shape
        self.i0, self.i1, self.w = i0, i1, i1 - i0

    def grid(self, a, j, k) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Index arrays over the ranges ``a``, ``j``, ``k`` (``a`` fastest)."""
        kk, jj, aa = np.meshgrid(k, j, a, indexing="ij")
        return aa.ravel(), jj.ravel(), kk.ravel()

    def point(self, a, j, k) -> np.ndarray:
        return a + (self.w + 1) * (j + (self.ny + 1) * k)

    def cell(self, a, j, k) -> np.ndarray:
        return a + self.w * (j + self.ny * k)

    def faces(self, a, j, k, normal: str, outward: bool = True) -> np.ndarray:
        """``(n, 4)`` local point ids of the faces at corner (a, j, k) normal to ``normal``,
        pointing along +normal (``outward``) or turned round keeping the first point."""
        p = self.point
        if normal == "x":
            quad = [p(a, j, k), p(a, j + 1, k), p(a, j + 1, k + 1), p(a, j, k + 1)]
        elif normal == "y":
            quad = [p(a, j, k), p(a, j, k + 1), p(a + 1, j, k + 1), p(a + 1, j, k)]
        else:
            quad = [p(a, j, k), p(a + 1, j, k), p(a + 1, j + 1, k), p(a, j + 1, k)]
        if not outward:
            quad = [quad[0], quad[3], quad[2], quad[1]]
        return np.stack(quad, axis=1)


def slab_blocks(slab: Slab, me: int, procs: int) -> list[dict]:
    """The slab's faces in the order of its folder: internal, patches, processor patches;
    per block its name (None: internal), points, owner, neighbour and global face address
    (1-based, negative where the face is turned round)."""
    nx, ny, nz, w, i0 = slab.nx, slab.ny, slab.nz, slab.w, slab.i0
    nxi, nyi, nzi = (nx - 1) * ny * nz, nx * (ny - 1) * nz, nx * ny * (nz - 1)
    n_int = nxi + nyi + nzi
    blocks = []

    def add(name, grid, normal, outward, owner, neighbour, gid, sign=1):
        a, j, k = grid
        blocks.append({"name": name, "faces": slab.faces(a, j, k, normal, outward),
                       "owner": slab.cell(*owner(a, j, k)),
                       "neighbour": (slab.cell(*neighbour(a, j, k)) if neighbour else
                                     np.full(len(a), -1, dtype=np.int64)),
                       "address": sign * (gid(a, j, k).astype(np.int64) + 1)})

    A, J, K = np.arange(w), np.arange(ny), np.arange(nz)
    add(None, slab.grid(np.arange(1, w), J, K), "x", True, lambda a, j, k: (a - 1, j, k),
        lambda a, j, k: (a, j, k), lambda a, j, k: (i0 + a - 1) + (nx - 1) * (j + ny * k))
    add(None, slab.grid(A, np.arange(1, ny), K), "y", True, lambda a, j, k: (a, j - 1, k),
        lambda a, j, k: (a, j, k), lambda a, j, k: nxi + (i0 + a) + nx * (j - 1 + (ny - 1) * k))
    add(None, slab.grid(A, J, np.arange(1, nz)), "z", True, lambda a, j, k: (a, j, k - 1),
        lambda a, j, k: (a, j, k), lambda a, j, k: nxi + nyi + (i0 + a) + nx * (j + ny * (k - 1)))
    base = {"floor": n_int}
    for before, name, size in (("floor", "inlet", nx * ny), ("inlet", "outlet", ny * nz),
                               ("outlet", "roof", ny * nz), ("roof", "wall-north", nx * ny),
                               ("wall-north", "wall-south", nx * nz)):
        base[name] = base[before] + size
    b = base                                  # the patches point out of the mesh
    add("floor", slab.grid(A, J, [0]), "z", False, lambda a, j, k: (a, j, k), None,
        lambda a, j, k: b["floor"] + i0 + a + nx * j)
    if me == 0:
        add("inlet", slab.grid([0], J, K), "x", False, lambda a, j, k: (a, j, k), None,
            lambda a, j, k: b["inlet"] + j + ny * k)
    if me == procs - 1:
        add("outlet", slab.grid([w], J, K), "x", True, lambda a, j, k: (a - 1, j, k), None,
            lambda a, j, k: b["outlet"] + j + ny * k)
    add("roof", slab.grid(A, J, [nz]), "z", True, lambda a, j, k: (a, j, k - 1), None,
        lambda a, j, k: b["roof"] + i0 + a + nx * j)
    add("wall-north", slab.grid(A, [ny], K), "y", True, lambda a, j, k: (a, j - 1, k), None,
        lambda a, j, k: b["wall-north"] + i0 + a + nx * k)
    add("wall-south", slab.grid(A, [0], K), "y", False, lambda a, j, k: (a, j, k), None,
        lambda a, j, k: b["wall-south"] + i0 + a + nx * k)
    if me > 0:       # the lower slab owns these faces: turned round here
        add(f"procBoundary{me}to{me - 1}", slab.grid([0], J, K), "x", False,
            lambda a, j, k: (a, j, k), None,
            lambda a, j, k: (i0 - 1) + (nx - 1) * (j + ny * k), sign=-1)
    if me < procs - 1:
        add(f"procBoundary{me}to{me + 1}", slab.grid([w], J, K), "x", True,
            lambda a, j, k: (a - 1, j, k), None,
            lambda a, j, k: (slab.i1 - 1) + (nx - 1) * (j + ny * k))
    return blocks


def write_slab(case: Path, axes, me: int, procs: int, bounds, *, gz: bool) -> int:
    """Write processor ``me``'s folder; its cell count."""
    from caselint.mesh.model import MeshData
    from mesh_writers import _header, _labels, _write, _write_part

    xs, ys, zs = axes
    shape = (len(xs) - 1, len(ys) - 1, len(zs) - 1)
    i0, i1 = bounds[me]
    slab = Slab(shape, i0, i1)
    nx, ny, nz = shape
    blocks = slab_blocks(slab, me, procs)
    faces = np.concatenate([b["faces"] for b in blocks]).astype(np.int32)
    a, j, k = slab.grid(np.arange(slab.w + 1), np.arange(ny + 1), np.arange(nz + 1))
    points = np.column_stack([xs[i0 + a], ys[j], zs[k]])
    point_ids = (i0 + a) + (nx + 1) * (j + (ny + 1) * k)
    a, j, k = slab.grid(np.arange(slab.w), np.arange(ny), np.arange(nz))
    cell_ids = (i0 + a) + nx * (j + ny * k)
    n_faces = len(faces)
    local = MeshData(path="part", dim=3, points=points,
                     face_offsets=np.arange(0, 4 * n_faces + 1, 4, dtype=np.int64),
                     face_points=faces.ravel(),
                     owner=np.concatenate([b["owner"] for b in blocks]),
                     neighbour=np.concatenate([b["neighbour"] for b in blocks]),
                     n_cells=len(cell_ids), face_group=np.full(n_faces, -1, dtype=np.int32))
    start = sum(len(b["faces"]) for b in blocks if b["name"] is None)
    named = {b["name"]: len(b["faces"]) for b in blocks if b["name"] is not None}
    patches, extra = [], []
    for name in PATCHES:            # every patch listed, empty where the slab has none
        patches.append((name, "patch", start, named.get(name, 0)))
        start += named.get(name, 0)
    for other in (me - 1, me + 1):
        name = f"procBoundary{me}to{other}"
        if name in named:
            extra.append((name, {
                "type": "processor", "inGroups": "List<word> 1(processor)",
                "nFaces": named[name], "startFace": start, "matchTolerance": "0.0001",
                "transform": "unknown", "myProcNo": me, "neighbProcNo": other}))
            start += named[name]
    folder = case / f"processor{me}" / "constant" / "polyMesh"
    options = {"binary": True, "gz": gz}
    _write_part(folder, local, patches, extra, options)
    address = np.concatenate([b["address"] for b in blocks])
    for name, values in (("pointProcAddressing", point_ids), ("faceProcAddressing", address),
                         ("cellProcAddressing", cell_ids)):
        _write(folder, name, _header("labelList", name, binary=True, labels=32,
                                     scalars=64).encode()
               + _labels(values, binary=True, labels=32), gz)
    return len(cell_ids)


def make_slab_case(n_cells: int, procs: int, folder: Path, *, gz: bool = False,
                   progress: bool = False) -> tuple[Path, dict]:
    """The duct of ``bench_partitions.make_case`` (about ``n_cells`` hexahedra in ``procs``
    slabs), written slab by slab; the case file's path and the mesh's counts."""
    import bench_meshes

    n = max(2, round(n_cells ** (1 / 3)))
    axes = bench_meshes._axes(n)
    nx, ny, nz = (len(v) - 1 for v in axes)
    bounds = slab_bounds(nx, procs)
    case = folder / "duct"
    start = time.perf_counter()
    for me in range(procs):
        write_slab(case, axes, me, procs, bounds, gz=gz)
        if progress:
            print(f"  processor{me} written ({time.perf_counter() - start:.0f} s)",
                  file=sys.stderr, flush=True)
    case_file = folder / "duct.caselint.yaml"
    case_file.write_text(bench_meshes.case_text("duct", tagged=False))
    n_faces = 3 * nx * ny * nz + nx * ny + ny * nz + nz * nx
    return case_file, {"cells": nx * ny * nz, "faces": n_faces,
                       "points": (nx + 1) * (ny + 1) * (nz + 1)}


def _without_ids(report: dict, folder: str) -> str:
    """The report as text without what depends on the face numbering within a patch (the
    face ids in messages, the lists of cell ids, which follow the faces' order)."""
    import re

    def strip(value):
        if isinstance(value, dict):
            return {k: strip(v) for k, v in value.items() if k not in ("cells", "faces", "mesh_sha256")}
        if isinstance(value, list):
            return [strip(v) for v in value]
        if isinstance(value, str):
            return re.sub(r"\bfaces? \d+", "face #", value.replace(folder, ""))
        return value

    return json.dumps(strip(report), sort_keys=True, indent=1)


def verify(cells: int = 6000, procs: int = 3) -> bool:
    """Whether the slab writer's case gives the same report as ``make_case``'s (checked in
    this process, both read whole) but for the ids that follow the face numbering (which
    differs within the patches); prints the differences."""
    import tempfile

    from bench_partitions import make_case
    from caselint.cli import main

    with tempfile.TemporaryDirectory() as tmp:
        texts = []
        for name, make in (("split", make_case), ("slabs", make_slab_case)):
            folder = Path(tmp) / name
            folder.mkdir()
            case, _ = make(cells, procs, folder)
            out = folder / "report.json"
            main(["check", str(case), "--no-cache", "--format", "json", "--output", str(out),
                  "--memory-limit", "off"])
            report = json.loads(out.read_text())
            for entry in report.get("cases", []):
                entry.pop("duration_s", None)
                entry.pop("case", None)
            texts.append(_without_ids(report, str(folder)))
        same = texts[0] == texts[1]
        if not same:
            import difflib

            print("\n".join(list(difflib.unified_diff(texts[0].splitlines(),
                                                      texts[1].splitlines(), lineterm=""))[:80]))
        return same


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", default="100M", help="about this many cells (default 100M)")
    parser.add_argument("--procs", type=int, default=64, help="processor folders (default 64)")
    parser.add_argument("--work", help="folder to write the case in")
    parser.add_argument("--gz", action="store_true", help="gzip-compress the files")
    parser.add_argument("--verify", action="store_true",
                        help="compare with make_case's case on a small mesh and exit")
    args = parser.parse_args()
    if args.verify:
        same = verify()
        print("same report" if same else "reports differ")
        sys.exit(0 if same else 1)
    from bench_partitions import parse_size

    folder = Path(args.work)
    folder.mkdir(parents=True, exist_ok=True)
    case, counts = make_slab_case(parse_size(args.cells), args.procs, folder, gz=args.gz,
                                  progress=True)
    (folder / "counts.json").write_text(json.dumps(counts))
    print(case, counts)


if __name__ == "__main__":
    main()
