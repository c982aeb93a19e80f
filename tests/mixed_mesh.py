"""A box meshed with every element type, for the round trip through every mesh format.

``mixed_box()`` fills an ``nx x ny x nz`` grid of unit-spaced cubes, column by column in x:
hexahedra; prisms (two per cube); pyramids (each cube split into six about its centre);
prisms again; and cubes split into six pyramids about their centre and then into
tetrahedra, except the pyramid facing the neighbouring column, so that every face is
shared whole. Prisms are written in caselint's (VTK 9 / gmsh) node order, or with
``mirrored=True`` in the other one in circulation (triangle (0, 1, 2) with its normal
pointing away from (3, 4, 5)). Boundary faces are named by side: ``inlet`` (x min), ``outlet`` (x max),
``walls`` (both y sides), ``floor`` (z min), ``top`` (z max).

Closed form [computed]: the box volume is ``nx * ny * nz * h**3``; the cell counts are
given by the column widths (see :data:`COLUMNS`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from caselint.mesh.celltypes import FACES

#: Column kinds from x = 0: (kind, number of columns).
COLUMNS = (("hexahedron", 2), ("wedge", 1), ("pyramid", 1), ("wedge", 1), ("tetra", 2))
#: Role of each side in formats that carry one (the commercial .msh zone types, CGNS BCs).
SIDE_ROLES = {"inlet": "inlet", "outlet": "outlet", "walls": "wall", "floor": "wall",
              "top": "symmetry"}
_HEX_BOTTOM_TOP = (0, 1, 2, 3, 4, 5, 6, 7)


@dataclass
class ElementMesh:
    """Points, volume blocks (type, (n, k) nodes) in file order, and boundary elements."""

    points: np.ndarray
    blocks: list[tuple[str, np.ndarray]]
    boundary: list[tuple[str, np.ndarray, str]]    # (type, (n, k) nodes, group name)

    @property
    def n_cells(self) -> int:
        return sum(len(c) for _, c in self.blocks)


def _pyramids(hexa: np.ndarray, centre: int) -> list[list[int]]:
    """Six pyramids of a hexahedron about ``centre``: base = reversed outward face."""
    return [[int(hexa[v]) for v in reversed(face)] + [centre] for face in FACES["hexahedron"]]


def mixed_box(nx: int = 7, ny: int = 3, nz: int = 2, h: float = 0.1, *,
              mirrored: bool = False) -> ElementMesh:
    """The box of the module docstring; ``nx`` must be 7 (one entry per column)."""
    kinds = [k for k, n in COLUMNS for _ in range(n)]
    kinds[4] = "wedge-2"
    assert len(kinds) == nx
    shape = (nx + 1, ny + 1, nz + 1)
    grid = np.stack(np.meshgrid(*[np.arange(n) * h for n in shape], indexing="ij"), -1)
    points = list(grid.reshape(-1, 3, order="F"))

    def pid(i, j, k):
        return i + shape[0] * (j + shape[1] * k)

    cells: dict[str, list[list[int]]] = {k: [] for k in
                                        ("hexahedron", "wedge", "pyramid", "wedge-2",
                                         "pyramid-tet", "tetra")}
    for k in range(nz):
        for j in range(ny):
            for i in range(nx):
                hexa = np.array([pid(i, j, k), pid(i + 1, j, k), pid(i + 1, j + 1, k),
                                 pid(i, j + 1, k), pid(i, j, k + 1), pid(i + 1, j, k + 1),
                                 pid(i + 1, j + 1, k + 1), pid(i, j + 1, k + 1)])
                kind = kinds[i]
                if kind == "hexahedron":
                    cells[kind].append(list(hexa))
                elif kind.startswith("wedge"):
                    for w in ((0, 1, 2, 4, 5, 6), (0, 2, 3, 4, 6, 7)):
                        order = (0, 2, 1, 3, 5, 4) if mirrored else range(6)
                        cells[kind].append([int(hexa[w[o]]) for o in order])
                else:
                    points.append(np.array([i + 0.5, j + 0.5, k + 0.5]) * h)
                    centre = len(points) - 1
                    for f, pyr in enumerate(_pyramids(hexa, centre)):
                        keep = kind == "pyramid" or (kinds[i - 1] != "tetra" and f == 5)
                        if keep:
                            cells["pyramid" if kind == "pyramid" else "pyramid-tet"].append(pyr)
                            continue
                        base = pyr[:4]
                        r = int(np.argmin(base))        # diagonal through the smallest id
                        a, b, c, d = base[r:] + base[:r]
                        cells["tetra"] += [[a, b, c, centre], [a, c, d, centre]]
    blocks = [("hexahedron", cells["hexahedron"]), ("wedge", cells["wedge"]),
              ("pyramid", cells["pyramid"]), ("wedge", cells["wedge-2"]),
              ("pyramid", cells["pyramid-tet"]), ("tetra", cells["tetra"])]
    blocks = [(t, np.array(c, dtype=np.int64)) for t, c in blocks if c]
    pts = np.array(points)
    return ElementMesh(pts, blocks, _boundary(pts, blocks, (nx * h, ny * h, nz * h)))


def _boundary(points, blocks, size) -> list[tuple[str, np.ndarray, str]]:
    """The faces that belong to one cell, in outward order, named by the side they lie on."""
    seen: dict[tuple[int, ...], list[int]] = {}
    for t, conn in blocks:
        mirrored = t == "wedge" and _volume_sign(points, conn[0]) < 0
        for cell in conn:
            cell = cell[[0, 2, 1, 3, 5, 4]] if mirrored else cell
            for face in FACES[t]:
                ring = [int(cell[v]) for v in dict.fromkeys(face)]
                key = tuple(sorted(ring))
                seen[key] = None if key in seen else ring
    by_side: dict[tuple[str, str], list[list[int]]] = {}
    for ring in (r for r in seen.values() if r is not None):
        centre = points[ring].mean(axis=0)
        side = ("inlet" if centre[0] < 1e-9 else "outlet" if centre[0] > size[0] - 1e-9
                else "walls" if min(centre[1], size[1] - centre[1]) < 1e-9
                else "floor" if centre[2] < 1e-9 else "top")
        by_side.setdefault(("triangle" if len(ring) == 3 else "quad", side), []).append(ring)
    return [(t, np.array(rings), side) for (t, side), rings in sorted(by_side.items())]


def _volume_sign(points, wedge) -> float:
    a, b, c, d = points[wedge[[0, 1, 2, 3]]]
    return float(np.dot(np.cross(b - a, c - a), d - a))


def volume_boundary_meshio(mesh: ElementMesh):
    """The mesh as a ``meshio.Mesh`` with boundary elements tagged in cell data
    ``boundary`` (read with ``tag_array="boundary"`` and :func:`tags`)."""
    import meshio

    names = tags()
    ids = {v: k for k, v in names.items()}
    cells = [(t, c) for t, c in mesh.blocks] + [(t, c) for t, c, _ in mesh.boundary]
    data = [np.full(len(c), -1) for _, c in mesh.blocks] + [
        np.full(len(c), ids[g]) for _, c, g in mesh.boundary]
    return meshio.Mesh(mesh.points, cells, cell_data={"boundary": data})


def tags() -> dict[int, str]:
    """Boundary tag -> side name used by :func:`volume_boundary_meshio`."""
    return {i + 1: name for i, name in enumerate(sorted(SIDE_ROLES))}


def reference_data(mesh: ElementMesh, folder):
    """The mesh data of ``mesh`` written as VTU and read through meshio (the reference of
    the round trip)."""
    import meshio

    from caselint.mesh.reader import read_mesh

    path = folder / "reference.vtu"
    meshio.write(path, volume_boundary_meshio(mesh))
    return read_mesh(path, tag_array="boundary", tags=tags()).data
