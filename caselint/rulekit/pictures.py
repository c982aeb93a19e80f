"""Pictures of where a rule's problems are: a plane cut through the worst cell.

A failing mesh rule attaches a :class:`~caselint.model.PlotData` of kind ``cut``: the
cells around the worst place, cut by a plane through the worst cell's centroid, each
polygon coloured by the measured value, the worst cell outlined and the no-slip walls
drawn (:mod:`caselint.mesh.cut` computes the polygons; reporters only draw them). The
plane is normal to a coordinate axis: for a face metric the axis nearest the normal of
the plane holding the worst face's normal and the link between its cell centres (the
plane in which the face's non-orthogonality shows; the axis least aligned with the face
normal where the two are parallel), else the axis along which the mesh is thinnest. At most :data:`MAX_POLYGONS` cells, the
nearest to the worst, are drawn, so pictures stay small.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.cut import coordinate_axes, face_traces, plane_cut
from caselint.plotdata import PlotData, PlotSeries
from caselint.rulekit.walls import WALL_ROLE

if TYPE_CHECKING:
    from caselint.engine.context import RuleContext

#: Most cell polygons a picture draws: the cells nearest the worst.
MAX_POLYGONS = 1200


def cut_picture(ctx: "RuleContext", cell_values: np.ndarray, worst_cell: int, title: str,
                value_label: str, worst_face: int | None = None) -> PlotData | None:
    """The cut picture around ``worst_cell`` (and ``worst_face``, for a face metric), cells
    coloured by ``cell_values`` (C,); None when the plane cuts nothing there."""
    mesh = ctx.mesh
    centre = mesh.cell_centroids[worst_cell]
    if mesh.dim == 2:
        axis = 2
    elif worst_face is not None:
        axis = _face_plane_axis(mesh, worst_face)
    else:
        lo, hi = mesh.bounds
        axis = int(np.argmin(hi - lo))
    n, u, v = coordinate_axes(axis)
    offset = mesh.cell_centroids - centre
    near = np.arange(mesh.n_cells)
    if mesh.dim == 3:        # only cells the plane can reach (a cell's size from it)
        reach = np.abs(offset @ n)
        near = np.flatnonzero(reach <= 2.0 * np.cbrt(np.abs(mesh.cell_volumes)) + 1e-300)
    if near.size > MAX_POLYGONS:          # then the nearest; ties by cell id
        distance = np.einsum("ij,ij->i", offset[near], offset[near])
        near = near[np.lexsort((near, distance))[:MAX_POLYGONS]]
    cut = plane_cut(mesh, centre, n, np.sort(near), axes=(n, u, v))
    values = np.asarray(cell_values, dtype=np.float64)[cut.cells]
    keep = np.isfinite(values)
    if not keep.any():
        return None
    # relative to the worst cell's centroid: the axes read as distances from it
    origin_uv = np.array([(centre - cut.origin) @ u, (centre - cut.origin) @ v])
    series = tuple(PlotSeries(x=tuple(float(a) for a in poly[:, 0] - origin_uv[0]),
                              y=tuple(float(b) for b in poly[:, 1] - origin_uv[1]),
                              value=float(val))
                   for poly, val, ok in zip((cut.polygon(i) for i in range(len(cut.cells))),
                                            values, keep) if ok)
    kept_cells = cut.cells[keep]
    where = np.flatnonzero(kept_cells == worst_cell)
    wall_faces = _wall_faces(ctx, near)
    traces = tuple(PlotSeries(x=tuple(float(a) for a in seg[:, 0] - origin_uv[0]),
                              y=tuple(float(b) for b in seg[:, 1] - origin_uv[1]), label="wall")
                   for seg in face_traces(mesh, wall_faces, cut))
    names = "xyz"
    u_name, v_name = names[int(np.argmax(u))], names[int(np.argmax(v))]
    at = f"{names[axis]} = {centre[axis]:.4g} m" if mesh.dim == 3 else "the mesh plane"
    return PlotData(title=f"{title}: cells around the worst, cut at {at}",
                    x_label=f"{u_name} (m, from the worst cell)",
                    y_label=f"{v_name} (m, from the worst cell)", value_label=value_label,
                    series=series, kind="cut", walls=traces,
                    highlight=int(where[0]) if where.size else None)


def _face_plane_axis(mesh, face: int) -> int:
    """The coordinate axis nearest the normal of the plane through a face's normal and its
    centre link (see the module docstring)."""
    s = mesh.face_area_vectors[face]
    owner, nbr = int(mesh.owner[face]), int(mesh.neighbour[face])
    far = mesh.cell_centroids[nbr] if nbr >= 0 else mesh.face_centroids[face]
    link = far - mesh.cell_centroids[owner]
    normal = np.cross(s, link)
    if np.linalg.norm(normal) > 1e-9 * np.linalg.norm(s) * max(np.linalg.norm(link), 1e-300):
        return int(np.argmax(np.abs(normal)))
    return int(np.argmin(np.abs(s)))


def _wall_faces(ctx: "RuleContext", cells: np.ndarray) -> np.ndarray:
    """Boundary faces of the case's no-slip walls owned by ``cells``."""
    mesh = ctx.mesh
    groups = [name for name, role in ctx.case.mesh.boundaries.items()
              if role == WALL_ROLE and name in mesh.group_names]
    if not groups:
        return np.zeros(0, dtype=np.int64)
    index = [mesh.group_names.index(g) for g in groups]
    faces = mesh.boundary_faces[np.isin(mesh.face_group[mesh.boundary_faces], index)]
    return faces[np.isin(mesh.owner[faces], cells)]


def face_values_per_cell(mesh, face_values: np.ndarray, faces: np.ndarray | None) -> np.ndarray:
    """(C,) the largest of a face metric over each cell's faces (``faces``: those measured,
    None: all); NaN for cells with none measured."""
    considered = np.full(mesh.n_faces, np.nan)
    chosen = slice(None) if faces is None else faces
    considered[chosen] = np.asarray(face_values)[chosen]
    out = np.full(mesh.n_cells, -np.inf)
    np.fmax.at(out, mesh.owner, considered)
    n = mesh.n_internal
    np.fmax.at(out, mesh.neighbour[:n], considered[:n])
    return np.where(np.isfinite(out), out, np.nan)
