"""Element files read through meshio (gmsh, VTU/VTK, Exodus, MED, ...): the ``meshio`` reader.

meshio is called behind a guard: it prints and may call ``sys.exit`` when a reader fails,
and broken files raise assorted exceptions. Everything it prints is swallowed and every
failure becomes a :class:`~caselint.errors.MeshReadError` naming the file.

What is read:

- volume cells ``tetra``, ``hexahedron``, ``wedge``, ``pyramid``; when there are none, a
  planar ``triangle``/``quad`` mesh in the x-y plane is read as a 2-D mesh (z ignored, unit
  depth). Higher-order cells (``tetra10``, ``hexahedron27``, ...) are read by their corner
  nodes, which meshio lists first; their curved edges are ignored and a note says so.
- boundary elements: ``triangle``/``quad`` cells of a 3-D mesh, ``line`` cells of a 2-D one.
- boundary groups, from the case's ``tag_array`` (cell data on the boundary elements, named
  through ``tags``) when given, otherwise from gmsh physical groups (``gmsh:physical`` cell
  data with names from ``field_data``), meshio ``cell_sets``, MED families (every group of
  the family of each boundary element) and Exodus side sets (read beside meshio, which
  drops them), merged by name. Negative tags, gmsh physical tag 0 and sets holding no
  boundary element name no group.
- a format whose reader needs an optional package (h5py for XDMF, MED, H5M; netCDF4 for
  Exodus) that is not installed is refused with the package to install.
- fields: numeric point data as ``Mesh.point_data``; numeric cell data defined on every
  volume block as ``Mesh.cell_data`` (one row per volume cell), e.g. a velocity field from
  an earlier solution. Values are kept as stored; only coordinates are scaled.
"""

from __future__ import annotations

import contextlib
import io
import re
import threading
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.analysis import Mesh
from caselint.mesh.build import mesh_from_elements
from caselint.mesh.celltypes import SURFACE_TYPES, VOLUME_TYPES, linear_type
from caselint.mesh.groups import BoundaryElements
from caselint.mesh.model import MeshData
from caselint.mesh.pairing import ElementBlock
from caselint.mesh.readers import MeshReader, ReadOptions, checked_points, no_zones

_PAD = {"triangle": [0, 1, 2, 2], "quad": [0, 1, 2, 3], "line": [0, 1]}
# redirect_stdout/stderr swap the process-wide streams: two threads reading at once (a
# Dask worker's threads) would restore each other's sinks and silence the process.
_READ_LOCK = threading.Lock()

#: File suffixes meshio 5.3 reads (``meshio.extension_to_filetypes``; kept here so that
#: listing readers does not import meshio, and checked against meshio by a test).
#: Exodus II suffixes: their side sets are read beside meshio (:mod:`.exodus_sides`).
EXODUS_SUFFIXES = (".e", ".exo", ".ex2")

SUFFIXES: tuple[str, ...] = (
    ".avs", ".bdf", ".cgns", ".dat", ".dato", ".dato.gz", ".e", ".ele", ".ex2", ".exo",
    ".f3grid", ".fem", ".h5m", ".hmf", ".inp", ".mdpa", ".med", ".mesh", ".meshb", ".msh",
    ".nas", ".node", ".obj", ".off", ".ply", ".post", ".post.gz", ".stl", ".su2", ".svg",
    ".tec", ".ugrid", ".vol", ".vol.gz", ".vtk", ".vtu", ".wkt", ".xdmf", ".xmf", ".xml",
)


