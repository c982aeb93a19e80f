"""Wall layer stacks: the cells lined up above each wall face, walked layer by layer.

From a wall face the walk enters the cell behind it, crosses to the cell's *opposite
face* and on to the neighbour across that face. The opposite face is found from the
cell's faces, for any cell: the faces sharing no point with the entry face (the far side
of a hexahedron, the other triangle of a wedge entered through a triangle, the far edge
of a 2-D quadrilateral; several for a polyhedron whose far side is split by a refinement,
of which the one the entry normal crosses first is taken,
:func:`caselint.mesh.stack_walk.opposite`). All wall faces walk in lock-step: one
vectorised numpy step per layer, never a Python loop over faces.

A cell *continues the stack* while

- it has an opposite face (tetrahedra, pyramids and wedges entered through a
  quadrilateral have none: a prism layer under a tetrahedral core ends there);
- its height ``h`` (the distance between its entry and opposite face centroids, along
  the entry face's normal) is positive;
- the opposite face's normal stays within ``turn_deg`` of the wall normal (the layer
  direction does not turn, as it does round a corner);
- it is thin: ``h < max_aspect * width``, width = the square root of the entry face
  area (in 2-D the entry edge length). A layer cell is flat; a cell as tall as it is
  wide belongs to the core. The wall cell's height is measured even when it is too
  thick to count as a layer (then the face has no stack);
- it does not shrink: ``h >= min_ratio * h_last``, the height of the layer below it.
  Layers grow away from their wall; cells that get thinner again belong to the stack of
  a facing wall or fill the middle of a passage (the centre of a pipe O-grid, whose
  radial cells go on to the axis), not to this stack.

The stack ends at the first cell failing one of these, when an opposite face is on the
boundary, or after ``max_cells`` cells. Then, from the heights walked:

- a stack whose last cells are a *block of one height* entered with a jump (at least two
  cells from the last layer that grew by more than ``jump_ratio`` on, none after it
  growing by more than ``1 / min_ratio``) is cut before the jump: the block is a core of
  a multi-block grid (the square core of a pipe O-grid), its first cell the core cell,
  and the jump is judged as the transition to the core, not as layer growth. A jump
  followed by layers that keep growing stays in the stack (a stack with a bad step);
- a stack that runs into a *facing wall* (a face among the walked ``faces``: a channel or
  pipe whose cells are layer-shaped from wall to wall) is cut at the middle of the
  passage: a layer stays when it starts before half the distance walked across
  (``passage``), so the cell holding the middle belongs to both walls' stacks and no
  stack reaches past it.

Defaults: ``max_aspect`` 1, ``min_ratio`` 0.9 (a tenth of room for the scatter of
unstructured layer meshers), ``jump_ratio`` 1.3 (the largest growth common practice
allows inside a stack), ``turn_deg`` 45, ``max_cells`` 200 (caselint's choices).

The walk itself may go on through cells that are layer-shaped but thick (a structured
hexahedral core): it goes on while the walked cells reach less than ``reach_m`` from the
wall, and no further.

Distances: the first cell centre's wall distance is its centroid's distance from the
wall face centroid along the wall normal (half the first-layer height on a prism or
hexahedron); the first node's is the first-layer height ``h1``. Where the wall cell has
no layer shape (tetrahedra), ``h1`` is the wall distance of its farthest vertex (the
apex of a tetrahedron) and ``layered_first`` is False. The cell after a stack that ends
in the core is measured the same way: its farthest vertex from the stack's last face.
"""

from __future__ import annotations

import functools
import hashlib
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.kernels import compiled, in_threads
from caselint.mesh.stack_walk import (  # noqa: F401  (the end codes are part of this API)
    END_BOUNDARY,
    END_CORE,
    END_DEGENERATE,
    END_LIMIT,
    END_MIDDLE,
    END_SHRINK,
    END_TURN,
    END_WORDS,
    NO_STACK,
    StackState,
    walk_lockstep,
)
from caselint.mesh.stack_walk import extent as cell_extent

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

