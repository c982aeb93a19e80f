"""Wall layer stacks: the cells lined up above each wall face, walked layer by layer.

From a wall face the walk enters the cell behind it, crosses to the cell's *opposite
face* and on to the neighbour across that face. The opposite face is found from the
cell's faces, for any cell: the faces sharing no point with the entry face (the far side
of a hexahedron, the other triangle of a wedge entered through a triangle, the far edge
of a 2-D quadrilateral; several for a polyhedron whose far side is split by a refinement,
of which the one the entry normal crosses first is taken, :func:`_opposite`). All wall
faces walk in lock-step: one vectorised numpy step per layer, never a Python loop over
faces.

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
  thick to count as a layer (then the face has no stack).

Defaults: ``max_aspect`` 1, ``turn_deg`` 45, ``max_cells`` 200 (caselint's choices).

The stack ends at the first cell failing one of these, when an opposite face is on the
boundary, or after ``max_cells`` cells. The walk itself may go on through cells that are
layer-shaped but thick (a structured hexahedral core), so that the cells across a
boundary layer can be counted beyond the inflation stack: it goes on while the walked
cells reach less than ``reach_m`` from the wall (the boundary-layer thickness), and no
further, since nothing asks about cells beyond it.

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
from caselint.mesh.geometry import chunks
from caselint.mesh.topology import cell_point_table

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: How a stack ended (``WallLayers.end``).
NO_STACK = 0      #: the wall cell is no layer cell (a tetrahedron, or as tall as wide)
END_CORE = 1      #: the next cell is a core cell: not layer-shaped, or not thin
END_TURN = 2      #: the next cell's layer direction turns by more than ``turn_deg``
END_BOUNDARY = 3  #: the last layer's opposite face is on the boundary
END_LIMIT = 4     #: the stack reached ``max_cells``
END_DEGENERATE = 5  #: the next layer-shaped cell has a non-positive height
END_WORDS = {
    NO_STACK: "no layer cell at the wall", END_CORE: "core cell", END_TURN: "layer direction turns",
    END_BOUNDARY: "another boundary", END_LIMIT: "walk limit", END_DEGENERATE: "degenerate cell",
}


@dataclass(frozen=True)
class WallLayers:
    """Layer stacks above a set of boundary faces; every array has one row per face.

    Lengths in metres. ``heights[i, k]`` is the height of the k-th cell walked from face
    ``faces[i]`` (0 beyond ``n_walked[i]``); the first ``n_layers[i]`` of them form the
    stack; the walk went on past the stack up to ``reach`` m from the wall.
    ``max_growth`` is the largest ``h[k+1] / h[k]`` inside the stack (0 with fewer than
    two layers), at layer ``growth_layer`` (1-based number of the larger layer).
    ``core_jump`` is the core cell's height over the last layer's where ``end`` is
    ``END_CORE`` (0 elsewhere).
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


def wall_layers(mesh: "Mesh", faces, *, max_aspect: float = 1.0, turn_deg: float = 45.0,
                max_cells: int = 200, reach_m: float = math.inf) -> WallLayers:
    """The layer stacks above boundary ``faces`` (ids), walked up to ``reach_m`` from the
    wall; cached on the mesh per face set (a walk that reached further serves too)."""
    faces = np.unique(np.asarray(faces, dtype=np.int64))
    if faces.size and (faces.min() < 0 or faces.max() >= mesh.n_faces
                       or np.any(mesh.neighbour[faces] >= 0)):
        raise ValueError("wall_layers() needs ids of boundary faces (faces with no neighbour)")
    if not reach_m >= 0:
        raise ValueError(f"reach_m must be at least 0, got {reach_m!r}")
    digest = hashlib.sha1(faces.tobytes()).hexdigest()
    key = f"wall_layers:{digest}:{max_aspect!r}:{turn_deg!r}:{int(max_cells)}"
    walks: dict[float, WallLayers] = mesh.cached(key, dict)
    for reach, layers in walks.items():
        if reach >= reach_m:
            return layers
    layers = _walk(mesh, faces, max_aspect, turn_deg, int(max_cells), float(reach_m))
    walks[float(reach_m)] = layers
    return layers


