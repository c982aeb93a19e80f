"""Benchmark meshes and case files: a ventilated duct meshed four ways.

The duct (an invented test section) is 4 m long in x, 1 m by 1 m in y and z; air enters
at ``xmin`` and leaves at ``xmax``; the four other sides are walls. Cells are graded
towards the walls as a mesher's inflation would be (growth 1.05 from the wall in the
hexahedral meshes, 1.15 in the prism layers), so the near-wall rules see real stacks.

Kinds of mesh, each at about a requested number of cells:

- ``hex``: structured hexahedra in mesher order (x fastest);
- ``hex-shuffled``: the same with points and cells renumbered at random, like an export
  from an unstructured mesher;
- ``tet``: each hexahedron split into six tetrahedra (Kuhn split), shuffled;
- ``prism-tet``: prism layers (each hexahedron split into two wedges) on the z walls and
  tetrahedra in the core, shuffled. The wedges are split along the same diagonal as the
  first tetrahedra above them, so the mesh is conforming.

Each mesh is written as VTU (meshio's default zlib compression) and as binary gmsh 2.2,
with a case file for each (steady, walls named, flow data given).
"""

from __future__ import annotations

import contextlib
import io
import math
from pathlib import Path

import meshio
import numpy as np

from caselint.mesh.blocks import graded, hex_to_tets, shuffled, structured_hex, write_gmsh22

KINDS = ("hex", "hex-shuffled", "tet", "prism-tet")
LENGTH_M, SIDE_M = 4.0, 1.0
NAMES = ("inlet", "outlet", "wall-south", "wall-north", "floor", "roof")
ROLES = {"inlet": "inlet", "outlet": "outlet", "wall-south": "wall", "wall-north": "wall",
         "floor": "wall", "roof": "wall"}
# Wedge split of a hexahedron along its bottom diagonal 0-2 (matches SIX_TETS' 0-2 edge).
_WEDGES = ((0, 1, 2, 4, 5, 6), (0, 2, 3, 4, 6, 7))


