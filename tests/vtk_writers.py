"""Writers of polyhedral VTK files for tests and benchmarks.

- :func:`write_vtu_22`: a VTU file with polyhedra in the ``faces``/``faceoffsets`` layout
  (file version 2.2, what VTK wrote before 9.4), ASCII or base64 (zlib or none), from a
  list of cells; :func:`write_vtu_22_polyhedra` the same for every cell of a large
  :class:`~caselint.mesh.model.MeshData`, vectorised;
- :func:`vtk_polyhedral_grid`: a ``vtkUnstructuredGrid`` of such a mesh for VTK 9 (the
  test dependency) to write as VTU 2.3 or legacy VTK.
"""

from __future__ import annotations

import base64
import struct
import zlib
from pathlib import Path

import numpy as np

from caselint.mesh.model import MeshData


# -- VTU 2.2 ----------------------------------------------------------------------------


def _vtu_array(values: np.ndarray, name: str, vtk_type: str, fmt: str, components: int = 1,
               compress: bool = True) -> str:
    """A ``<DataArray>`` in ``ascii`` or ``binary`` (base64, UInt64 header, zlib or none)."""
    head = (f'<DataArray type="{vtk_type}" Name="{name}" NumberOfComponents="{components}" '
            f'format="{fmt}">')
    if fmt == "ascii":
        text = " ".join(repr(v) for v in values.ravel().tolist())
        return f"{head}\n{text}\n</DataArray>\n"
    raw = values.tobytes()
    if compress:
        block = zlib.compress(raw)
        header = struct.pack("<4Q", 1, len(raw), len(raw), len(block))
        payload = base64.b64encode(header) + base64.b64encode(block)
    else:
        payload = base64.b64encode(struct.pack("<Q", len(raw)) + raw)
    return f"{head}\n{payload.decode()}\n</DataArray>\n"


def write_vtu_22(path, points: np.ndarray, cells: list[tuple[int, list]], *,
                 fmt: str = "binary", compress: bool = True,
                 cell_data: dict[str, np.ndarray] | None = None,
                 field_data: dict[str, np.ndarray] | None = None) -> Path:
    """A VTU file in the 2.2 polyhedron layout.

    ``cells``: (VTK type, nodes) pairs; for a polyhedron (type 42) ``nodes`` is its list of
    faces (each a list of point ids, normals outward). ``faceoffsets`` holds the end of
    each polyhedron's face stream in ``faces`` and -1 for other cells.
    """
    conn, offsets, types, faces, faceoffsets = [], [], [], [], []
    for vtk_type, nodes in cells:
        if vtk_type == 42:
            unique = list(dict.fromkeys(p for face in nodes for p in face))
            conn.extend(unique)
            faces.append(len(nodes))
            for face in nodes:
                faces.extend([len(face), *face])
            faceoffsets.append(len(faces))
        else:
            conn.extend(nodes)
            faceoffsets.append(-1)
        offsets.append(len(conn))
        types.append(vtk_type)
    arrays = [("connectivity", np.array(conn, np.int64), "Int64"),
              ("offsets", np.array(offsets, np.int64), "Int64"),
              ("types", np.array(types, np.uint8), "UInt8")]
    if faces:
        arrays += [("faces", np.array(faces, np.int64), "Int64"),
                   ("faceoffsets", np.array(faceoffsets, np.int64), "Int64")]
    cell_arrays = "".join(_vtu_array(np.asarray(v), k, "Int32" if np.asarray(v).dtype.kind in "iu"
                                     else "Float64", fmt, compress=compress)
                          for k, v in (cell_data or {}).items())
    fields = "".join(_vtu_array(np.asarray(v), k, "Int32", fmt, compress=compress)
                     for k, v in (field_data or {}).items())
    text = (
        '<?xml version="1.0"?>\n<VTKFile type="UnstructuredGrid" version="2.2" '
        'byte_order="LittleEndian" header_type="UInt64"'
        + (' compressor="vtkZLibDataCompressor"' if compress and fmt == "binary" else "")
        + f'>\n<UnstructuredGrid>\n<FieldData>\n{fields}</FieldData>\n'
        f'<Piece NumberOfPoints="{len(points)}" '
        f'NumberOfCells="{len(cells)}">\n<CellData>\n{cell_arrays}</CellData>\n<Points>\n'
        + _vtu_array(np.asarray(points, np.float64), "Points", "Float64", fmt, 3, compress)
        + "</Points>\n<Cells>\n"
        + "".join(_vtu_array(v, n, t, fmt, compress=compress) for n, v, t in arrays)
        + "</Cells>\n</Piece>\n</UnstructuredGrid>\n</VTKFile>\n")
    Path(path).write_text(text)
    return Path(path)


# -- every cell as a polyhedron (vectorised, for large meshes) ---------------------------


