"""Side sets of Exodus II files: the named boundaries meshio 5.3 does not read.

An Exodus II file is netCDF. Its element blocks are the variables ``connect1``,
``connect2``, ... (elements numbered from 1 across the blocks in that order); side set
``k`` lists element ids in ``elem_ss{k}`` and, per element, a side number in
``side_ss{k}``; ``ss_names`` names the sets. A side is a face of its element, numbered
by the Exodus II convention for each element type (:data:`SIDES`, [memory] of the
Exodus II manual; only the node *set* of a side matters here, the boundary face is found
by its nodes). Each side set becomes a boundary group of the same name.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError

#: Nodes (from 0) of each side (from 1) of the linear Exodus element types.
SIDES: dict[str, tuple[tuple[int, ...], ...]] = {
    "HEX": ((0, 1, 5, 4), (1, 2, 6, 5), (2, 3, 7, 6), (0, 4, 7, 3), (0, 3, 2, 1), (4, 5, 6, 7)),
    "TETRA": ((0, 1, 3), (1, 2, 3), (0, 3, 2), (0, 2, 1)),
    "WEDGE": ((0, 1, 4, 3), (1, 2, 5, 4), (0, 3, 5, 2), (0, 2, 1), (3, 4, 5)),
    "PYRAMID": ((0, 1, 4), (1, 2, 4), (2, 3, 4), (3, 0, 4), (0, 3, 2, 1)),
    "QUAD": ((0, 1), (1, 2), (2, 3), (3, 0)),
    "TRI": ((0, 1), (1, 2), (2, 0)),
}
_KIND = re.compile(r"^(HEX|TETRA|TET|WEDGE|PYRAMID|PYRA|QUAD|SHELL|TRI)", re.IGNORECASE)


def _text(rows) -> list[str]:
    return [b"".join(r).decode("latin-1").strip("\x00 ") for r in np.asarray(rows, dtype="S1")]


def side_sets(path: Path, dim: int) -> list[tuple[str, np.ndarray]]:
    """(name, (n, 4) face nodes from 0, triangles repeating their last node; (n, 2) edges
    in 2-D) of every side set of an Exodus II file."""
    try:
        import netCDF4
    except ImportError:
        raise MeshReadError(str(path), "reading Exodus files needs the Python package "
                                       "netCDF4: pip install netCDF4") from None
    out = []
    with netCDF4.Dataset(str(path)) as nc:
        nc.set_auto_mask(False)
        blocks = sorted((int(k[7:]), v) for k, v in nc.variables.items()
                        if re.fullmatch(r"connect\d+", k))
        kinds, conns = [], []
        for _, var in blocks:
            match = _KIND.match(str(getattr(var, "elem_type", "")))
            kind = match.group(1).upper() if match else ""
            kind = {"TET": "TETRA", "PYRA": "PYRAMID", "SHELL": "QUAD"}.get(kind, kind)
            kinds.append(kind)
            conns.append(np.asarray(var[:], dtype=np.int64) - 1)
        starts = np.cumsum([0] + [len(c) for c in conns])
        names = _text(nc.variables["ss_names"][:]) if "ss_names" in nc.variables else []
        k = 1
        while f"elem_ss{k}" in nc.variables:
            elems = np.asarray(nc.variables[f"elem_ss{k}"][:], dtype=np.int64) - 1
            sides = np.asarray(nc.variables[f"side_ss{k}"][:], dtype=np.int64) - 1
            name = names[k - 1] if k - 1 < len(names) and names[k - 1] else f"sideset-{k}"
            out.append((name, _faces(str(path), elems, sides, starts, kinds, conns, dim, name)))
            k += 1
    return out


def _faces(path, elems, sides, starts, kinds, conns, dim, name) -> np.ndarray:
    width = 4 if dim == 3 else 2
    rows = np.zeros((len(elems), width), dtype=np.int64)
    block = np.searchsorted(starts, elems, side="right") - 1
    if len(elems) and (elems.min() < 0 or elems.max() >= starts[-1]):
        raise MeshReadError(path, f"side set {name!r} names element {int(elems.max()) + 1}; "
                                  f"the file has {int(starts[-1])}")
    for b in np.unique(block):
        kind = kinds[b]
        if kind not in SIDES:
            raise MeshReadError(path, f"side set {name!r} lies on elements of type "
                                      f"{kind or 'unknown'}, whose sides caselint does not know")
        pick = np.flatnonzero(block == b)
        for s, nodes in enumerate(SIDES[kind]):
            on = pick[sides[pick] == s]
            if not len(on):
                continue
            corner = conns[b][elems[on] - starts[b]][:, list(nodes)]
            rows[on] = corner[:, [0, 1, 2, 2]] if width == 4 and len(nodes) == 3 else corner
        bad = (sides[pick] < 0) | (sides[pick] >= len(SIDES[kind]))
        if bad.any():
            raise MeshReadError(path, f"side set {name!r}: side {int(sides[pick][bad][0]) + 1} "
                                      f"of a {kind} element (it has {len(SIDES[kind])})")
    return rows
