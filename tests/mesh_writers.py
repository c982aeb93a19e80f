"""Writers of the face-based mesh formats caselint reads, for tests and benchmarks.

Each writes a :class:`~caselint.mesh.model.MeshData` (points, polygonal faces with owner
and neighbour, groups, zones) in one format, from the format's published structure,
vectorised so that a 1M-cell mesh writes in seconds:

- :func:`write_face_folder`: the face-based mesh folder (``points``, ``faces``, ``owner``,
  ``neighbour``, ``boundary``, ``cellZones``), ASCII or binary, plain or gzip, 32- or
  64-bit labels, faces as a list of faces or as offsets + points;
- :func:`write_decomposed`: the same mesh split into ``processor<N>`` folders with
  processor patches and (optionally) the addressing files.

The VTK formats are written by ``tests/vtk_writers.py``.
"""

from __future__ import annotations

import gzip
from pathlib import Path

import numpy as np

from caselint.mesh.model import MeshData

BANNER = ("/*--------------------------------*- text -*----------------------------------*\\\n"
          "  a test file written by tests/mesh_writers.py\n"
          "\\*---------------------------------------------------------------------------*/\n")


def _header(cls: str, obj: str, *, binary: bool, labels: int, scalars: int,
            arch: bool = True, note: str | None = None) -> str:
    lines = [BANNER, "FoamFile\n{\n", "    version     2.0;\n",
             f"    format      {'binary' if binary else 'ascii'};\n"]
    if arch:
        lines.append(f'    arch        "LSB;label={labels};scalar={scalars}";\n')
    lines += [f"    class       {cls};\n", '    location    "constant/polyMesh";\n']
    if note is not None:
        lines.append(f'    note        "{note}";\n')
    lines += [f"    object      {obj};\n", "}\n",
              "// * * * * * * * * * * * * * * * * * * * * * * * * * * * * * * * * * //\n\n"]
    return "".join(lines)


def _labels(values, *, binary: bool, labels: int) -> bytes:
    values = np.asarray(values, dtype=np.int64)
    if binary:
        return (f"{len(values)}\n(".encode()
                + values.astype(f"<i{labels // 8}").tobytes() + b")\n")
    return (f"{len(values)}\n(\n" + "\n".join(map(str, values.tolist()))
            + ("\n" if len(values) else "") + ")\n").encode()


def _points(points, *, binary: bool, scalars: int) -> bytes:
    points = np.asarray(points, dtype=np.float64)
    if binary:
        return (f"{len(points)}\n(".encode()
                + points.astype(f"<f{scalars // 8}").tobytes() + b")\n")
    body = ("(%r %r %r)\n" * len(points)) % tuple(points.ravel().tolist())
    return f"{len(points)}\n(\n{body})\n".encode()


def _face_list(offsets, ids) -> bytes:
    """An ASCII list of faces ``4(a b c d)``, formatted run by run of equal sizes."""
    sizes = np.diff(offsets)
    parts = [f"{len(sizes)}\n(\n"]
    cuts = np.flatnonzero(np.diff(sizes)) + 1
    for lo, hi in zip(np.concatenate([[0], cuts]), np.concatenate([cuts, [len(sizes)]])):
        k = int(sizes[lo])
        template = f"{k}(" + " ".join(["%d"] * k) + ")\n"
        parts.append((template * int(hi - lo)) % tuple(ids[offsets[lo]:offsets[hi]].tolist()))
    parts.append(")\n")
    return "".join(parts).encode()


def _write(folder: Path, name: str, data: bytes, gz: bool) -> None:
    if gz:
        (folder / f"{name}.gz").write_bytes(gzip.compress(data, compresslevel=1))
    else:
        (folder / name).write_bytes(data)