def _opposite(mesh: "Mesh", cells: np.ndarray, entry: np.ndarray, x_in: np.ndarray,
              n_in: np.ndarray):
    """The face of each cell opposite its entry face, and whether it has one.

    Candidates are the cell's faces that share no point with the entry face: exactly the
    opposite face of a hexahedron, of a wedge entered through a triangle and of a 2-D
    quadrilateral, none for tetrahedra, pyramids and wedges entered through a
    quadrilateral. Among several (a polyhedron with a split top face, a hexahedron whose
    sides are split by a refinement), the first one crossed by the ray from the entry face
    centroid along the entry normal ``n_in`` (into the cell) is taken.
    """
    slots = np.take(mesh.cell_face_table(), cells, axis=0)                      # (m, K)
    valid = (slots >= 0) & (slots != entry[:, None])
    table = mesh.face_point_table
    entry_pts = table(entry)                                           # (m, Ve)
    m, k = slots.shape
    pts = table(np.where(valid, slots, 0).ravel()).reshape(m, k, -1)   # (m, K, V)
    shared = (pts[:, :, :, None] == entry_pts[:, None, None, :]).any(axis=(2, 3))
    cand = valid & ~shared
    f = np.where(cand, slots, 0)
    s = np.take(mesh.face_area_vectors, f.ravel(), axis=0).reshape(m, k, 3)
    xf = np.take(mesh.face_centroids, f.ravel(), axis=0).reshape(m, k, 3)
    sign = np.where(mesh.owner[f] == cells[:, None], 1.0, -1.0)
    dn = _dot(s, n_in[:, None, :]) * sign
    reach = _dot(s, xf - x_in[:, None, :]) * sign
    leaving = cand & (dn > 0)
    t = np.where(leaving, reach / np.where(leaving, dn, 1.0), np.inf)
    # a candidate the ray does not leave through ranks after every one it does
    score = np.where(leaving, t, np.where(cand, np.finfo(float).max, np.inf))
    j = np.argmin(score, axis=1)
    rows = np.arange(m)
    shaped = cand[rows, j]
    opp = np.where(shaped, slots[rows, j], entry).astype(np.int64)
    return opp, shaped


def _extent(mesh: "Mesh", cells: np.ndarray, origin: np.ndarray, normal: np.ndarray) -> np.ndarray:
    """Largest distance of each cell's vertices from ``origin`` along unit ``normal`` (m)."""
    out = np.zeros(len(cells))
    for sl in chunks(len(cells)):
        pts = mesh.points[cell_point_table(mesh.data, mesh.cell_faces, cells[sl])]
        out[sl] = _dot(pts - origin[sl][:, None, :], normal[sl][:, None, :]).max(axis=1)
    return out


