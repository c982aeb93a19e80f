"""Meshes with known wall layers for the near-wall tests (built in memory, vectorised).

- :func:`layer_block`: a hexahedral block on a wall at z = 0 whose layers have exactly
  the heights asked for (no rounding through a grading formula);
- :func:`prism_block`: the same grid with its lowest rows split into wedges (two per
  hexahedron, triangles parallel to the wall) under a tetrahedral core (six Kuhn
  tetrahedra per hexahedron, sharing the wedges' top diagonal, so the mesh conforms);
- :func:`with_sides`: names the exposed faces of any volume mesh by the side of the
  bounding box they lie on.
"""

from __future__ import annotations

import meshio
import numpy as np

from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import SIX_TETS, structured_hex

SIDES = ("xmin", "xmax", "ymin", "ymax", "zmin", "zmax")


def stack(heights) -> np.ndarray:
    """Coordinates 0, h1, h1 + h2, ... of a stack of layers with the given heights."""
    return np.concatenate([[0.0], np.cumsum(np.asarray(heights, dtype=np.float64))])


def geometric(first: float, ratio: float, n: int) -> np.ndarray:
    """``n`` layer heights starting at ``first`` and multiplying by ``ratio``."""
    return first * ratio ** np.arange(n)


def layer_block(z_heights, *, nx: int = 4, ny: int = 3, dx: float = 0.05,
                dy: float | None = None) -> meshio.Mesh:
    """Hexahedra on the wall z = 0 (side ``zmin``) with the given layer heights in z."""
    dy = dx if dy is None else dy
    return structured_hex(np.arange(nx + 1) * dx, np.arange(ny + 1) * dy, stack(z_heights))


def with_sides(points: np.ndarray, blocks: list[tuple[str, np.ndarray]],
               names=SIDES) -> meshio.Mesh:
    """``points`` and volume ``blocks`` plus boundary faces grouped by bounding-box side."""
    bare = mesh_from_meshio(meshio.Mesh(points, blocks))
    exposed = bare.boundary_faces
    verts, cent = bare.file_point_ids(bare.face_point_table(exposed)), bare.face_centroids[exposed]
    lo, hi = points.min(axis=0), points.max(axis=0)
    tol = 1e-9 * float(np.max(hi - lo))
    side = np.full(len(exposed), -1)
    for k in range(3):
        side[(side < 0) & (np.abs(cent[:, k] - lo[k]) < tol)] = 2 * k
        side[(side < 0) & (np.abs(cent[:, k] - hi[k]) < tol)] = 2 * k + 1
    assert np.all(side >= 0), "a boundary face lies on no side of the bounding box"
    tri = verts[:, 3] == verts[:, 2]
    cells = list(blocks) + [("triangle", verts[tri, :3]), ("quad", verts[~tri])]
    empty = [np.zeros(0, dtype=np.int64)] * len(blocks)
    sets = {name: empty + [np.flatnonzero(side[tri] == k), np.flatnonzero(side[~tri] == k)]
            for k, name in enumerate(names)}
    return meshio.Mesh(points, cells, cell_sets=sets)


def prism_block(layer_heights, core_heights, *, nx: int = 3, ny: int = 3,
                dx: float = 0.05) -> meshio.Mesh:
    """Wedge layers of the given heights on the wall z = 0, under a tetrahedral core."""
    n_layers = len(layer_heights)
    hexes = layer_block(list(layer_heights) + list(core_heights), nx=nx, ny=ny, dx=dx)
    points = hexes.points
    cells = hexes.cells_dict["hexahedron"]
    row = np.repeat(np.arange(len(layer_heights) + len(core_heights)), nx * ny)
    layer, core = cells[row < n_layers], cells[row >= n_layers]
    wedges = np.concatenate([layer[:, [0, 1, 2, 4, 5, 6]], layer[:, [0, 2, 3, 4, 6, 7]]])
    tets = core[:, np.array(SIX_TETS)].reshape(-1, 4)
    return with_sides(points, [("wedge", wedges), ("tetra", tets)])