def read_meshio(path: Path, options: ReadOptions) -> MeshData:
    """Read an element file with meshio (see the module docstring)."""
    import meshio

    name = str(path)
    if not path.is_file():
        raise MeshReadError(name, "mesh file not found" if not path.exists() else "not a file")
    no_zones(path, options)
    from caselint.mesh.limits import check_memory, header_cell_count

    declared = header_cell_count(name)
    if declared is not None:           # refuse before meshio fills the memory
        check_memory(name, {"element": declared}, "the file header", options.memory_limit)
    sink = io.StringIO()
    try:
        with _READ_LOCK, contextlib.redirect_stdout(sink), contextlib.redirect_stderr(sink), \
                warnings.catch_warnings():
            warnings.simplefilter("ignore")
            raw = meshio.read(name)
    except ImportError as exc:        # an optional package this format needs
        package = exc.name or str(exc)
        raise MeshReadError(name, f"reading {path.suffix} files needs the Python package "
                                  f"{package}: pip install {package}") from None
    except (Exception, SystemExit) as exc:  # noqa: BLE001 - the meshio boundary
        said = "" if isinstance(exc, SystemExit) else f"{type(exc).__name__}: {exc}".rstrip(": ")
        detail = "; ".join(filter(None, [said, *_printed(sink.getvalue(), name)]))
        raise MeshReadError(
            name, "meshio could not read the file (damaged, truncated, or not the format its "
            f"extension says): {detail or type(exc).__name__}",
        ) from None
    counts: dict[str, int] = {}
    for block in raw.cells:
        counts[block.type] = counts.get(block.type, 0) + len(block.data)
    check_memory(name, counts, "the cells read", options.memory_limit)       # before the faces are built
    sides = []
    if path.suffix.lower() in EXODUS_SUFFIXES and options.tag_array is None:
        from caselint.mesh.formats.exodus_sides import side_sets

        has_3d = any(linear_type(b.type) in VOLUME_TYPES for b in raw.cells)
        sides = side_sets(path, 3 if has_3d else 2)
    return meshio_data(raw, path=name, scale_to_m=options.scale_to_m,
                       tag_array=options.tag_array, tags=dict(options.tags) or None,
                       side_sets=sides)


def _printed(text: str, name: str) -> list[str]:
    """meshio's printed complaints, without its prefixes and the repeated file name."""
    out = []
    for line in text.splitlines():
        line = line.strip().removeprefix("Error:").strip()
        match = re.match(r"Couldn't read file .* as (?:either of )?(.*)$", line)
        if match:
            line = f"not readable as {match.group(1)}"
        if line and line not in out:
            out.append(line.replace(name, "the file"))
    return out


def mesh_from_meshio(m: Any, *, path: str = "<memory>", scale_to_m: float = 1.0,
                     tag_array: str | None = None, tags: dict[int, str] | None = None) -> Mesh:
    """The :class:`Mesh` of a ``meshio.Mesh`` (for tests and scripts); raises MeshReadError."""
    return Mesh(meshio_data(m, path=path, scale_to_m=scale_to_m, tag_array=tag_array, tags=tags))