@dataclass(frozen=True)
class WallLayers:
    """Layer stacks above a set of boundary faces; every array has one row per face.

    Lengths in metres. ``heights[i, k]`` is the height of the k-th cell walked from face
    ``faces[i]`` (0 beyond ``n_walked[i]``); the first ``n_layers[i]`` of them form the
    stack; the walk went on past the stack up to ``reach`` m from the wall.
    ``max_growth`` is the largest ``h[k+1] / h[k]`` inside the stack (0 with fewer than
    two layers), at layer ``growth_layer`` (1-based number of the larger layer).
    ``core_jump`` is the core cell's height over the last layer's where ``end`` is
    ``END_CORE`` (0 elsewhere). ``passage`` is the distance across to the facing wall
    along the stack where ``end`` is ``END_MIDDLE`` (inf elsewhere: not walked across).
    """

    faces: np.ndarray
    cells: np.ndarray
    normals: np.ndarray
    centre_distance: np.ndarray
    first_height: np.ndarray
    layered_first: np.ndarray
    n_layers: np.ndarray
    n_walked: np.ndarray
    heights: np.ndarray
    thickness: np.ndarray
    max_growth: np.ndarray
    growth_layer: np.ndarray
    end: np.ndarray
    core_cell: np.ndarray
    core_jump: np.ndarray
    passage: np.ndarray
    reach: float = math.inf

    def subset(self, rows: np.ndarray) -> "WallLayers":
        """The stacks of the given rows only (e.g. one boundary's faces)."""
        return WallLayers(*(getattr(self, f)[rows] for f in self.__dataclass_fields__
                            if f != "reach"), reach=self.reach)

    def rows_of(self, faces: np.ndarray) -> np.ndarray:
        """Row index of each face id in ``faces`` (all must be among ``self.faces``)."""
        rows = np.searchsorted(self.faces, faces)
        if np.any(rows >= len(self.faces)) or np.any(self.faces[np.minimum(
                rows, len(self.faces) - 1)] != faces):
            raise KeyError("some faces have no stack in this WallLayers")
        return rows

    def cells_within(self, distance_m) -> np.ndarray:
        """Per face, how many walked cells lie wholly within ``distance_m`` of the wall.

        :raises ValueError: ``distance_m`` is beyond the reach of the walk.
        """
        if np.any(np.asarray(distance_m) > self.reach):
            raise ValueError(f"cells within {np.max(distance_m):g} m asked of a walk that "
                             f"reached {self.reach:g} m from the wall")
        if self.heights.shape[1] == 0:
            return np.zeros(len(self.faces), dtype=np.int64)
        tops = np.cumsum(self.heights, axis=1)
        walked = np.arange(self.heights.shape[1])[None, :] < self.n_walked[:, None]
        limit = np.broadcast_to(np.asarray(distance_m, dtype=np.float64), self.faces.shape)
        return np.count_nonzero(walked & (tops <= limit[:, None]), axis=1)


def wall_layers(mesh: "Mesh", faces, *, max_aspect: float = 1.0, min_ratio: float = 0.9,
                jump_ratio: float = 1.3, turn_deg: float = 45.0, max_cells: int = 200,
                reach_m: float = math.inf) -> WallLayers:
    """The layer stacks above boundary ``faces`` (ids), walked up to ``reach_m`` from the
    wall; cached on the mesh per face set (a walk that reached further serves too)."""
    faces = checked_walls(mesh, faces, min_ratio, jump_ratio, reach_m)
    digest = hashlib.sha1(faces.tobytes()).hexdigest()
    key = (f"wall_layers:{digest}:{max_aspect!r}:{min_ratio!r}:{jump_ratio!r}:{turn_deg!r}:"
           f"{int(max_cells)}")
    walks: dict[float, WallLayers] = mesh.cached(key, dict)
    for reach, layers in walks.items():
        if reach >= reach_m:
            return layers
    layers = _walk(mesh, faces, (float(max_aspect), float(min_ratio), float(jump_ratio)),
                   turn_deg, int(max_cells), float(reach_m))
    walks[float(reach_m)] = layers
    return layers