def _dot(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Dot product over the last axis (of length 3), summed x + y + z in that order: the
    compiled walk (:mod:`caselint.mesh.kernels.layer_walk`) sums the same way."""
    return a[..., 0] * b[..., 0] + a[..., 1] * b[..., 1] + a[..., 2] * b[..., 2]


def _unit_normals(mesh: "Mesh", faces: np.ndarray, sign: np.ndarray) -> np.ndarray:
    s = mesh.face_area_vectors[faces]
    area = mesh.face_areas[faces]
    return s * (sign / np.where(area > 0, area, 1.0))[:, None]


def _walk(mesh: "Mesh", faces: np.ndarray, max_aspect: float, turn_deg: float,
          max_cells: int, reach_m: float = math.inf) -> WallLayers:
    """Walk every stack (compiled, or in lock step with numpy) and sum up its layers."""
    cos_turn = math.cos(math.radians(turn_deg))
    kernel = compiled("layer_walk", mesh.n_cells)
    if kernel is None:
        walked = _walk_lockstep(mesh, faces, max_aspect, cos_turn, max_cells, reach_m)
        extent = functools.partial(_extent, mesh)
    else:
        cf, data = mesh.cell_faces, mesh.data
        topo = (cf.offsets, cf.faces, data.face_offsets, data.face_points, mesh.points)
        parts = in_threads(lambda p: kernel.walk(
            *topo, mesh.owner, mesh.neighbour, mesh.face_area_vectors, mesh.face_areas,
            mesh.face_centroids, mesh.cell_centroids, faces[p], float(max_aspect), cos_turn,
            max_cells, float(reach_m), mesh.dim == 3), len(faces))
        *per_face, tables = (list(values) for values in zip(*parts))
        per_face = [np.concatenate(values) for values in per_face]
        widest = max(t.shape[1] for t in tables)
        heights = np.zeros((len(faces), widest))
        at = 0
        for t in tables:
            heights[at : at + len(t), : t.shape[1]] = t
            at += len(t)
        walked = _Walked(*per_face[:6], heights, *per_face[6:])
        extent = functools.partial(kernel.extents, *topo)
    return _stacks(faces, mesh.owner[faces], walked, extent, reach_m)


@dataclass(frozen=True)
class _Walked:
    """What the walks found, per wall face (see :class:`WallLayers`)."""

    n_wall: np.ndarray
    centre: np.ndarray
    first: np.ndarray
    layered_first: np.ndarray
    n_layers: np.ndarray
    n_walked: np.ndarray
    heights: np.ndarray
    end: np.ndarray
    core_cell: np.ndarray
    core_origin: np.ndarray
    core_normal: np.ndarray


def _walk_lockstep(mesh: "Mesh", faces: np.ndarray, max_aspect: float, cos_turn: float,
                   max_cells: int, reach_m: float) -> _Walked:
    """March every stack one cell per step (see the module docstring)."""
    n = len(faces)
    owner, neighbour = mesh.owner, mesh.neighbour
    xf, areas = mesh.face_centroids, mesh.face_areas

    cells0 = owner[faces]
    n_wall = _unit_normals(mesh, faces, -np.ones(n))      # area vectors point out of the domain
    centre = _dot(mesh.cell_centroids[cells0] - xf[faces], n_wall)
    first = _extent(mesh, cells0, xf[faces], n_wall)
    layered_first = np.zeros(n, dtype=bool)

    columns: list[np.ndarray] = []
    n_walked = np.zeros(n, dtype=np.int64)
    n_layers = np.zeros(n, dtype=np.int64)
    in_stack = np.ones(n, dtype=bool)
    end = np.full(n, END_LIMIT, dtype=np.int8)
    core_cell = np.full(n, -1, dtype=np.int64)
    core_origin = np.zeros((n, 3))
    core_normal = np.zeros((n, 3))

    # State of the active stacks; the entry face's centroid and width carry over a step.
    act, cell, entry, nin = np.arange(n), cells0.copy(), faces.copy(), n_wall.copy()
    x_in = xf[faces]
    a_in = areas[faces]
    top = np.zeros(n)                        # distance from the wall walked so far, per stack
    for step in range(max_cells):
        if act.size == 0:
            break
        opp, shaped = _opposite(mesh, cell, entry, x_in, nin)
        mine = owner[opp] == cell
        a_out = areas[opp]
        x_out = np.take(xf, opp, axis=0)      # take and compress: see _opposite
        nout = np.take(mesh.face_area_vectors, opp, axis=0) * (
            np.where(mine, 1.0, -1.0) / np.where(a_out > 0, a_out, 1.0))[:, None]
        h = _dot(x_out - x_in, nin)
        straight = _dot(nout, np.take(n_wall, act, axis=0)) >= cos_turn
        ok = shaped & straight & (h > 0)
        width = np.sqrt(a_in) if mesh.dim == 3 else a_in
        thin = ok & (h < max_aspect * width)
        if step == 0:
            first[ok] = h[ok]
            layered_first[ok] = True
        column = np.zeros(n)
        column[act[ok]] = h[ok]
        columns.append(column)
        n_walked[act[ok]] += 1

        stacking = in_stack[act]
        n_layers[act[stacking & thin]] += 1
        stops = stacking & ~thin
        reason = np.where(~shaped | (ok & ~thin), END_CORE,
                          np.where(~straight, END_TURN, END_DEGENERATE))
        if step == 0:
            reason[:] = NO_STACK
        end[act[stops]] = reason[stops]
        at_core = stops & (reason == END_CORE)
        core_cell[act[at_core]] = cell[at_core]
        core_origin[act[at_core]] = x_in[at_core]
        core_normal[act[at_core]] = nin[at_core]
        in_stack[act[stops]] = False

        on_boundary = ok & (neighbour[opp] < 0)
        closing = stacking & thin & on_boundary
        end[act[closing]] = END_BOUNDARY
        in_stack[act[closing]] = False
        top[act[ok]] += h[ok]
        # past its stack, a walk goes on only while it is within reach of the wall
        go = ok & ~on_boundary & (in_stack[act] | (top[act] < reach_m))
        nxt = np.where(mine, neighbour[opp], owner[opp])
        act, cell, entry, nin = act[go], nxt[go], opp[go], np.compress(go, nout, axis=0)
        x_in, a_in = np.compress(go, x_out, axis=0), a_out[go]

    walked = int(n_walked.max(initial=0))    # the last step may have walked no cell
    heights = np.column_stack(columns[:walked]) if walked else np.zeros((n, 0))
    return _Walked(n_wall, centre, first, layered_first, n_layers, n_walked, heights, end,
                   core_cell, core_origin, core_normal)


def _stacks(faces: np.ndarray, cells0: np.ndarray, w: _Walked, extent,
            reach_m: float) -> WallLayers:
    """The stacks' thickness, growth and core jump from the walked heights."""
    n, heights, n_layers, core_cell = len(faces), w.heights, w.n_layers, w.core_cell
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
        core_h = extent(core_cell[has_core], w.core_origin[has_core], w.core_normal[has_core])
        last = heights[has_core, n_layers[has_core] - 1]
        core_jump[has_core] = core_h / last
    return WallLayers(faces, cells0, w.n_wall, w.centre, w.first, w.layered_first, n_layers,
                      w.n_walked, heights, thickness, max_growth, growth_layer, w.end, core_cell,
                      core_jump, reach=reach_m)
