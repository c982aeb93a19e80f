"""How much neighbouring cells differ in size: the growth (size) ratio and the volume ratio.

The growth ratio of an internal face is the larger over the smaller of its two cells'
sizes *across that face*. The rule of thumb it is judged by (neighbours differ by at most
about 30 %, common practice) is about a length, so the measure must be a length ratio:
the grading ratio on a block graded in one direction, 2 (not 8) across a 2:1 refinement,
and near 1 between cells of one target size on an unstructured mesh. The size of a cell
across one of its faces is

- for hexahedra, wedges, quadrilaterals and cells of no known shape (polyhedra,
  polygons): the cell's *thickness* normal to the face, the largest distance of its
  vertices from the face's plane. On a graded block (or a prism layer stack) that is each
  cell's height, so the ratio is the grading ratio exactly; across a 2:1 refinement a
  coarse cell of width h meets fine cells of h / 2 through its split face, ratio 2; a
  wedge seen through its quadrilateral side is as thick as its triangle's height over that
  side, which matches the hexahedron beside it in an extruded quad-dominant mesh.
- for tetrahedra, pyramids and triangles: the root mean square of the cell's edge lengths
  (an isotropic size, the edge length of a regular cell). Their thickness over a face will
  not do: two tetrahedra sharing a face have heights over it in the ratio of their
  volumes (V = A h / 3), so it would be the volume ratio again.

Measured on meshes made with gmsh (tests/calibration.py builds them) [computed]: the
share of internal faces above 1.3, and the largest value, of each candidate measure:

    mesh                                      this ratio    cube root of    twice the centroid
                                                            volume ratio    to face distance
    uniform optimised tetrahedra, 19k cells   0.34 %, 1.57  3.1 %, 1.71     as this ratio
    uniform optimised tetrahedra, 430k cells  0.07 %, 1.48  2.9 %, 1.76     as this ratio
    extruded recombined quadrilaterals, 9.5k  7.1 %, 1.72   0.26 %, 1.38    10 %, 1.84
    gmsh size field 80 -> 20 mm (smoothed)    2.2 %, 2.19   4.5 %, 1.96     as this ratio

(the volume ratio itself: 38 % above 1.3 and 4.96 at worst on the 19k uniform tetrahedra).

The cube root of the volume ratio is kinder to irregular quadrilaterals but understates
every graded block (1.6 grading reads 1.17) and 2-D grading alike; twice the distance
from the centroid to the face (the distance the interpolation weight uses) equals this
ratio on hexahedra and on tetrahedra (where the root-mean-square edge replaces it) but
reads a wedge through its quadrilateral side at two thirds of the triangle's height, so a
right-angled wedge beside a hexahedron of its width shows 1.5 where there is no change.
The noise this ratio keeps on irregular unstructured quadrilaterals (a few per cent of
faces above 1.3) is left to the grading of ``growth-ratio`` (a share, not the worst face).

The volume ratio (larger over smaller cell volume) is kept as a measurement of its own:
it finds a tiny cell beside a normal one (a sliver, a collapsed cell) whatever its shape.

Both are 1.0 on boundary faces and where a size or volume is not positive (a collapsed or
inverted cell, left to ``inverted-cells``). Per cell the compiled kernel
(:mod:`caselint.mesh.kernels.face_checks`) measures the thickness with the same arithmetic
in the same order, so the two paths agree to the bit.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint.mesh.celltypes import EDGES
from caselint.mesh.geometry import chunks
from caselint.mesh.kernels import compiled, in_threads
from caselint.mesh.topology import cell_point_table

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: Shapes whose size across a face is the root-mean-square edge length (isotropic cells).
ISOTROPIC_SHAPES: tuple[str, ...] = ("tetra", "pyramid", "triangle")


def rms_edge_lengths(mesh: "Mesh") -> np.ndarray:
    """(C,) root mean square of the edge lengths of each tetrahedron, pyramid and
    triangle (m); NaN for the other cells, whose size is measured across each face
    (read-only; on a mesh with none of these shapes one NaN seen through every index, not
    an array as long as the cells)."""

    def compute() -> np.ndarray:
        if not any(b.type in ISOTROPIC_SHAPES and len(b.cells) for b in mesh.data.shapes):
            return np.broadcast_to(np.float64(np.nan), (mesh.n_cells,))
        out = np.full(mesh.n_cells, np.nan)
        points = mesh.points
        for block in mesh.data.shapes:
            if block.type not in ISOTROPIC_SHAPES:
                continue
            edges = np.asarray(EDGES[block.type])
            for sl in chunks(len(block.cells)):
                conn = block.connectivity[sl]
                total = np.zeros(len(conn))
                for a, b in edges:
                    v = points[conn[:, b]] - points[conn[:, a]]
                    total += v[:, 0] * v[:, 0] + v[:, 1] * v[:, 1] + v[:, 2] * v[:, 2]
                out[block.cells[sl]] = np.sqrt(total / len(edges))
        out.flags.writeable = False
        return out

    return mesh.cached("size_ratio.rms_edge_lengths", compute)


def sizes_across_faces(mesh: "Mesh", faces: slice | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Sizes (m) of the owner and of the neighbour across the internal faces ``faces``
    (default: all), see the module docstring; 0 where a thickness is not positive. The
    numpy reference, not kept: the rules read :func:`growth_ratio` and :func:`mean_sizes`."""
    sl = slice(0, mesh.n_internal) if faces is None else faces
    iso = rms_edge_lengths(mesh)
    area = mesh.face_areas[sl]
    normal = mesh.face_area_vectors[sl] / np.where(area > 0, area, 1.0)[:, None]
    centre = mesh.face_centroids[sl]
    sizes = []
    for cells, sign in ((mesh.owner[sl], -1.0), (mesh.neighbour[sl], 1.0)):
        pts = mesh.points[cell_point_table(mesh.data, mesh.cell_faces, cells)]
        rel = pts - centre[:, None, :]
        # summed x + y + z in that order, as the compiled kernel does
        dist = (rel[..., 0] * normal[:, None, 0] + rel[..., 1] * normal[:, None, 1]
                + rel[..., 2] * normal[:, None, 2])
        thick = np.maximum((sign * dist).max(axis=1), 0.0)
        size = iso[cells]
        sizes.append(np.where(np.isnan(size), thick, size))
    return sizes[0], sizes[1]