def checked_walls(mesh, faces, min_ratio: float, jump_ratio: float,
                  reach_m: float) -> np.ndarray:
    """``faces`` as sorted unique ids, checked to be boundary faces of ``mesh`` (a
    :class:`~caselint.mesh.analysis.Mesh` or its data), and the walk's settings checked."""
    faces = np.unique(np.asarray(faces, dtype=np.int64))
    if faces.size and (faces.min() < 0 or faces.max() >= mesh.n_faces
                       or np.any(mesh.neighbour[faces] >= 0)):
        raise ValueError("wall_layers() needs ids of boundary faces (faces with no neighbour)")
    if not reach_m >= 0:
        raise ValueError(f"reach_m must be at least 0, got {reach_m!r}")
    if not (0 < min_ratio <= 1 and jump_ratio >= 1):
        raise ValueError(f"min_ratio must be in (0, 1] and jump_ratio at least 1, got "
                         f"{min_ratio!r} and {jump_ratio!r}")
    return faces


def _walk(mesh: "Mesh", faces: np.ndarray, shape: tuple[float, float, float],
          turn_deg: float, max_cells: int, reach_m: float = math.inf) -> WallLayers:
    """Walk every stack (compiled, or in lock step with numpy) and sum up its layers;
    ``shape`` is (max_aspect, min_ratio, jump_ratio)."""
    if mesh.walks is not None:              # partition by partition (Mesh.walks)
        return mesh.walks.wall_layers(faces, shape, turn_deg, max_cells, reach_m)
    walled = np.zeros(mesh.n_faces, dtype=bool)
    walled[faces] = True
    extent = functools.partial(extents, mesh)
    state = StackState.at_walls(mesh, faces, extent)
    heights, _ = walk_on(mesh, state, walled, shape, turn_deg, max_cells, reach_m)
    return stacks_from(faces, mesh.owner[faces], state, heights, extent, reach_m)


def walk_on(mesh: "Mesh", state: StackState, walled: np.ndarray,
            shape: tuple[float, float, float], turn_deg: float, max_cells: int,
            reach_m: float, foreign: np.ndarray | None = None,
            cell_ids: np.ndarray | None = None):
    """Walk the stacks of ``state`` on (updated in place), compiled or in lock step with
    numpy; ``walled`` (F,) the faces of the walls walked from; ``foreign`` and
    ``cell_ids`` as for :func:`caselint.mesh.stack_walk.walk_lockstep`.

    :returns: the heights of the cells walked here (row, cells walked so far) and
        ``moved``.
    """
    cos_turn = math.cos(math.radians(turn_deg))
    kernel = compiled("layer_walk", mesh.n_cells)
    if kernel is None:
        return walk_lockstep(mesh, state, walled, *shape, cos_turn, max_cells, reach_m,
                             foreign, cell_ids)
    cf, data = mesh.cell_faces, mesh.data
    topo = (cf.offsets, cf.faces, data.face_offsets, data.face_points, mesh.points)
    stop = _NONE if foreign is None else foreign
    ids = _NO_IDS if cell_ids is None else cell_ids
    n = len(state.cell)
    parts = in_threads(lambda p: kernel.walk(
        *topo, mesh.owner, mesh.neighbour, mesh.face_area_vectors, mesh.face_areas,
        mesh.face_centroids, walled, stop, ids, *state.arrays(p), *shape, cos_turn,
        max_cells, float(reach_m), mesh.dim == 3), n, waits=mesh.on_disk)
    tables, moved = zip(*parts)
    heights = np.zeros((n, max(t.shape[1] for t in tables)))
    at = 0
    for t in tables:
        heights[at : at + len(t), : t.shape[1]] = t
        at += len(t)
    return heights, np.concatenate(moved)


#: ``foreign`` and ``cell_ids`` for the compiled walk on a whole mesh: none.
_NONE = np.zeros(0, dtype=bool)
_NO_IDS = np.zeros(0, dtype=np.int64)


def extents(mesh: "Mesh", cells: np.ndarray, origin: np.ndarray,
            normal: np.ndarray) -> np.ndarray:
    """Largest distance of each of ``cells``' vertices from its ``origin`` along its unit
    ``normal`` (m), compiled or with numpy (equal results)."""
    kernel = compiled("layer_walk", mesh.n_cells)
    if kernel is None:
        return cell_extent(mesh, cells, origin, normal)
    cf, data = mesh.cell_faces, mesh.data
    return kernel.extents(cf.offsets, cf.faces, data.face_offsets, data.face_points,
                          mesh.points, np.asarray(cells, dtype=np.int64),
                          np.ascontiguousarray(origin), np.ascontiguousarray(normal))


