"""Boundary groups of an element mesh: which paired face each boundary element of the file
covers.

Element files name boundaries by listing boundary elements (triangles and quadrilaterals
of a volume mesh, edges of a 2-D mesh) in groups. Each element is matched to the face with
the same vertex *set* by sorting packed keys (no loop over elements); the face takes the
group of the element on it (the lowest group index where several groups name it).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True, eq=False)
class BoundaryElements:
    """Boundary elements read from the file and the groups they belong to.

    ``vertices`` is ``(E, 4)`` with triangles repeating their last vertex (3-D), or
    ``(E, 2)`` edges (2-D). Group membership is a list of pairs: element ``element[i]``
    belongs to group ``group[i]`` (an index into the mesh's group names).
    """

    vertices: np.ndarray
    element: np.ndarray
    group: np.ndarray

    @classmethod
    def empty(cls, width: int) -> "BoundaryElements":
        """No boundary elements."""
        none = np.zeros(0, dtype=np.int64)
        return cls(np.zeros((0, width), dtype=np.int64), none, none.astype(np.int32))


def _set_keys(verts: np.ndarray, p: np.int64) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Keys of the vertex *set* of each row: (kind, k1, k2); kind = number of distinct ids."""
    s = np.sort(verts.astype(np.int64), axis=1)
    if s.shape[1] == 2:
        return np.full(len(s), 2, dtype=np.int8), s[:, 0] * p + s[:, 1], np.zeros(len(s), np.int64)
    new = np.ones_like(s, dtype=bool)
    new[:, 1:] = s[:, 1:] != s[:, :-1]
    kind = new.sum(axis=1).astype(np.int8)
    # Move repeated ids to the end (as the row maximum) so the distinct ids lead.
    s = np.sort(np.where(new, s, s[:, -1:]), axis=1)
    return kind, s[:, 0] * p + s[:, 1], s[:, 2] * p + s[:, 3]


def _match(face_ids, face_verts, elem_verts, p) -> np.ndarray:
    """For each element, the id of a face with the same vertex set, or -1."""
    fk, f1, f2 = _set_keys(face_verts, p)
    ek, e1, e2 = _set_keys(elem_verts, p)
    nf = len(face_ids)
    kind, k1, k2 = np.concatenate([fk, ek]), np.concatenate([f1, e1]), np.concatenate([f2, e2])
    src = np.concatenate([np.zeros(nf, np.int8), np.ones(len(ek), np.int8)])
    order = np.lexsort((src, k2, k1, kind))
    kind, k1, k2, src = kind[order], k1[order], k2[order], src[order]
    start = np.ones(len(order), dtype=bool)
    start[1:] = (kind[1:] != kind[:-1]) | (k1[1:] != k1[:-1]) | (k2[1:] != k2[:-1])
    head = np.maximum.accumulate(np.where(start, np.arange(len(order)), 0))
    out = np.full(len(ek), -1, dtype=np.int64)
    is_elem = src == 1
    hit = is_elem & (src[head] == 0)
    out[order[hit] - nf] = face_ids[order[head[hit]]]
    return out


def match_groups(faces, neighbour, boundary: BoundaryElements, names, n_points):
    """Label exposed faces by the group of the file's boundary element on them."""
    n_faces = len(faces)
    face_group = np.full(n_faces, -1, dtype=np.int32)
    if len(boundary.element) == 0:
        return face_group, {}, {}, 0
    p = np.int64(max(n_points, 1))
    exposed = np.flatnonzero(neighbour < 0)
    elem_face = _match(exposed, faces[exposed], boundary.vertices, p)
    if np.any(elem_face < 0):
        inner = np.flatnonzero(neighbour >= 0)
        lost = np.flatnonzero(elem_face < 0)
        elem_face[lost] = _match(inner, faces[inner], boundary.vertices[lost], p)
    f = elem_face[boundary.element]
    g = boundary.group.astype(np.int64)
    n_groups = len(names)
    unmatched = np.bincount(g[f < 0], minlength=n_groups)
    on_internal = (f >= 0) & (neighbour[np.maximum(f, 0)] >= 0)
    internal = np.bincount(g[on_internal], minlength=n_groups)
    ok = (f >= 0) & ~on_internal
    pairs = np.unique(f[ok] * n_groups + g[ok])
    pf, pg = pairs // n_groups, pairs % n_groups
    # Sorted by face then group, so the first pair of each face holds its lowest group.
    first = np.ones(len(pf), dtype=bool)
    first[1:] = pf[1:] != pf[:-1]
    face_group[pf[first]] = pg[first]
    multi = int(len(np.unique(pf[~first])))

    def named(counts: np.ndarray) -> dict[str, int]:
        return {names[i]: int(c) for i, c in enumerate(counts) if c}

    return face_group, named(unmatched), named(internal), multi
