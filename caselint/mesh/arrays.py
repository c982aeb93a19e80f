"""A :class:`~caselint.mesh.model.Mesh` as a flat dict of plain numpy arrays, and back.

For the mesh cache (:mod:`caselint.cache`): the arrays go into an ``.npz`` file that
``numpy.load(..., allow_pickle=False)`` reads back, so a cache file can never run code.
Strings (path, group and field names, notes) are stored as numpy unicode arrays. The
topology and geometry are included when they have been computed, so that a mesh read
back needs neither again; metrics are not (they are cheap next to the topology and are
recomputed, to the bit, from the same arrays).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.model import Mesh

#: Layout version of the arrays; a mismatch makes :func:`mesh_from_arrays` refuse them.
FORMAT = 2
_TOPOLOGY = ("faces", "owner", "neighbour", "nonmanifold", "clashing", "face_group",
             "cell_faces")
_GEOMETRY = ("area_vectors", "face_centroids", "volumes", "cell_centroids", "vertex_means")


def _strings(values) -> np.ndarray:
    """A 1-D unicode array (never an object array, which would need pickle)."""
    values = [str(v) for v in values]
    return np.array(values, dtype=f"<U{max([1, *map(len, values)])}")


def mesh_to_arrays(mesh: "Mesh") -> dict[str, np.ndarray]:
    """Every array that defines ``mesh``, plus its topology and geometry when computed."""
    out: dict[str, np.ndarray] = {
        "format": np.array(FORMAT), "path": _strings([mesh.path]), "dim": np.array(mesh.dim),
        "points": mesh.points, "group_names": _strings(mesh.group_names),
        "notes": _strings(mesh.notes),
        "block_types": _strings(b.type for b in mesh.cell_blocks),
        "block_starts": np.array([b.start for b in mesh.cell_blocks], dtype=np.int64),
        "boundary_vertices": mesh.boundary.vertices, "boundary_element": mesh.boundary.element,
        "boundary_group": mesh.boundary.group,
        "point_data_names": _strings(mesh.point_data), "cell_data_names": _strings(mesh.cell_data),
    }
    for i, block in enumerate(mesh.cell_blocks):
        out[f"block_{i}"] = block.connectivity
    for kind, ids in mesh._file_ids.items():
        if ids is not None:
            out[f"file_{kind}_ids"] = ids
    for kind, data in (("point_data", mesh.point_data), ("cell_data", mesh.cell_data)):
        for i, values in enumerate(data.values()):
            out[f"{kind}_{i}"] = np.asarray(values)
    topo = mesh.__dict__.get("_topology")
    if topo is not None:
        for name in _TOPOLOGY:
            out[f"topology_{name}"] = getattr(topo, name)
        names = mesh.group_names
        out["topology_unmatched"] = np.array([topo.unmatched.get(n, 0) for n in names], np.int64)
        out["topology_internal"] = np.array([topo.internal.get(n, 0) for n in names], np.int64)
        out["topology_multi_group"] = np.array(topo.multi_group, dtype=np.int64)
    geo = mesh.__dict__.get("_geometry")
    if geo is not None:
        for name in _GEOMETRY:
            out[f"geometry_{name}"] = getattr(geo, name)
    return out


def mesh_from_arrays(arrays, *, path: str | None = None) -> "Mesh":
    """The mesh stored by :func:`mesh_to_arrays` (a dict or an open ``.npz``).

    ``path`` replaces the stored path (the same file content may sit elsewhere now).
    :raises ValueError: the arrays are of another layout version, or incomplete.
    """
    from caselint.mesh.geometry import Geometry
    from caselint.mesh.model import BoundaryElements, CellBlock, Mesh
    from caselint.mesh.topology import Topology

    try:
        if int(arrays["format"]) != FORMAT:
            raise ValueError(f"mesh arrays of format {int(arrays['format'])}, expected {FORMAT}")
        keys = set(arrays.keys()) if hasattr(arrays, "keys") else set(arrays)
        types = [str(t) for t in arrays["block_types"]]
        starts = arrays["block_starts"]
        blocks = tuple(CellBlock(t, arrays[f"block_{i}"], int(starts[i]))
                       for i, t in enumerate(types))
        names = tuple(str(n) for n in arrays["group_names"])
        boundary = BoundaryElements(arrays["boundary_vertices"], arrays["boundary_element"],
                                    arrays["boundary_group"])
        fields = {kind: {str(n): arrays[f"{kind}_{i}"]
                         for i, n in enumerate(arrays[f"{kind}_names"])}
                  for kind in ("point_data", "cell_data")}
        mesh = Mesh(path=path if path is not None else str(arrays["path"][0]),
                    points=arrays["points"], dim=int(arrays["dim"]), cell_blocks=blocks,
                    group_names=names, boundary=boundary,
                    notes=tuple(str(n) for n in arrays["notes"]),
                    point_data=fields["point_data"], cell_data=fields["cell_data"],
                    file_cell_ids=arrays["file_cell_ids"] if "file_cell_ids" in keys else None,
                    file_point_ids=(arrays["file_point_ids"] if "file_point_ids" in keys
                                    else None))
        if "topology_faces" in keys:
            def counts(name: str) -> dict[str, int]:
                return {n: int(c) for n, c in zip(names, arrays[name]) if c}

            mesh.__dict__["_topology"] = Topology(
                *(arrays[f"topology_{n}"] for n in _TOPOLOGY[:6]),
                unmatched=counts("topology_unmatched"), internal=counts("topology_internal"),
                multi_group=int(arrays["topology_multi_group"]),
                cell_faces=arrays["topology_cell_faces"])
        if "geometry_volumes" in keys:
            mesh.__dict__["_geometry"] = Geometry(*(arrays[f"geometry_{n}"] for n in _GEOMETRY))
    except KeyError as exc:
        raise ValueError(f"mesh arrays incomplete: no {exc.args[0]!r}") from None
    return mesh