def meshio_data(
    m: Any,
    *,
    path: str = "<memory>",
    scale_to_m: float = 1.0,
    tag_array: str | None = None,
    tags: dict[int, str] | None = None,
    side_sets: list[tuple[str, np.ndarray]] = (),
) -> MeshData:
    """The mesh data of a ``meshio.Mesh``; raises :class:`MeshReadError`. ``side_sets``:
    boundary faces named outside meshio (Exodus side sets), as (name, face nodes)."""
    points = checked_points(path, m.points, 1.0)      # scaled below, once the cells are known
    n_points = len(points)
    index_type = np.int32 if n_points < 2**31 else np.int64
    notes: list[str] = []  # what was read differently from the file, in plain words
    blocks = [(i, b.type, linear_type(b.type), b.data) for i, b in enumerate(m.cells)]
    has_3d = any(base in VOLUME_TYPES or (base is None and _dimension(t) == 3)
                 for _, t, base, _ in blocks)
    dim = 3 if has_3d else 2
    # Unreadable cells of the mesh's own dimension would leave holes: refuse them.
    # Unreadable lower-dimensional ones (polygon faces of a 3-D mesh) are only noted.
    odd = sorted({t for _, t, base, _ in blocks if base is None and _dimension(t) >= 2})
    unsupported = [t for t in odd if _dimension(t) == dim]
    if unsupported:
        raise MeshReadError(path, f"cells of type {', '.join(unsupported)} are not supported")
    notes.extend(f"{t} elements ignored" for t in odd if t not in unsupported)
    volume_types = VOLUME_TYPES if has_3d else SURFACE_TYPES
    face_types = SURFACE_TYPES if has_3d else ("line",)
    cell_blocks: list[ElementBlock] = []
    volume_block_ids: list[int] = []      # meshio block of each cell block, for cell data
    start = 0
    for i, mtype, base, data in blocks:
        if base not in volume_types or len(data) == 0:
            continue
        conn = _corners(path, mtype, base, data, n_points, index_type, notes)
        cell_blocks.append(ElementBlock(base, conn, start))
        volume_block_ids.append(i)
        start += len(conn)
    if not cell_blocks:
        found = ", ".join(f"{len(d)} {t}" for _, t, _, d in blocks) or "no cells"
        raise MeshReadError(
            path, f"no volume cells (tetra, hexahedron, wedge, pyramid) or 2-D cells; found {found}"
        )
    if dim == 2:
        _check_planar(path, points, cell_blocks)
        points = points.copy()
        points[:, 2] = 0.0
    points = checked_points(path, points, scale_to_m)
    face_blocks = [(i, base, _corners(path, t, base, d, n_points, np.int64, notes))
                   for i, t, base, d in blocks if base in face_types and len(d)]
    names, boundary = _groups(path, m, face_blocks, dim, tag_array, tags, side_sets)
    point_data, cell_data = _fields(m, volume_block_ids, cell_blocks, n_points)
    return mesh_from_elements(path=path, points=points, dim=dim, blocks=cell_blocks,
                              group_names=names, boundary=boundary, notes=tuple(notes),
                              point_data=point_data, cell_data=cell_data)


def _fields(m, volume_block_ids, cell_blocks, n_points):
    """Numeric point data, and cell data present on every volume block (joined in id order).

    Cell data of boundary elements only (group tags) is left to the group reader.
    """
    point_data = {}
    for name, values in getattr(m, "point_data", {}).items():
        values = np.asarray(values)
        if values.dtype.kind in "biuf" and len(values) == n_points:
            point_data[str(name)] = values
    cell_data = {}
    for name, per_block in getattr(m, "cell_data", {}).items():
        parts = []
        for i, block in zip(volume_block_ids, cell_blocks):
            values = np.asarray(per_block[i]) if i < len(per_block) else None
            if (values is None or values.dtype.kind not in "biuf"
                    or len(values) != len(block.connectivity)
                    or (parts and values.shape[1:] != parts[0].shape[1:])):
                break
            parts.append(values)
        else:
            cell_data[str(name)] = np.concatenate(parts) if len(parts) > 1 else parts[0]
    return point_data, cell_data


def _med_families(m, face_blocks, add) -> None:
    """MED element families (cell data ``cell_tags``, names in ``m.cell_tags``): every
    group of a family on boundary elements (MED numbers element families below 0)."""
    families = getattr(m, "cell_tags", None) or {}
    per_block = m.cell_data.get("cell_tags")
    if not families or per_block is None:
        return
    for i, _, _ in face_blocks:
        if not isinstance(i, int) or i >= len(per_block):
            continue
        values = np.asarray(per_block[i]).astype(np.int64).ravel()
        for family in np.unique(values[values != 0]):
            for group in families.get(int(family), [f"family{int(family)}"]):
                add(str(group), i, np.flatnonzero(values == family))


def _dimension(meshio_type: str) -> int:
    from meshio._mesh import topological_dimension

    if meshio_type.startswith("polyhedron"):
        return 3
    return topological_dimension.get(meshio_type, 0)


def _corners(path, mtype, base, data, n_points, index_type, notes) -> np.ndarray:
    """Linear-corner connectivity of a block, range-checked, as ``index_type``."""
    from caselint.mesh.celltypes import N_NODES

    data = np.asarray(data)
    k = N_NODES[base]
    if data.ndim != 2 or data.shape[1] < k:
        raise MeshReadError(path, f"{mtype} cells have shape {data.shape}, expected (n, {k})")
    if data.shape[1] > k:
        notes.append(f"{len(data)} {mtype} cells read by their {k} corner nodes; "
                     "curved edges ignored")
    conn = data[:, :k]
    lo, hi = conn.min(), conn.max()
    if lo < 0 or hi >= n_points:
        raise MeshReadError(
            path,
            f"{mtype} cells refer to point {lo if lo < 0 else hi}; points are 0..{n_points - 1}",
        )
    return np.ascontiguousarray(conn, dtype=index_type)


