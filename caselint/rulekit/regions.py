"""Regions of interest of a case file: which points lie inside, and the size of cells.

A region (``regions`` of the case file: a box, a sphere or a cylinder, in metres) holds the
cells whose centroid lies inside it; a region naming a cell zone of the mesh holds that
zone's cells. On a 2-D mesh the z coordinate is ignored: a box is
its x-y rectangle, a sphere its circle around the centre's x and y, a cylinder its shape
in the x-y plane.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.manifest.case import Case, Region
    from caselint.mesh.analysis import Mesh


def cell_sizes(mesh: "Mesh") -> np.ndarray:
    """(C,) cell sizes (m): cube root of |volume|, or square root of |area| in 2-D."""

    def build() -> np.ndarray:
        volumes = np.abs(mesh.cell_volumes)
        return np.cbrt(volumes) if mesh.dim == 3 else np.sqrt(volumes)

    return mesh.cached("regions.cell_sizes", build)


def region_centre(region: "Region") -> np.ndarray:
    """The centre of a region (m)."""
    g = region.geometry
    if region.shape == "box":
        return (np.asarray(g["min"]) + np.asarray(g["max"])) / 2.0
    if region.shape == "sphere":
        return np.asarray(g["center"], dtype=float)
    return (np.asarray(g["start"]) + np.asarray(g["end"])) / 2.0


def inside(region: "Region", points: np.ndarray, dim: int = 3) -> np.ndarray:
    """(N,) bool: which ``points`` (N, 3), in metres, lie inside ``region`` (surface included)."""
    pts = np.array(points, dtype=float, copy=True)
    if dim == 2:
        pts[:, 2] = region_centre(region)[2]       # z plays no part on a 2-D mesh
    g = region.geometry
    if region.shape == "box":
        lo, hi = np.asarray(g["min"]), np.asarray(g["max"])
        return np.all((pts >= lo) & (pts <= hi), axis=1)
    radius = float(g["radius"])
    if region.shape == "sphere":
        return ((pts - np.asarray(g["center"])) ** 2).sum(axis=1) <= radius**2
    start, end = np.asarray(g["start"], dtype=float), np.asarray(g["end"], dtype=float)
    axis = end - start
    length = float(np.sqrt(axis @ axis))
    axis = axis / length
    rel = pts - start
    along = rel @ axis
    radial = rel - along[:, None] * axis
    return (along >= 0) & (along <= length) & ((radial**2).sum(axis=1) <= radius**2)


def cells_of_region(region: "Region", mesh: "Mesh") -> np.ndarray:
    """Ids of the cells of ``region``: the cell zone's cells for a region naming one (none
    when the mesh lacks it), else those whose centroid lies inside."""
    if region.shape == "zone":
        zones = mesh.data.zone_names
        if mesh.data.cell_zone is None or region.geometry["zone"] not in zones:
            return np.zeros(0, dtype=np.int64)
        return np.flatnonzero(mesh.data.cell_zone == zones.index(region.geometry["zone"]))
    return np.flatnonzero(inside(region, mesh.cell_centroids, mesh.dim))


def region_cells(case: "Case", mesh: "Mesh") -> np.ndarray:
    """(C,) bool: cells of any region of interest of the case."""
    out = np.zeros(mesh.n_cells, dtype=bool)
    for region in case.regions:                     # a few regions per case
        out[cells_of_region(region, mesh)] = True
    return out