#: Memo keys: the pair (growth ratio, mean sizes) of one pass, and the mean sizes alone.
_PAIR, _SIZES = "size_ratio.ratios", "size_ratio.mean_sizes"


def _ratios(mesh: "Mesh") -> tuple[np.ndarray, np.ndarray]:
    """(F,) growth ratio and (I,) mean size of the two cells across each internal face,
    in one pass over the faces (the sizes themselves are not kept); not kept either."""
    n = mesh.n_internal
    growth, spacing = np.ones(mesh.n_faces), np.empty(n)
    kernel = compiled("face_checks", mesh.n_cells)
    if kernel is not None:
        cf, data = mesh.cell_faces, mesh.data
        iso = rms_edge_lengths(mesh)
        in_threads(lambda p: kernel.size_ratios(
            mesh.owner, mesh.neighbour, cf.offsets, cf.faces, data.face_offsets,
            data.face_points, mesh.points, mesh.face_area_vectors, mesh.face_areas,
            mesh.face_centroids, iso, p.start, p.stop, growth, spacing), n)
        return growth, spacing
    for sl in chunks(n):
        own, nbr = sizes_across_faces(mesh, sl)
        ok = (own > 0) & (nbr > 0)
        big, small = np.maximum(own, nbr), np.minimum(own, nbr)
        growth[sl] = np.where(ok, big / np.where(ok, small, 1.0), 1.0)
        spacing[sl] = 0.5 * (own + nbr)
    return growth, spacing


def growth_ratio(mesh: "Mesh") -> np.ndarray:
    """(F,) larger over smaller size of a face's two cells across it; 1.0 on boundary
    faces and where a size is not positive.

    Computed on each call unless the pair with the mean sizes is kept (one rule reads it:
    8 bytes a face held for nothing); the mean sizes that come with it are kept, for the
    skewness."""
    if mesh.has(_PAIR):
        return mesh.cached(_PAIR, lambda: _ratios(mesh))[0]
    growth, spacing = _ratios(mesh)
    mesh.cached(_SIZES, lambda: spacing)
    return growth


def mean_sizes(mesh: "Mesh") -> np.ndarray:
    """(I,) mean of the two cells' sizes across each internal face (m), kept. Asked for
    before the growth ratio (by the skewness alone, or by partitions, which compute every
    quantity), the pair is kept, so that the growth ratio needs no second pass."""
    if mesh.has(_SIZES):
        return mesh.cached(_SIZES, lambda: _ratios(mesh)[1])
    return mesh.cached(_PAIR, lambda: _ratios(mesh))[1]


def volume_ratio(mesh: "Mesh") -> np.ndarray:
    """(F,) larger over smaller volume of the two cells of a face; 1.0 on boundary faces
    and where a volume is not positive. Computed on each call (one rule reads it)."""

    def compute() -> np.ndarray:
        out = np.ones(mesh.n_faces)
        volumes = mesh.cell_volumes
        # in cache-sized pieces: no temporaries as long as the faces
        for sl in chunks(mesh.n_internal):
            vp, vn = volumes[mesh.owner[sl]], volumes[mesh.neighbour[sl]]
            ok = (vp > 0) & (vn > 0)
            big, small = np.maximum(vp, vn), np.minimum(vp, vn)
            out[sl] = np.where(ok, big / np.where(ok, small, 1.0), 1.0)
        return out

    # not kept: 8 bytes a face held for nothing
    return mesh.provided("size_ratio.volume_ratio", compute)


__all__ = ["ISOTROPIC_SHAPES", "growth_ratio", "mean_sizes", "rms_edge_lengths",
           "sizes_across_faces", "volume_ratio"]
