"""Five fixed-shape meshes (perturbed, shuffled, every cell type) whose metrics the
element-based core recorded in tests/data/pre_rewrite_metrics.npz."""

from __future__ import annotations

import meshio
import numpy as np

from caselint.mesh.blocks import graded, shuffled, structured_hex, structured_quad, tetrahedralise
from caselint.mesh.celltypes import FACES

SEED = 20261202


def _perturbed(m: meshio.Mesh, amplitude: float, seed: int) -> meshio.Mesh:
    lo, hi = m.points.min(axis=0), m.points.max(axis=0)
    inner = np.all((m.points > lo + 1e-9) & (m.points < hi - 1e-9) | (hi - lo < 1e-12), axis=1)
    rng = np.random.default_rng(seed)
    shift = rng.uniform(-amplitude, amplitude, m.points.shape)
    if m.points.shape[1] == 3 and np.ptp(m.points[:, 2]) == 0:
        shift[:, 2] = 0.0
    m.points = m.points + np.where(inner[:, None], shift, 0.0)
    return m


def _mixed(amplitude: float) -> meshio.Mesh:
    m = _perturbed(structured_hex(np.linspace(0, 0.8, 5), np.linspace(0, 0.9, 4),
                                  np.linspace(0, 0.5, 3)), amplitude, SEED)
    hexes = m.cells[0].data
    first, second, rest = hexes[:8], hexes[8:16], hexes[16:]
    wedges = np.vstack([first[:, [0, 1, 2, 4, 5, 6]], first[:, [0, 2, 3, 4, 6, 7]]])
    centres = m.points[second].mean(axis=1)
    apex = len(m.points) + np.arange(len(second))
    pyramids = np.vstack([np.column_stack([second[:, list(reversed(f))], apex])
                          for f in FACES["hexahedron"]])
    return meshio.Mesh(np.vstack([m.points, centres]),
                       [("wedge", wedges), ("pyramid", pyramids), ("hexahedron", rest)])


def MESHES() -> dict[str, meshio.Mesh]:
    """Name -> meshio mesh, built afresh each call (the builders are deterministic)."""
    hexes = _perturbed(structured_hex(graded(0, 1, 6, 1.3), np.linspace(0, 2, 5),
                                      graded(0, 0.5, 4, 0.8)), 0.03, SEED)
    tets = _perturbed(structured_hex(*(np.linspace(0, 1, 4),) * 3), 0.04, SEED + 1)
    quads = _perturbed(structured_quad(graded(0, 2, 7, 1.2), np.linspace(0, 1, 5)), 0.02,
                       SEED + 2)
    tri = structured_quad(np.linspace(0, 1, 5), np.linspace(0, 1, 4))
    q = tri.cells[0].data
    triangles = meshio.Mesh(tri.points, [("triangle", np.vstack([q[:, [0, 1, 2]], q[:, [0, 2, 3]]]))])
    return {"hex": shuffled(hexes, seed=3), "tet": shuffled(tetrahedralise(tets), seed=4),
            "mixed": _mixed(0.03), "quad": shuffled(quads, seed=5),
            "triangle": _perturbed(triangles, 0.03, SEED + 3)}