def _two_sided(n: int, ratio: float) -> np.ndarray:
    """``n + 1`` coordinates over [0, SIDE_M] graded by ``ratio`` from both ends (n even)."""
    half = graded(0.0, SIDE_M / 2, n // 2, ratio)
    return np.concatenate([half, SIDE_M - half[-2::-1]])


def _axes(n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Hexahedral grid with ``n`` cells per axis, graded towards the y and z walls."""
    n += n % 2
    return np.linspace(0.0, LENGTH_M, n + 1), _two_sided(n, 1.05), _two_sided(n, 1.05)


def hex_block(n_cells: int) -> meshio.Mesh:
    """Structured hexahedra, about ``n_cells`` of them, in mesher order."""
    n = max(2, round(n_cells ** (1 / 3)))
    return structured_hex(*_axes(n), names=NAMES)


def tet_block(n_cells: int) -> meshio.Mesh:
    """About ``n_cells`` tetrahedra from a split hexahedral block."""
    block = hex_block(n_cells // 6)
    return _split(block, np.zeros(len(block.cells_dict["hexahedron"]), dtype=bool))


def prism_tet_block(n_cells: int, layers: int = 12) -> meshio.Mesh:
    """About ``n_cells`` cells: ``layers`` prism layers on the floor and roof, tetrahedra inside."""
    nz = 64
    per_column = 2 * (2 * layers) + 6 * (nz - 2 * layers)
    m = max(2, round(math.sqrt(n_cells / (4 * per_column))))     # 4m x m columns
    wall = graded(0.0, 0.12, layers, 1.15)
    core = np.linspace(wall[-1], SIDE_M - wall[-1], nz - 2 * layers + 1)
    zs = np.concatenate([wall, core[1:-1], SIDE_M - wall[::-1]])
    block = structured_hex(np.linspace(0.0, LENGTH_M, 4 * m + 1), np.linspace(0, SIDE_M, m + 1),
                           zs, names=NAMES)
    k = np.repeat(np.arange(nz), 4 * m * m)          # z index of each hexahedron (x fastest)
    return _split(block, (k < layers) | (k >= nz - layers))


def _split(block: meshio.Mesh, prism: np.ndarray) -> meshio.Mesh:
    """Split hexahedra into two wedges where ``prism``, else six tetrahedra; re-mesh boundaries."""
    hexes = block.cells_dict["hexahedron"]
    wedges = hexes[prism][:, np.array(_WEDGES)].reshape(-1, 6)
    tets = hex_to_tets(hexes[~prism])
    # A boundary quadrilateral becomes two triangles where a diagonal is an edge of a
    # triangular cell face (any tetrahedron edge, or a wedge's triangle edge).
    p = np.int64(len(block.points))
    tri_edges = [tets[:, [a, b]] for a in range(4) for b in range(a + 1, 4)]
    tri_edges += [wedges[:, [a, b]] for a, b in ((0, 2), (3, 5))]
    edges = np.concatenate(tri_edges)
    keys = np.unique(edges.min(axis=1).astype(np.int64) * p + edges.max(axis=1))
    quads = block.cells_dict["quad"]
    tag = block.cell_data_dict["gmsh:physical"]["quad"]
    a, b, c, d = quads.T.astype(np.int64)
    ac = np.isin(np.minimum(a, c) * p + np.maximum(a, c), keys)
    bd = np.isin(np.minimum(b, d) * p + np.maximum(b, d), keys)
    keep = ~(ac | bd)
    t1 = np.where(ac[:, None], np.stack([a, b, c], 1), np.stack([a, b, d], 1))
    t2 = np.where(ac[:, None], np.stack([a, c, d], 1), np.stack([b, c, d], 1))
    split = ~keep
    tris = np.stack([t1[split], t2[split]], axis=1).reshape(-1, 3)
    cells, tags = [], []
    for ctype, data in (("wedge", wedges), ("tetra", tets)):
        if len(data):
            cells.append((ctype, data))
            tags.append(np.zeros(len(data), dtype=np.int64))
    cells += [("triangle", tris), ("quad", quads[keep])]
    tags += [np.repeat(tag[split], 2), tag[keep]]
    sets = {name: [np.flatnonzero(t == k + 1) if len(c[1]) else np.zeros(0, np.int64)
                   for c, t in zip(cells, tags)] for k, name in enumerate(NAMES)}
    return meshio.Mesh(block.points, cells,
                       cell_data={"gmsh:physical": tags,
                                  "gmsh:geometrical": [t.copy() for t in tags]},
                       field_data={name: np.array([k + 1, 2]) for k, name in enumerate(NAMES)},
                       cell_sets=sets)


def build(kind: str, n_cells: int) -> meshio.Mesh:
    """The benchmark mesh of ``kind`` (see :data:`KINDS`) with about ``n_cells`` cells."""
    if kind == "hex":
        return hex_block(n_cells)
    if kind == "hex-shuffled":
        return shuffled(hex_block(n_cells), seed=1)
    if kind == "tet":
        return shuffled(tet_block(n_cells), seed=2)
    if kind == "prism-tet":
        return shuffled(prism_tet_block(n_cells), seed=3)
    raise ValueError(f"unknown mesh kind {kind!r}; kinds are {KINDS}")


def case_text(mesh_file: str, tagged: bool) -> str:
    """A steady case file for the duct: walls named, air at 20 degC, 5 m/s along x."""
    tags = ""
    if tagged:   # VTU keeps the tag array but not the group names
        tags = ("  tag_array: gmsh:physical\n  tags: {"
                + ", ".join(f"{k + 1}: {name}" for k, name in enumerate(NAMES)) + "}\n")
    bounds = "".join(f"    {name}: {role}\n" for name, role in ROLES.items())
    return f"""caselint: 1
case:
  name: benchmark-duct
  description: Ventilated test duct (invented), steady, for caselint's benchmarks.
  safety: none
mesh:
  file: {mesh_file}
  units: m
{tags}  boundaries:
{bounds}physics:
  method: finite-volume
  fluid: {{density: 1.2 kg/m^3, viscosity: 1.8e-5 Pa*s}}
  flow:
    kind: internal
    velocity: 5 m/s
    direction: [1, 0, 0]
    length: 1 m
  turbulence:
    model: k-omega-sst
    wall_treatment: resolved
time:
  mode: steady
checks:
  rule_sets: [general]
"""


def write(kind: str, n_cells: int, folder: Path) -> dict[str, tuple[Path, Path]]:
    """Write the mesh of ``kind`` as VTU and binary gmsh 2.2 with a case file for each.

    Returns format -> (case file, mesh file), formats "vtu" and "msh".
    """
    mesh = build(kind, n_cells)
    stem = f"{kind}-{n_cells // 1000}k"
    out = {}
    vtu, msh = folder / f"{stem}.vtu", folder / f"{stem}.msh"
    plain = meshio.Mesh(mesh.points, mesh.cells, cell_data={
        "gmsh:physical": mesh.cell_data["gmsh:physical"]})
    with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
        meshio.write(vtu, plain)
    write_gmsh22(mesh, msh, binary=True)
    for fmt, path, tagged in (("vtu", vtu, True), ("msh", msh, False)):
        case = folder / f"{stem}-{fmt}.caselint.yaml"
        case.write_text(case_text(path.name, tagged))
        out[fmt] = (case, path)
    return out