def _patches(data: MeshData, patch_types: dict[str, str] | None):
    """Boundary faces ordered patch by patch: (order of all faces, patch list)."""
    n_int = data.n_internal
    group = data.face_group[n_int:]
    if bool(np.any(group < 0)):
        raise ValueError("every boundary face needs a group to be written as a patch")
    order = np.concatenate([np.arange(n_int), n_int + np.argsort(group, kind="stable")])
    counts = np.bincount(group, minlength=len(data.group_names))
    starts = n_int + np.concatenate([[0], np.cumsum(counts)[:-1]])
    types = dict(data.group_types)
    types.update(patch_types or {})
    return order, [(name, types.get(name, "patch"), int(s), int(c))
                   for name, s, c in zip(data.group_names, starts, counts)]


def boundary_text(patches, extra: list[tuple[str, dict]] = ()) -> str:
    """The ``boundary`` file's list: (name, type, start, size) and processor patches."""
    lines = [f"{len(patches) + len(extra)}\n(\n"]
    for name, kind, start, size in patches:
        groups = "        inGroups        List<word> 1(wall);\n" if kind == "wall" else ""
        lines.append(f"    {name}\n    {{\n        type            {kind};\n{groups}"
                     f"        nFaces          {size};\n        startFace       {start};\n    }}\n")
    for name, entries in extra:
        body = "".join(f"        {k:<15} {v};\n" for k, v in entries.items())
        lines.append(f"    {name}\n    {{\n{body}    }}\n")
    lines.append(")\n")
    return "".join(lines)


