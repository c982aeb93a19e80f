"""A :class:`~caselint.mesh.analysis.Mesh` as a flat dict of plain numpy arrays, and back.

For the mesh cache (:mod:`caselint.cache`): the arrays go into an ``.npz`` file that
``numpy.load(..., allow_pickle=False)`` reads back, so a cache file can never run code.
Strings (path, group, zone and field names, notes) are stored as numpy unicode arrays. The
geometry is included when it has been computed, so that a mesh read back needs neither the
file nor the geometry pass again; metrics are not (they are cheap next to reading and are
recomputed, to the bit, from the same arrays).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: Layout version of the arrays; a mismatch makes :func:`mesh_from_arrays` refuse them.
FORMAT = 3
_DATA = ("points", "face_offsets", "face_points", "owner", "neighbour", "face_group")
_GEOMETRY = ("area_vectors", "face_centroids", "volumes", "cell_centroids", "apex")


def _strings(values) -> np.ndarray:
    """A 1-D unicode array (never an object array, which would need pickle)."""
    values = [str(v) for v in values]
    return np.array(values, dtype=f"<U{max([1, *map(len, values)])}")


def mesh_to_arrays(mesh: "Mesh") -> dict[str, np.ndarray]:
    """Every array that defines ``mesh``, plus its geometry when computed."""
    data = mesh.data
    report = data.report
    names = data.group_names
    out: dict[str, np.ndarray] = {
        "format": np.array(FORMAT), "path": _strings([data.path]), "dim": np.array(data.dim),
        "n_cells": np.array(data.n_cells, dtype=np.int64),
        "group_names": _strings(names),
        "group_types": _strings(f"{k}\t{v}" for k, v in sorted(data.group_types.items())),
        "zone_names": _strings(data.zone_names), "notes": _strings(data.notes),
        "shape_types": _strings(b.type for b in data.shapes),
        "point_data_names": _strings(data.point_data),
        "cell_data_names": _strings(data.cell_data),
        "report_clashing": report.clashing,
        "report_unmatched": np.array([report.unmatched.get(n, 0) for n in names], np.int64),
        "report_internal": np.array([report.internal.get(n, 0) for n in names], np.int64),
        "report_multi_group": np.array(report.multi_group, dtype=np.int64),
    }
    for name in _DATA:
        out[name] = getattr(data, name)
    if report.nonmanifold is not None:
        out["report_nonmanifold"] = report.nonmanifold
    if data.cell_zone is not None:
        out["cell_zone"] = data.cell_zone
    for i, block in enumerate(data.shapes):
        out[f"shape_{i}_cells"] = block.cells
        out[f"shape_{i}_connectivity"] = block.connectivity
    for kind in ("cell", "point"):
        ids = getattr(data, f"file_{kind}_ids")
        if ids is not None:
            out[f"file_{kind}_ids"] = ids
    for kind, fields in (("point_data", data.point_data), ("cell_data", data.cell_data)):
        for i, values in enumerate(fields.values()):
            out[f"{kind}_{i}"] = np.asarray(values)
    if mesh.has("geometry"):
        for name in _GEOMETRY:
            out[f"geometry_{name}"] = getattr(mesh.geometry, name)
    return out


def mesh_from_arrays(arrays, *, path: str | None = None) -> "Mesh":
    """The mesh stored by :func:`mesh_to_arrays` (a dict or an open ``.npz``).

    ``path`` replaces the stored path (the same file content may sit elsewhere now).
    :raises ValueError: the arrays are of another layout version, or incomplete.
    """
    from caselint.mesh.analysis import Mesh
    from caselint.mesh.geometry import Geometry
    from caselint.mesh.model import MeshData, ReadReport, ShapeBlock

    try:
        if int(arrays["format"]) != FORMAT:
            raise ValueError(f"mesh arrays of format {int(arrays['format'])}, expected {FORMAT}")
        keys = set(arrays.keys()) if hasattr(arrays, "keys") else set(arrays)
        names = tuple(str(n) for n in arrays["group_names"])

        def counts(name: str) -> dict[str, int]:
            return {n: int(c) for n, c in zip(names, arrays[name]) if c}

        report = ReadReport(
            nonmanifold=arrays["report_nonmanifold"] if "report_nonmanifold" in keys else None,
            clashing=arrays["report_clashing"], unmatched=counts("report_unmatched"),
            internal=counts("report_internal"),
            multi_group=int(arrays["report_multi_group"]))
        shapes = tuple(ShapeBlock(str(t), arrays[f"shape_{i}_cells"],
                                  arrays[f"shape_{i}_connectivity"])
                       for i, t in enumerate(arrays["shape_types"]))
        fields = {kind: {str(n): arrays[f"{kind}_{i}"]
                         for i, n in enumerate(arrays[f"{kind}_names"])}
                  for kind in ("point_data", "cell_data")}
        types = dict(str(t).split("\t", 1) for t in arrays["group_types"] if str(t))
        data = MeshData(
            path=path if path is not None else str(arrays["path"][0]), dim=int(arrays["dim"]),
            n_cells=int(arrays["n_cells"]), group_names=names, group_types=types,
            zone_names=tuple(str(z) for z in arrays["zone_names"] if str(z)),
            cell_zone=arrays["cell_zone"] if "cell_zone" in keys else None,
            notes=tuple(str(n) for n in arrays["notes"] if str(n)), shapes=shapes,
            point_data=fields["point_data"], cell_data=fields["cell_data"],
            file_cell_ids=arrays["file_cell_ids"] if "file_cell_ids" in keys else None,
            file_point_ids=arrays["file_point_ids"] if "file_point_ids" in keys else None,
            report=report, **{name: arrays[name] for name in _DATA})
        geometry = None
        if "geometry_volumes" in keys:
            geometry = Geometry(*(arrays[f"geometry_{n}"] for n in _GEOMETRY))
    except KeyError as exc:
        raise ValueError(f"mesh arrays incomplete: no {exc.args[0]!r}") from None
    return Mesh(data, geometry=geometry)