def _check_planar(path, points, cell_blocks) -> None:
    used = np.unique(np.concatenate([b.connectivity.ravel() for b in cell_blocks]))
    pts = points[used]
    span = np.ptp(pts, axis=0)
    if span[2] > 1e-9 * max(float(span.max()), 1e-300):
        raise MeshReadError(
            path,
            "holds only surface cells that do not lie in the x-y plane (a surface mesh); "
            "caselint needs volume cells, or a 2-D mesh in the x-y plane",
        )


def _groups(path, m, face_blocks, dim, tag_array, tags, side_sets=()):
    """Group names and boundary elements with their group memberships."""
    width = 4 if dim == 3 else 2
    face_blocks = list(face_blocks) + [(("side", k), "side", faces)
                                       for k, (_, faces) in enumerate(side_sets)]
    if not face_blocks:
        return (), BoundaryElements.empty(width)
    offsets, verts = {}, []
    total = 0
    for i, base, conn in face_blocks:
        offsets[i] = total
        verts.append(conn if base == "side" else conn[:, _PAD[base]])
        total += len(conn)
    vertices = np.concatenate(verts)
    members: dict[str, list[np.ndarray]] = {}

    def add(name: str, block: int, rows: np.ndarray) -> None:
        if len(rows):
            members.setdefault(name, []).append(offsets[block] + np.asarray(rows, np.int64))

    if tag_array is not None:
        if tag_array not in m.cell_data:
            raise MeshReadError(path, f"no cell data array {tag_array!r} (tag_array); arrays "
                                      f"are {sorted(m.cell_data) or 'none'}")
        names = {int(k): str(v) for k, v in (tags or {}).items()}
        for i, _, _ in face_blocks:
            values = np.asarray(m.cell_data[tag_array][i]).astype(np.int64).ravel()
            for tag in np.unique(values[values >= 0]):
                add(names.get(int(tag), f"tag-{int(tag)}"), i, np.flatnonzero(values == tag))
    else:
        physical = m.cell_data.get("gmsh:physical")
        named = {int(v[0]): str(k) for k, v in m.field_data.items()
                 if len(np.atleast_1d(v)) >= 2 and int(np.atleast_1d(v)[1]) == dim - 1}
        for i, _, _ in face_blocks:
            if physical is None or not isinstance(i, int) or i >= len(physical):
                continue
            values = np.asarray(physical[i]).astype(np.int64).ravel()
            for tag in np.unique(values[values > 0]):
                add(named.get(int(tag), f"physical-{int(tag)}"), i, np.flatnonzero(values == tag))
        for set_name, per_block in m.cell_sets.items():
            if set_name.startswith("gmsh:"):
                continue
            for i, _, _ in face_blocks:
                if isinstance(i, int) and i < len(per_block) and per_block[i] is not None:
                    add(str(set_name), i, np.asarray(per_block[i]).ravel())
        _med_families(m, face_blocks, add)
        for k, (set_name, faces) in enumerate(side_sets):
            add(set_name, ("side", k), np.arange(len(faces)))
    group_names = tuple(sorted(members))
    element, group = [], []
    for g, name in enumerate(group_names):
        ids = np.unique(np.concatenate(members[name]))
        element.append(ids)
        group.append(np.full(len(ids), g, dtype=np.int32))
    if not element:
        return (), BoundaryElements(vertices, np.zeros(0, np.int64), np.zeros(0, np.int32))
    return group_names, BoundaryElements(vertices, np.concatenate(element), np.concatenate(group))


READER = MeshReader(
    name="meshio",
    description="element files read by meshio (gmsh, VTU/VTK, Exodus, MED, Abaqus, ...)",
    read=read_meshio, suffixes=SUFFIXES)