def cell_face_lists(data: MeshData) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Each cell's faces turned out of it: (cell offsets into the face list, face offsets,
    face points), cells in order."""
    from caselint.mesh import topology

    cf = topology.cell_faces(data)
    faces = cf.faces.astype(np.int64)
    sizes = np.diff(data.face_offsets)[faces]
    offsets = np.concatenate([[0], np.cumsum(sizes)])
    ramp = np.arange(int(offsets[-1])) - np.repeat(offsets[:-1], sizes)
    size_of = np.repeat(sizes, sizes)
    # owned faces as stored; the others reversed from their first point
    step = np.where(np.repeat(cf.owned, sizes), ramp, np.where(ramp == 0, 0, size_of - ramp))
    points = data.face_points[np.repeat(data.face_offsets[faces], sizes) + step]
    return cf.offsets.astype(np.int64), offsets, points.astype(np.int64)


def vtk_polyhedral_grid(data: MeshData, tags: np.ndarray | None = None):
    """A ``vtkUnstructuredGrid`` with every cell a polyhedron (no boundary polygons)."""
    import vtk
    from vtk.util.numpy_support import numpy_to_vtk, numpy_to_vtkIdTypeArray

    cell_offsets, face_offsets, face_points = cell_face_lists(data)

    def cell_array(offsets, values):
        array = vtk.vtkCellArray()
        array.SetData(numpy_to_vtkIdTypeArray(np.ascontiguousarray(offsets), deep=True),
                      numpy_to_vtkIdTypeArray(np.ascontiguousarray(values), deep=True))
        return array

    # a cell's point list: its faces' points, each once
    owner = np.repeat(np.arange(data.n_cells), np.diff(cell_offsets))
    per_point = np.repeat(owner, np.diff(face_offsets))
    pairs = np.unique(per_point * np.int64(data.n_points) + face_points)
    cells, nodes = pairs // data.n_points, pairs % data.n_points
    node_offsets = np.concatenate([[0], np.cumsum(np.bincount(cells, minlength=data.n_cells))])
    grid = vtk.vtkUnstructuredGrid()
    pts = vtk.vtkPoints()
    pts.SetData(numpy_to_vtk(np.ascontiguousarray(data.points), deep=True))
    grid.SetPoints(pts)
    types = numpy_to_vtk(np.full(data.n_cells, 42, dtype=np.uint8), deep=True,
                         array_type=vtk.VTK_UNSIGNED_CHAR)
    grid.SetPolyhedralCells(types, cell_array(node_offsets, nodes),
                            cell_array(cell_offsets, np.arange(len(face_offsets) - 1)),
                            cell_array(face_offsets, face_points))
    return grid


def write_vtu_22_polyhedra(path, data: MeshData) -> Path:
    """A VTU file (2.2 layout, base64 zlib) with every cell of ``data`` a polyhedron."""
    cell_offsets, face_offsets, face_points = cell_face_lists(data)
    n_faces = np.diff(cell_offsets)
    sizes = np.diff(face_offsets)
    # stream per cell: n_faces, then per face: size, points
    face_len = sizes + 1
    cell_len = 1 + np.add.reduceat(face_len, cell_offsets[:-1]) if data.n_cells else []
    ends = np.cumsum(cell_len)
    stream = np.empty(int(ends[-1]), dtype=np.int64)
    starts = ends - cell_len
    stream[starts] = n_faces
    face_cell = np.repeat(np.arange(data.n_cells), n_faces)
    before = np.concatenate([[0], np.cumsum(face_len)])[:-1] - np.repeat(
        np.concatenate([[0], np.cumsum(face_len)])[cell_offsets[:-1]], n_faces)
    face_start = starts[face_cell] + 1 + before
    stream[face_start] = sizes
    stream[np.repeat(face_start + 1, sizes) + np.arange(len(face_points))
           - np.repeat(face_offsets[:-1], sizes)] = face_points
    owner = np.repeat(np.arange(data.n_cells), n_faces)
    pairs = np.unique(np.repeat(owner, sizes) * np.int64(data.n_points) + face_points)
    cells, nodes = pairs // data.n_points, pairs % data.n_points
    node_ends = np.cumsum(np.bincount(cells, minlength=data.n_cells))
    arrays = [("connectivity", nodes, "Int64"), ("offsets", node_ends, "Int64"),
              ("types", np.full(data.n_cells, 42, np.uint8), "UInt8"),
              ("faces", stream, "Int64"), ("faceoffsets", ends.astype(np.int64), "Int64")]
    text = (
        '<?xml version="1.0"?>\n<VTKFile type="UnstructuredGrid" version="2.2" '
        'byte_order="LittleEndian" header_type="UInt64" compressor="vtkZLibDataCompressor">\n'
        f'<UnstructuredGrid>\n<Piece NumberOfPoints="{data.n_points}" '
        f'NumberOfCells="{data.n_cells}">\n<Points>\n'
        + _vtu_array(np.asarray(data.points, np.float64), "Points", "Float64", "binary", 3)
        + "</Points>\n<Cells>\n"
        + "".join(_vtu_array(np.ascontiguousarray(v), n, t, "binary") for n, v, t in arrays)
        + "</Cells>\n</Piece>\n</UnstructuredGrid>\n</VTKFile>\n")
    Path(path).write_text(text)
    return Path(path)