def write_face_folder(folder, data: MeshData, *, binary: bool = False, labels: int = 32,
                      scalars: int = 64, gz: bool = False, compact: bool | None = None,
                      patch_types: dict[str, str] | None = None,
                      zones: dict[str, np.ndarray] | None = None, arch: bool = True,
                      note: bool = True) -> Path:
    """Write ``data`` as a mesh folder ``folder`` (created); see the module docstring.

    ``compact`` writes faces as offsets + points (default: when binary); ``zones`` are
    cell lists (default: the data's cell zones); ``patch_types`` override group types.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    compact = binary if compact is None else compact
    order, patches = _patches(data, patch_types)
    sizes = np.diff(data.face_offsets)[order]
    offsets = np.concatenate([[0], np.cumsum(sizes)])
    gather = np.repeat(data.face_offsets[:-1][order], sizes) + (
        np.arange(int(offsets[-1])) - np.repeat(offsets[:-1], sizes))
    ids = data.face_points[gather].astype(np.int64)
    owner, neighbour = data.owner[order], data.neighbour[order][:data.n_internal]
    opts = dict(binary=binary, labels=labels, scalars=scalars, arch=arch)
    counts = (f"nPoints:{data.n_points}  nCells:{data.n_cells}  nFaces:{data.n_faces}  "
              f"nInternalFaces:{data.n_internal}") if note else None
    _write(folder, "points", _header("vectorField", "points", **opts).encode()
           + _points(data.points, binary=binary, scalars=scalars), gz)
    if compact:
        faces = _labels(offsets, binary=binary, labels=labels) + _labels(
            ids, binary=binary, labels=labels)
    else:
        faces = _face_list(offsets, ids)
    _write(folder, "faces", _header("faceCompactList" if compact else "faceList", "faces",
                                    **opts).encode() + faces, gz)
    _write(folder, "owner", _header("labelList", "owner", note=counts, **opts).encode()
           + _labels(owner, binary=binary, labels=labels), gz)
    _write(folder, "neighbour", _header("labelList", "neighbour", note=counts, **opts).encode()
           + _labels(neighbour, binary=binary, labels=labels), gz)
    _write(folder, "boundary", (_header("polyBoundaryMesh", "boundary", **opts)
                                + boundary_text(patches)).encode(), gz)
    if zones is None and data.cell_zone is not None:
        zones = {name: np.flatnonzero(data.cell_zone == i)
                 for i, name in enumerate(data.zone_names)}
    if zones:
        _write(folder, "cellZones", zone_file(zones, **opts), gz)
    return folder


def zone_file(zones: dict[str, np.ndarray], *, binary: bool, labels: int, scalars: int,
              arch: bool = True) -> bytes:
    """A ``cellZones`` file with these cell lists."""
    out = [_header("regIOobject", "cellZones", binary=binary, labels=labels, scalars=scalars,
                   arch=arch).encode(), f"{len(zones)}\n(\n".encode()]
    for name, cells in zones.items():
        out.append(f"{name}\n{{\n    type cellZone;\ncellLabels      List<label> ".encode())
        out.append(_labels(cells, binary=binary, labels=labels))
        out.append(b";\n}\n")
    out.append(b")\n")
    return b"".join(out)


def reverse_faces(offsets: np.ndarray, ids: np.ndarray, faces: np.ndarray) -> np.ndarray:
    """``ids`` with the listed faces turned round, keeping their first point."""
    out = ids.copy()
    sizes = np.diff(offsets)[faces]
    for k in np.unique(sizes):
        rows = faces[sizes == k]
        idx = offsets[rows][:, None] + np.arange(k)[None, :]
        turned = np.concatenate([idx[:, :1], idx[:, :0:-1]], axis=1)
        out[idx] = ids[turned]
    return out


def write_decomposed(case, data: MeshData, part: np.ndarray, *, addressing: bool = True,
                     **options) -> Path:
    """Write ``data`` split by ``part`` (the processor of each cell) into
    ``case/processor<N>/constant/polyMesh`` folders, as a decomposition writes them: per
    part, local cells, faces and points in increasing original id; internal faces, then
    the patches, then one processor patch per neighbouring part; a face whose owner lies
    in the other part turned round (first point kept). ``options`` go to the folder
    writer (binary, gz, labels, ...)."""
    case = Path(case)
    part = np.asarray(part)
    order, patches = _patches(data, options.pop("patch_types", None))
    data = _reordered(data, order)           # face ids of the undecomposed folder
    order = np.arange(data.n_faces)
    sizes_all = np.diff(data.face_offsets)
    patch_of = np.full(data.n_faces, -1)
    for index, (_, _, start, size) in enumerate(patches):
        patch_of[order[start:start + size]] = index
    owner_part = part[data.owner]
    neighbour_part = np.where(data.neighbour >= 0, part[np.maximum(data.neighbour, 0)], -1)
    for me in range(int(part.max()) + 1):
        cells = np.flatnonzero(part == me)
        local_cell = np.full(data.n_cells, -1)
        local_cell[cells] = np.arange(len(cells))
        mine = (owner_part == me) | (neighbour_part == me)
        inner = np.flatnonzero(mine & (owner_part == neighbour_part))
        bounded = [order[s:s + c][owner_part[order[s:s + c]] == me] for _, _, s, c in patches]
        shared = mine & (neighbour_part >= 0) & (owner_part != neighbour_part)
        others = sorted(set(np.where(owner_part == me, neighbour_part, owner_part)[shared]))
        towards = [np.flatnonzero(shared & ((owner_part == o) | (neighbour_part == o)))
                   for o in others]
        faces = np.concatenate([inner, *bounded, *towards]).astype(np.int64)
        turned = owner_part[faces] != me
        sizes = sizes_all[faces]
        offsets = np.concatenate([[0], np.cumsum(sizes)])
        ids = data.face_points[np.repeat(data.face_offsets[faces], sizes)
                               + np.arange(int(offsets[-1])) - np.repeat(offsets[:-1], sizes)]
        ids = reverse_faces(offsets, ids, np.flatnonzero(turned))
        points, local_ids = np.unique(ids, return_inverse=True)
        own = np.where(turned, data.neighbour[faces], data.owner[faces])
        nbr = np.where(turned, -1, data.neighbour[faces])
        nbr[len(inner):] = -1
        start = len(inner)
        local_patches = []
        for (name, kind, _, _), block in zip(patches, bounded):
            local_patches.append((name, kind, start, len(block)))
            start += len(block)
        extra = []
        for o, block in zip(others, towards):
            extra.append((f"procBoundary{me}to{o}", {
                "type": "processor", "inGroups": "List<word> 1(processor)",
                "nFaces": len(block), "startFace": start, "matchTolerance": "0.0001",
                "transform": "unknown", "myProcNo": me, "neighbProcNo": o}))
            start += len(block)
        local = MeshData(
            path="part", dim=3, points=data.points[points], face_offsets=offsets,
            face_points=local_ids.astype(np.int64), owner=local_cell[own],
            neighbour=np.where(nbr >= 0, local_cell[np.maximum(nbr, 0)], -1), n_cells=len(cells),
            face_group=np.full(len(faces), -1, dtype=np.int32))
        folder = case / f"processor{me}" / "constant" / "polyMesh"
        _write_part(folder, local, local_patches, extra, options)
        if data.cell_zone is not None:
            zones = {name: local_cell[cells[data.cell_zone[cells] == i]]
                     for i, name in enumerate(data.zone_names)}
            _write(folder, "cellZones", zone_file(zones, **_label_opts(options)),
                   options.get("gz", False))
        if addressing:
            signed = np.where(turned, -(faces + 1), faces + 1)
            for name, values in (("pointProcAddressing", points), ("faceProcAddressing", signed),
                                 ("cellProcAddressing", cells)):
                opts = _label_opts(options)
                _write(folder, name, _header("labelList", name, **opts).encode()
                       + _labels(values, binary=opts["binary"], labels=opts["labels"]),
                       options.get("gz", False))
    return case


def _reordered(data: MeshData, order: np.ndarray) -> MeshData:
    """``data`` with its faces in ``order``."""
    sizes = np.diff(data.face_offsets)[order]
    offsets = np.concatenate([[0], np.cumsum(sizes)])
    gather = np.repeat(data.face_offsets[:-1][order], sizes) + (
        np.arange(int(offsets[-1])) - np.repeat(offsets[:-1], sizes))
    return MeshData(path=data.path, dim=3, points=data.points, face_offsets=offsets,
                    face_points=data.face_points[gather], owner=data.owner[order],
                    neighbour=data.neighbour[order], n_cells=data.n_cells,
                    face_group=data.face_group[order], group_names=data.group_names,
                    group_types=data.group_types, cell_zone=data.cell_zone,
                    zone_names=data.zone_names)


def _label_opts(options) -> dict:
    return {"binary": options.get("binary", False), "labels": options.get("labels", 32),
            "scalars": options.get("scalars", 64)}


def _write_part(folder: Path, local: MeshData, patches, extra, options) -> None:
    """One part's mesh folder: faces already in order, patches given."""
    folder.mkdir(parents=True, exist_ok=True)
    opts = _label_opts(options)
    binary, labels, gz = opts["binary"], opts["labels"], options.get("gz", False)
    n_int = int(np.count_nonzero(local.neighbour >= 0))
    _write(folder, "points", _header("vectorField", "points", **opts).encode()
           + _points(local.points, binary=binary, scalars=opts["scalars"]), gz)
    compact = options.get("compact", binary)
    faces = (_labels(local.face_offsets, binary=binary, labels=labels)
             + _labels(local.face_points, binary=binary, labels=labels)) if compact else \
        _face_list(local.face_offsets, local.face_points)
    _write(folder, "faces", _header("faceCompactList" if compact else "faceList", "faces",
                                    **opts).encode() + faces, gz)
    _write(folder, "owner", _header("labelList", "owner", **opts).encode()
           + _labels(local.owner, binary=binary, labels=labels), gz)
    _write(folder, "neighbour", _header("labelList", "neighbour", **opts).encode()
           + _labels(local.neighbour[:n_int], binary=binary, labels=labels), gz)
    _write(folder, "boundary", (_header("polyBoundaryMesh", "boundary", **opts)
                                + boundary_text(patches, extra)).encode(), gz)
