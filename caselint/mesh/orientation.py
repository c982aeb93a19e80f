"""Node-order conventions of element blocks: a block written mirrored is read the other way.

Element files list a cell's corner nodes in an order that fixes which side is inside.
caselint uses the meshio/VTK order of :mod:`caselint.mesh.celltypes`; some writers use the
mirror image for one cell type (wedges whose triangle (0, 1, 2) has its right-hand normal
pointing *away* from (3, 4, 5) are common in circulation). Read as written, every cell of
such a block has a negative volume, and every metric after it is nonsense.

:func:`oriented_blocks` takes the sign of each cell's volume and reads every cell of
a type in the mirrored node order (:data:`MIRROR`) when more cells of that type are
mirrored than not, saying so in a note. A convention belongs to the writer of a file, so
the vote is per cell type over the whole file rather than per block: files that list
their cells in space order split a type into many short runs (meshio reads each run as a
block), and a vote of one or two cells would "correct" a genuinely inverted cell. The
majority decides rather than unanimity so that a mirrored file with a few folded cells is
still read the right way round; those few cells, and isolated inverted cells of a file in
caselint's order, stay inverted and remain findings of the ``inverted-cells`` rule. Cells
of zero volume (flat or collapsed) vote for neither order.

The sign comes from the cell's closed surface: six times the volume is
``sum over face triangles of a . (b x c)`` with the faces of :data:`~celltypes.FACES`,
coordinates taken relative to the cell's node 0 and each face fanned from node 0 where it
holds it (so only the triangles away from node 0 count: 6 for a hexahedron, 3 for a
wedge); in 2-D it is the shoelace area of the polygon.

:func:`reverse_faces` turns polygonal faces round, for face-based readers whose files list
a face's nodes the other way from caselint's rule (normal out of the owner). This is
exact for planar faces and keeps the sign on warped ones (a corner Jacobian alone would
misjudge cells with a collapsed corner, e.g. a wedge written as a hexahedron).
"""

from __future__ import annotations

from dataclasses import replace
from typing import Sequence

import numpy as np

from caselint.mesh.celltypes import FACES, TRIANGLE_FACES
from caselint.mesh.geometry import chunks
from caselint.mesh.kernels import compiled, in_threads
from caselint.mesh.pairing import ElementBlock

#: The node order that mirrors a cell of each type (reverses the winding of its base
#: polygon and, for prisms and hexahedra, of the opposite polygon with it).
MIRROR: dict[str, tuple[int, ...]] = {
    "tetra": (0, 2, 1, 3),
    "hexahedron": (0, 3, 2, 1, 4, 7, 6, 5),
    "wedge": (0, 2, 1, 3, 5, 4),
    "pyramid": (0, 3, 2, 1, 4),
    "triangle": (0, 2, 1),
    "quad": (0, 3, 2, 1),
}

#: What each cell type's mirrored order looks like, for the note.
_CONVENTION: dict[str, str] = {
    "wedge": "the right-hand normal of triangle (0, 1, 2) pointing away from (3, 4, 5)",
    "tetra": "nodes 0, 1, 2 clockwise seen from node 3",
    "hexahedron": "the bottom 0-1-2-3 clockwise seen from the top 4-5-6-7",
    "pyramid": "the base 0-1-2-3 clockwise seen from the apex",
    "triangle": "corners clockwise",
    "quad": "corners clockwise",
}


def _far_triangles(cell: str) -> list[tuple[int, int, int]]:
    """The surface triangles of ``cell`` that do not touch node 0, each face fanned from
    node 0 where it holds it (those triangles add nothing relative to node 0)."""
    out = []
    for i, face in enumerate(FACES[cell]):
        ring = list(dict.fromkeys(face)) if i in TRIANGLE_FACES[cell] else list(face)
        if 0 in ring:
            k = ring.index(0)
            ring = ring[k:] + ring[:k]
        out += [(ring[0], ring[j], ring[j + 1]) for j in range(1, len(ring) - 1)
                if 0 not in (ring[0], ring[j], ring[j + 1])]
    return out


