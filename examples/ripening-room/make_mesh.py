"""Make the mesh of the ripening-room demo (``room.msh``), with its defects built in on purpose.

Run from anywhere: ``python examples/ripening-room/make_mesh.py``. The mesh is a structured
hexahedral block (caselint.mesh.blocks) of ripening room 3 of the (invented) Tallowmere
Fruit Co-operative, 8 m long (x), 4 m wide (y), 3.2 m high (z), with three defects that
caselint should find (the design values are module constants, used by the demo's tests):

- the six floor layers grow by FLOOR_GRADING = 1.5 per layer (a growth-ratio warning);
- the mesh was morphed to follow a pallet bumper rail on the north wall (x = 0): the second
  floor layer leans RAIL_LEAN_DEG = 75 deg from vertical across the room and the lean
  relaxes only near the south wall (a non-orthogonality warning);
- the loading door has its own boundary group, which the case file forgot (an
  unassigned-boundary error).
"""

from __future__ import annotations

import math
from pathlib import Path

import meshio
import numpy as np

from caselint.mesh.blocks import graded, structured_hex, write_gmsh22

LENGTH_M, WIDTH_M, HEIGHT_M = 8.0, 4.0, 3.2
CELL_M = 0.4                      # plan spacing in x and y
FIRST_LAYER_M = 0.02              # floor layer height
FLOOR_LAYERS = 6
FLOOR_GRADING = 1.5               # height ratio of successive floor layers
UPPER_LAYERS = 13                 # uniform layers above the floor layers
RAIL_LEAN_DEG = 75.0              # lean of the second floor layer, from vertical
RELAX_M = 2.0                     # length over which the lean relaxes before the south wall

#: Boundary groups: name -> test on face centroid (x, y, z); the first match wins.
GROUPS = (
    ("ceiling-supply", lambda x, y, z: (z > HEIGHT_M - 1e-9) & (x > 0.4) & (x < 1.6)
     & (y > 1.2) & (y < 2.8)),
    ("return-grille", lambda x, y, z: (x > LENGTH_M - 1e-9) & (y > 1.2) & (y < 2.8)
     & (z > 0.8) & (z < 1.7)),
    ("loading-door", lambda x, y, z: (y < 1e-9) & (x > 4.8) & (x < 7.2) & (z < 2.5)),
    ("floor", lambda x, y, z: z < 1e-9),
    ("walls-ceiling", lambda x, y, z: np.ones_like(x, dtype=bool)),
)
OUT = Path(__file__).resolve().with_name("room.msh")


def z_levels() -> np.ndarray:
    """Layer heights: graded floor layers, then uniform layers up to the ceiling (m)."""
    floor = graded(0.0, FIRST_LAYER_M * (FLOOR_GRADING**FLOOR_LAYERS - 1) / (FLOOR_GRADING - 1),
                   FLOOR_LAYERS, FLOOR_GRADING)
    return np.concatenate([floor, np.linspace(floor[-1], HEIGHT_M, UPPER_LAYERS + 1)[1:]])


def rail_shift(x: np.ndarray, z: np.ndarray) -> np.ndarray:
    """x-displacement (m) left by the morph: rises across layer 1, holds, falls across layer 6."""
    zs = z_levels()
    rise = math.tan(math.radians(RAIL_LEAN_DEG))
    depth = rise * (zs[2] - zs[1])                      # how far the rail sticks out (m)
    profile = np.interp(z, [zs[1], zs[2], zs[FLOOR_LAYERS], zs[FLOOR_LAYERS + 1]],
                        [0.0, depth, depth, 0.0], left=0.0, right=0.0)
    relax = np.clip((LENGTH_M - x) / RELAX_M, 0.0, 1.0)  # 1 in most of the room, 0 at x = 8 m
    return profile * relax


def build() -> meshio.Mesh:
    """The room mesh as a meshio mesh with named boundary groups (gmsh physical groups)."""
    xs = np.linspace(0.0, LENGTH_M, round(LENGTH_M / CELL_M) + 1)
    ys = np.linspace(0.0, WIDTH_M, round(WIDTH_M / CELL_M) + 1)
    block = structured_hex(xs, ys, z_levels())
    points = block.points.copy()
    points[:, 0] += rail_shift(block.points[:, 0], block.points[:, 2])
    hexes = block.cells_dict["hexahedron"]
    quads = block.cells_dict["quad"]
    centre = block.points[quads].mean(axis=1)      # undeformed centroids: the groups' design
    tag = np.zeros(len(quads), dtype=np.int64)
    for k, (_name, inside) in enumerate(GROUPS, start=1):
        tag[(tag == 0) & inside(centre[:, 0], centre[:, 1], centre[:, 2])] = k
    tags = [np.zeros(len(hexes), dtype=np.int64), tag]
    return meshio.Mesh(
        points, [("hexahedron", hexes), ("quad", quads)],
        cell_data={"gmsh:physical": tags, "gmsh:geometrical": [t.copy() for t in tags]},
        field_data={name: np.array([k, 2]) for k, (name, _) in enumerate(GROUPS, start=1)},
    )


def main() -> None:
    """Write ``room.msh`` beside this script (gmsh 2.2, text)."""
    write_gmsh22(build(), OUT)
    print(f"wrote {OUT}")


if __name__ == "__main__":
    main()
