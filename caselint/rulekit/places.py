"""Places of cells and faces for grading by extent and place.

Every cell is in one place (:data:`caselint.model.PLACES`), the first that applies:

- ``region``: its centroid lies in a region of interest of the case file;
- ``near-wall``: it is one of the ``near_wall_layers`` layers of cells nearest a no-slip
  wall (role ``wall``), counted through the mesh's faces: the cells on a wall face are the
  first layer, cells sharing a face with layer k are layer k + 1. This is a band by
  topology, not by distance, so it follows the mesh's own layers: on an inflation stack it
  is the stack and the first core cells beyond it;
- ``elsewhere``: the rest.

A face is in the stricter place of the cells on either side of it. The band grows one
layer per step, each step one vectorised pass over the internal faces (no loop over
cells); places are computed once per mesh and setting (``Mesh.cached``).

The default of ``near_wall_layers``, 10, is a caselint default: an inflation stack of
5 to 20 layers is the usual practice (5-10 or more cells across a boundary layer is
common practice), so ten layers cover the cells that resolve the wall region on most
meshes and a few core cells above thinner stacks.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.model import PLACES, Parameter
from caselint.rulekit.regions import region_cells
from caselint.rulekit.walls import wall_faces

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext
    from caselint.mesh.analysis import Mesh

#: Default number of cell layers next to a no-slip wall judged as near the wall.
NEAR_WALL_LAYERS = 10
#: The parameter every rule graded by place declares (engine-checked: a whole number >= 0).
NEAR_WALL_PARAMETER = Parameter(
    "near_wall_layers", NEAR_WALL_LAYERS, "cells",
    "layers of cells next to a no-slip wall judged strictly, as near the wall (0: none; "
    "caselint default 10, see caselint.rulekit.places)", kind="integer", minimum=0)

ELSEWHERE, NEAR_WALL, REGION = (PLACES.index(p) for p in ("elsewhere", "near-wall", "region"))


def near_wall_cells(mesh: "Mesh", faces: np.ndarray, layers: int) -> np.ndarray:
    """(C,) bool: the ``layers`` layers of cells nearest the boundary ``faces``."""
    band = np.zeros(mesh.n_cells, dtype=bool)
    if layers < 1 or faces.size == 0:
        return band
    band[mesh.owner[faces]] = True
    inner = np.flatnonzero(mesh.neighbour >= 0)
    a, b = mesh.owner[inner], mesh.neighbour[inner]
    for _ in range(layers - 1):
        grow = band[a] != band[b]               # faces on the band's edge
        if not grow.any():
            break
        band[a[grow]] = True
        band[b[grow]] = True
    return band


def cell_places(ctx: "RuleContext") -> np.ndarray:
    """(C,) int8 place codes of the cells of the case's mesh (see the module docstring)."""
    case, mesh = ctx.case, ctx.mesh
    layers = int(ctx.params.get("near_wall_layers", NEAR_WALL_LAYERS))
    walls = wall_faces(case, mesh)
    key = (f"rulekit.places:{layers}:{hash(walls.tobytes())}:{walls.size}:"
           f"{hash(repr(case.regions))}")

    def build() -> np.ndarray:
        places = np.full(mesh.n_cells, ELSEWHERE, dtype=np.int8)
        places[near_wall_cells(mesh, walls, layers)] = NEAR_WALL
        if case.regions:
            places[region_cells(case, mesh)] = REGION
        return places

    return mesh.cached(key, build)


def face_places(ctx: "RuleContext") -> np.ndarray:
    """(F,) int8 place codes of the faces: the stricter place of the cells beside each."""
    cells = cell_places(ctx)
    mesh = ctx.mesh
    places = cells[mesh.owner]
    nbr = mesh.neighbour
    inner = nbr >= 0
    places[inner] = np.maximum(places[inner], cells[nbr[inner]])
    return places