def volume_signs(points: np.ndarray, block: ElementBlock, dim: int,
                 kernel=None) -> np.ndarray:
    """(n,) int8 sign of each cell's volume (area in 2-D) as written: 1, -1 or 0;
    ``kernel``: the compiled :mod:`caselint.mesh.kernels.volume_signs`, or None for numpy."""
    conn = block.connectivity
    k = conn.shape[1]
    if kernel is not None:
        far = np.array(_far_triangles(block.type) if dim == 3 else [], dtype=np.int64)
        parts = in_threads(lambda p: (kernel.volume_signs(conn[p], points, far.reshape(-1, 3),
                                                          dim),), len(conn))
        return np.concatenate([part for part, in parts])
    cols = [np.ascontiguousarray(points[:, i]) for i in range(dim)]
    out = np.empty(len(conn), dtype=np.int8)
    for sl in chunks(len(conn)):
        c = conn[sl]
        rel = [[col[c[:, j]] - col[c[:, 0]] for col in cols] for j in range(k)]
        if dim == 2:
            signed = sum(rel[j][0] * rel[(j + 1) % k][1] - rel[(j + 1) % k][0] * rel[j][1]
                         for j in range(1, k - 1))
        else:
            signed = np.zeros(len(c))
            for a, b, d in _far_triangles(block.type):
                (ax, ay, az), (bx, by, bz), (dx, dy, dz) = rel[a], rel[b], rel[d]
                signed += (ax * (by * dz - bz * dy) + ay * (bz * dx - bx * dz)
                           + az * (bx * dy - by * dx))
        size = sum(np.abs(v) for v in (*rel[1], *rel[k - 1])) ** dim
        # Round-off on a flat cell: below 1e-12 of (two edges' length) cubed counts as zero.
        out[sl] = np.where(np.abs(signed) <= 1e-12 * size, 0, np.sign(signed))
    return out


def oriented_blocks(points: np.ndarray, blocks: Sequence[ElementBlock],
                    dim: int) -> tuple[list[ElementBlock], list[str]]:
    """The blocks, those of each cell type in the node order under which most cells of
    that type have a positive volume, and a note for every type read in the mirrored
    order."""
    votes: dict[str, list[int]] = {}
    kernel = compiled("volume_signs", sum(len(b.connectivity) for b in blocks))
    for block in blocks:
        if block.type in MIRROR and len(block.connectivity):
            signs = volume_signs(points, block, dim, kernel)
            count = votes.setdefault(block.type, [0, 0, 0])
            count[0] += int(np.count_nonzero(signs < 0))
            count[1] += int(np.count_nonzero(signs > 0))
            count[2] += len(signs)
    turned = {t for t, (mirrored, proper, _) in votes.items() if mirrored > proper}
    out = [replace(b, connectivity=np.ascontiguousarray(b.connectivity[:, list(MIRROR[b.type])]))
           if b.type in turned else b for b in blocks]
    notes = []
    for t in sorted(turned):
        mirrored, proper, n = votes[t]
        rest = f"; {proper} of them are inverted in that order" if proper else ""
        notes.append(f"{mirrored} of {n} {t} cells were written in the mirrored node order "
                     f"({_CONVENTION[t]}); all {n} read in the other order{rest}")
    return out, notes


def reverse_faces(offsets: np.ndarray, face_points: np.ndarray, which: np.ndarray):
    """``face_points`` with the node order of faces ``which`` reversed."""
    if not which.any():
        return face_points
    sizes = np.diff(offsets)
    pos = np.arange(len(face_points)) - np.repeat(offsets[:-1], sizes)
    flip = np.repeat(which, sizes)
    src = np.where(flip, np.repeat(offsets[1:], sizes) - 1 - pos, np.arange(len(face_points)))
    return face_points[src]