def stacks_from(faces: np.ndarray, cells0: np.ndarray, w: StackState, heights: np.ndarray,
                extent, reach_m: float) -> WallLayers:
    """The stacks above ``faces`` (wall cells ``cells0``) from what their walks found and
    the ``heights`` of the cells walked: cut before a block or at the middle of a passage,
    thickness, growth and core jump (``extent`` as for :meth:`StackState.at_walls`)."""
    n = len(faces)
    n_layers, end, core_cell, core_origin, core_normal = _cut_before_a_block(w)
    n_layers, end, passage = _cut_at_the_middle(heights, n_layers, end, w.facing)
    depth = np.arange(heights.shape[1])[None, :]
    in_layers = depth < n_layers[:, None]
    thickness = np.where(in_layers, heights, 0.0).sum(axis=1)
    max_growth = np.zeros(n)
    growth_layer = np.zeros(n, dtype=np.int64)
    if heights.shape[1] >= 2:
        pair = in_layers[:, 1:]                       # layer k+1 (and so k) inside the stack
        ratio = np.where(pair, heights[:, 1:] / np.where(pair, heights[:, :-1], 1.0), 0.0)
        at = np.argmax(ratio, axis=1)
        max_growth = ratio[np.arange(n), at]
        growth_layer = np.where(max_growth > 0, at + 2, 0)
    core_jump = np.zeros(n)
    has_core = np.flatnonzero(core_cell >= 0)
    if has_core.size:
        core_h = extent(core_cell[has_core], core_origin[has_core], core_normal[has_core])
        last = heights[has_core, n_layers[has_core] - 1]
        core_jump[has_core] = core_h / last
    return WallLayers(faces, cells0, w.n_wall, w.centre, w.first, w.layered_first, n_layers,
                      w.n_walked, heights, thickness, max_growth, growth_layer, end, core_cell,
                      core_jump, passage, reach=reach_m)


def _cut_before_a_block(w: StackState):
    """Layers, end codes and core cells once the stacks that end in a block of cells of one
    height, entered with a jump (at least two cells from the last jump on), are cut before
    that jump: the block is a core (the centre of a pipe O-grid), its first cell the core
    cell."""
    n_layers, end = w.n_layers.copy(), w.end.copy()
    core_cell, core_origin, core_normal = (w.core_cell.copy(), w.core_origin.copy(),
                                           w.core_normal.copy())
    cut = np.flatnonzero((w.jump_at >= 1) & (n_layers - w.jump_at >= 2))
    n_layers[cut] = w.jump_at[cut]
    end[cut] = END_CORE
    core_cell[cut] = w.jump_cell[cut]
    core_origin[cut] = w.jump_origin[cut]
    core_normal[cut] = w.jump_normal[cut]
    return n_layers, end, core_cell, core_origin, core_normal


def _cut_at_the_middle(heights: np.ndarray, n_layers: np.ndarray, end: np.ndarray,
                       facing: np.ndarray):
    """Layers, end codes and passage widths once the stacks that reached a facing wall are
    cut at the middle: a layer stays if it starts before half the distance across (the
    cell holding the middle belongs to both walls' stacks)."""
    passage = np.full(len(end), math.inf)
    across = np.flatnonzero((end == END_BOUNDARY) & facing)
    if across.size == 0:
        return n_layers, end, passage
    h, k = heights[across], n_layers[across]
    inside = np.arange(h.shape[1])[None, :] < k[:, None]
    tops = np.cumsum(np.where(inside, h, 0.0), axis=1)
    width = tops[np.arange(across.size), k - 1]
    # the bottom of a layer equal to the middle (an even count of equal cells) is past it
    starts = inside & (tops - h < 0.5 * width[:, None] * (1 - 1e-9))
    n_layers, end = n_layers.copy(), end.copy()
    n_layers[across] = np.count_nonzero(starts, axis=1)
    end[across] = END_MIDDLE
    passage[across] = width
    return n_layers, end, passage
