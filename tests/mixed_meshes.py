"""A conforming test mesh of every cell kind, and writers of it in every format read.

:func:`mixed_mesh` builds, on a graded tensor grid of ``(4 n + 1) x n x n`` slots split into
slabs along x (an invented duct):

- slab 0: hexahedra;
- slab 1: each slot split into two wedges along the diagonal 0-2 of its z faces;
- slab 2: each slot split into six pyramids about its centre (one pyramid on each face),
  the pyramid on the +x face split into two tetrahedra along the diagonal that slab 3
  has there;
- slab 3: each slot split into six tetrahedra around its diagonal 0-6 (Kuhn);
- slab 4 (one slot thick; only with ``polyhedra``): slots whose -x face is split into the
  two triangles of slab 3's face: hexahedra with seven faces, i.e. general polyhedra.

Every face is shared by exactly the two cells that meet there, so the mesh is conforming
in every format. Boundary faces are grouped by the side of the box they lie on.

:data:`WRITERS` lists each format able to hold the meshes (a :class:`Column`); the
round-trip matrix reads every column and compares (other formats add their columns to the
same list).
"""

from __future__ import annotations

import dataclasses
from pathlib import Path
from typing import Callable, NamedTuple

import meshio
import numpy as np

from caselint.mesh.analysis import Mesh
from caselint.mesh.blocks import SIX_TETS
from caselint.mesh.celltypes import FACES
from caselint.mesh.formats.vtk_cells import VtkGrid, grid_data
from caselint.mesh.model import MeshData
from caselint.mesh.readers import ReadOptions
from mesh_writers import write_decomposed, write_face_folder
from vtk_writers import write_vtu_22

SIDES = ("xmin", "xmax", "ymin", "ymax", "zmin", "zmax")
VTK_TYPE = {"tetra": 10, "hexahedron": 12, "wedge": 13, "pyramid": 14}
_HEX = FACES["hexahedron"]


class MixedMesh(NamedTuple):
    """The cells as written to files and the mesh they make (with side groups)."""

    points: np.ndarray
    cells: list                  # (VTK type, nodes) or (42, faces)
    data: MeshData
    tags: np.ndarray             # group tag (1 + index into SIDES) of each boundary face


def _reversed(face) -> list[int]:
    return [face[0], *face[:0:-1]]


def mixed_mesh(n: int = 2, polyhedra: bool = True) -> MixedMesh:
    """The mesh of the module docstring, ``n`` slots a side per slab."""
    nx = 4 * n + (1 if polyhedra else 0)
    # spacings and centres short in decimal: ASCII writers that print 6 digits lose nothing
    xs = np.concatenate([[0.0], np.cumsum(0.5 + 0.125 * (np.arange(nx) % 4))])
    ys = np.concatenate([[0.0], np.cumsum(1.2 ** np.arange(n))])
    zs = np.linspace(0.0, 0.9, n + 1)
    z, y, x = np.meshgrid(zs, ys, xs, indexing="ij")
    lattice = np.column_stack([x.ravel(), y.ravel(), z.ravel()])
    pid = lambda i, j, k: i + (nx + 1) * (j + (n + 1) * k)  # noqa: E731
    centres = []
    cells: list = []
    for k in range(n):
        for j in range(n):
            for i in range(nx):
                hexa = [pid(i + a, j + b, k + c) for a, b, c in
                        ((0, 0, 0), (1, 0, 0), (1, 1, 0), (0, 1, 0),
                         (0, 0, 1), (1, 0, 1), (1, 1, 1), (0, 1, 1))]
                slab = min(i // n, 4)
                if slab == 0:
                    cells.append((12, hexa))
                elif slab == 1:
                    cells += [(13, [hexa[q] for q in (0, 1, 2, 4, 5, 6)]),
                              (13, [hexa[q] for q in (0, 2, 3, 4, 6, 7)])]
                elif slab == 2:
                    c = len(lattice) + len(centres)
                    centres.append(lattice[hexa].mean(axis=0))
                    for face in _HEX:
                        base = _reversed([hexa[q] for q in face])
                        if face == (1, 2, 6, 5) and i == 3 * n - 1:   # next to slab 3
                            a, b, d, e = hexa[1], hexa[5], hexa[6], hexa[2]
                            cells += [(10, [a, b, d, c]), (10, [a, d, e, c])]
                        else:
                            cells.append((14, [*base, c]))
                elif slab == 3:
                    cells += [(10, [hexa[q] for q in tet]) for tet in SIX_TETS]
                else:
                    faces = [[hexa[q] for q in f] for f in _HEX if f != (3, 0, 4, 7)]
                    faces += [[hexa[3], hexa[0], hexa[7]], [hexa[0], hexa[4], hexa[7]]]
                    cells.append((42, faces))
    points = np.concatenate([lattice, np.array(centres).reshape(-1, 3)])
    data = grid_data(to_grid(points, cells), ReadOptions())
    return _grouped(points, cells, data)


def to_grid(points: np.ndarray, cells: list, polygons=(), tags=()) -> VtkGrid:
    """A :class:`VtkGrid` of ``cells`` (and boundary ``polygons`` with ``gmsh:physical``
    ``tags``, named by side)."""
    everything = list(cells) + [(7, list(p)) for p in polygons]
    types = np.array([t for t, _ in everything])
    nodes = [sorted({p for f in c for p in f}) if t == 42 else c for t, c in everything]
    offsets = np.concatenate([[0], np.cumsum([len(c) for c in nodes])])
    grid = VtkGrid("<mixed>", points, types, offsets, np.concatenate(nodes).astype(np.int64))
    counts = [len(c) if t == 42 else 0 for t, c in everything]
    grid.cell_faces = np.concatenate([[0], np.cumsum(counts)])
    faces = [f for t, c in everything if t == 42 for f in c]
    grid.face_offsets = np.concatenate([[0], np.cumsum([len(f) for f in faces])]).astype(
        np.int64)
    grid.face_points = np.array([p for f in faces for p in f], dtype=np.int64)
    if len(polygons):
        grid.cell_data["gmsh:physical"] = np.concatenate([np.zeros(len(cells), np.int64),
                                                          np.asarray(tags)])
        grid.field_data.update({s: np.array([i + 1, 2]) for i, s in enumerate(SIDES)})
    return grid


def _grouped(points, cells, data: MeshData) -> MixedMesh:
    """``data`` with its boundary faces grouped by the box side they lie on."""
    mesh = Mesh(data)
    centre = mesh.face_centroids[mesh.boundary_faces]
    lo, hi = points.min(axis=0), points.max(axis=0)
    side = np.full(len(centre), -1)
    for axis in range(3):
        side[np.isclose(centre[:, axis], lo[axis])] = 2 * axis
        side[np.isclose(centre[:, axis], hi[axis])] = 2 * axis + 1
    assert (side >= 0).all()
    names = tuple(sorted(SIDES))
    group = np.full(data.n_faces, -1, dtype=np.int32)
    group[mesh.boundary_faces] = [names.index(SIDES[s]) for s in side]
    data = dataclasses.replace(data, face_group=group, group_names=names)
    return MixedMesh(points, cells, data, side + 1)


def boundary_polygons(mixed: MixedMesh) -> list[list[int]]:
    """The boundary faces' point lists, in face order."""
    d = mixed.data
    return [d.face_points[d.face_offsets[f]:d.face_offsets[f + 1]].tolist()
            for f in range(d.n_internal, d.n_faces)]


# -- writers -----------------------------------------------------------------------------


def _vtk_grid(mixed: MixedMesh):
    """A ``vtkUnstructuredGrid`` of the cells and the tagged boundary polygons."""
    import vtk
    from vtk.util.numpy_support import numpy_to_vtk

    grid = vtk.vtkUnstructuredGrid()
    pts = vtk.vtkPoints()
    pts.SetData(numpy_to_vtk(np.ascontiguousarray(mixed.points), deep=True))
    grid.SetPoints(pts)
    polygons = boundary_polygons(mixed)
    for vtk_type, nodes in mixed.cells + [(7, p) for p in polygons]:
        ids = vtk.vtkIdList()
        stream = ([len(nodes)] + [v for f in nodes for v in (len(f), *f)]
                  if vtk_type == 42 else nodes)
        for v in stream:
            ids.InsertNextId(int(v))
        grid.InsertNextCell(vtk_type, ids)
    tags = np.concatenate([np.zeros(len(mixed.cells), np.int32),
                           mixed.tags.astype(np.int32)])
    array = numpy_to_vtk(tags, deep=True)
    array.SetName("gmsh:physical")
    grid.GetCellData().AddArray(array)
    for i, side in enumerate(SIDES):
        named = numpy_to_vtk(np.array([i + 1, 2], dtype=np.int32), deep=True)
        named.SetName(side)
        grid.GetFieldData().AddArray(named)
    return grid


def write_vtu_vtk(mixed: MixedMesh, path: Path, mode: str = "appended",
                  compressor: str = "zlib", header64: bool = False,
                  big_endian: bool = False) -> Path:
    """VTU file version 2.3 as VTK 9 writes it."""
    import vtk

    writer = vtk.vtkXMLUnstructuredGridWriter()
    writer.SetFileName(str(path))
    writer.SetInputData(_vtk_grid(mixed))
    {"ascii": writer.SetDataModeToAscii, "binary": writer.SetDataModeToBinary,
     "appended": writer.SetDataModeToAppended}[mode]()
    {"zlib": writer.SetCompressorTypeToZLib, "lzma": writer.SetCompressorTypeToLZMA,
     "none": writer.SetCompressorTypeToNone}[compressor]()
    if header64:
        writer.SetHeaderTypeToUInt64()
    if big_endian:
        writer.SetByteOrderToBigEndian()
    if mode == "appended" and compressor == "none":
        writer.EncodeAppendedDataOff()
    assert writer.Write() == 1
    return path


def write_legacy_vtk(mixed: MixedMesh, path: Path, binary: bool = False,
                     version: int = 51) -> Path:
    """Legacy VTK file (version 5.1, or 4.2 with ``version=42``) as VTK 9 writes it."""
    import vtk

    writer = vtk.vtkUnstructuredGridWriter()
    writer.SetFileName(str(path))
    writer.SetInputData(_vtk_grid(mixed))
    if binary:
        writer.SetFileTypeToBinary()
    if version == 42:
        writer.SetFileVersion(42)
    assert writer.Write() == 1
    return path


def write_vtu_own(mixed: MixedMesh, path: Path, fmt: str = "binary",
                  compress: bool = True) -> Path:
    """VTU file version 2.2 (``faces`` / ``faceoffsets``) by the test writer."""
    polygons = boundary_polygons(mixed)
    cells = list(mixed.cells) + [(7, p) for p in polygons]
    tags = np.concatenate([np.zeros(len(mixed.cells), np.int32), mixed.tags.astype(np.int32)])
    return write_vtu_22(path, mixed.points, cells, fmt=fmt, compress=compress,
                        cell_data={"gmsh:physical": tags},
                        field_data={s: np.array([i + 1, 2], np.int32)
                                    for i, s in enumerate(SIDES)})


def write_meshio_vtu(mixed: MixedMesh, path: Path) -> Path:
    """VTU of the element cells through meshio (no polyhedra)."""
    blocks, tags = [], []
    for name, code in VTK_TYPE.items():
        conn = [c for t, c in mixed.cells if t == code]
        if conn:
            blocks.append((name, np.array(conn)))
            tags.append(np.zeros(len(conn), np.int64))
    polygons = boundary_polygons(mixed)
    for k, name in ((3, "triangle"), (4, "quad")):
        sel = [i for i, p in enumerate(polygons) if len(p) == k]
        blocks.append((name, np.array([polygons[i] for i in sel])))
        tags.append(mixed.tags[sel].astype(np.int64))
    m = meshio.Mesh(mixed.points, blocks, cell_data={"gmsh:physical": tags},
                    field_data={s: np.array([i + 1, 2]) for i, s in enumerate(SIDES)})
    meshio.write(str(path), m)
    return path


def _decomposed(mixed: MixedMesh, path: Path) -> Path:
    centres = Mesh(mixed.data).cell_centroids
    part = np.digitize(centres[:, 0], np.quantile(centres[:, 0], [0.3, 0.6])) + 3 * (
        centres[:, 1] > np.median(centres[:, 1]))
    return write_decomposed(path, mixed.data, part, binary=True)


Writer = Callable[[MixedMesh, Path], Path]
#: Read options of files whose groups are numbered only (meshio's VTU keeps no names).
MESHIO_TAGS = {"tag_array": "gmsh:physical", "tags": {i + 1: s for i, s in enumerate(SIDES)}}
BOTH, MIXED = ("elements", "mixed"), ("mixed",)


class Column(NamedTuple):
    """One format of the round-trip matrix: the meshes it is used for (``elements``: no
    polyhedra; ``mixed``: with them), its writer and the read options its files need."""

    name: str
    meshes: tuple[str, ...]
    write: Writer
    options: dict = {}


_VTK_NAMES = {10: "tetra", 12: "hexahedron", 13: "wedge", 14: "pyramid"}
_SIDE_ROLES = {"xmin": "inlet", "xmax": "outlet", "ymin": "wall", "ymax": "wall",
               "zmin": "wall", "zmax": "wall"}


def element_mesh(m: MixedMesh):
    """The element-only mesh as the SU2/CGNS writers take it (blocks by type, boundary
    triangles and quadrilaterals by side)."""
    from mixed_mesh import ElementMesh

    blocks: dict[str, list] = {}
    for kind, nodes in m.cells:
        blocks.setdefault(_VTK_NAMES[kind], []).append(nodes)
    data = m.data
    faces = np.arange(data.n_internal, data.n_faces)
    boundary: dict[tuple[str, str], list] = {}
    for f in faces:
        pts = data.face_points[data.face_offsets[f]:data.face_offsets[f + 1]]
        kind = "triangle" if len(pts) == 3 else "quad"
        side = data.group_names[data.face_group[f]]
        boundary.setdefault((kind, side), []).append(pts)
    return ElementMesh(
        data.points, [(t, np.array(c)) for t, c in sorted(blocks.items())],
        [(t, np.array(c), side) for (t, side), c in sorted(boundary.items())])


def _other_format(kind: str):
    """A writer of the SU2, face-based .msh or CGNS layouts (tests/format_writers.py)."""
    from cgns_writer import write_cgns_elements, write_cgns_ngon
    from format_writers import write_face_msh, write_su2

    def write(m: MixedMesh, p: Path) -> Path:
        if kind == "su2":
            return write_su2(element_mesh(m), p.with_suffix(".su2"))
        if kind.startswith("msh"):
            return write_face_msh(m.data, p.with_suffix(".msh"), roles=_SIDE_ROLES,
                                  binary=kind.endswith("binary"))
        if kind == "cgns-ngon":
            return write_cgns_ngon(m.data, p.with_suffix(".cgns"))
        return write_cgns_elements(element_mesh(m), p.with_suffix(".cgns"),
                                   mixed=kind == "cgns-mixed")
    return write


#: Every format caselint reads that can hold the test meshes. VTK writes version 0.1 VTU
#: and legacy files without polyhedra, which go to meshio (with meshio's wedge order):
#: those columns hold the mixed mesh only.
WRITERS: list[Column] = [
    Column("face-folder ascii", BOTH,
           lambda m, p: write_face_folder(p / "constant" / "polyMesh", m.data).parent.parent),
    Column("face-folder binary gzip 64-bit", BOTH,
           lambda m, p: write_face_folder(p, m.data, binary=True, gz=True, labels=64)),
    Column("face-folder decomposed", BOTH, _decomposed),
    Column("vtu 2.3 appended zlib", MIXED, lambda m, p: write_vtu_vtk(m, p.with_suffix(".vtu"))),
    Column("vtu 2.3 ascii", MIXED, lambda m, p: write_vtu_vtk(m, p.with_suffix(".vtu"), "ascii")),
    Column("vtu 2.3 binary lzma 64-bit header big-endian", MIXED,
           lambda m, p: write_vtu_vtk(m, p.with_suffix(".vtu"), "binary", "lzma", True, True)),
    Column("vtu 2.2 base64", BOTH, lambda m, p: write_vtu_own(m, p.with_suffix(".vtu"))),
    Column("vtu 2.2 base64 uncompressed", BOTH,
           lambda m, p: write_vtu_own(m, p.with_suffix(".vtu"), compress=False)),
    Column("vtk 5.1 binary", MIXED,
           lambda m, p: write_legacy_vtk(m, p.with_suffix(".vtk"), True)),
    Column("vtk 4.2 ascii", MIXED,
           lambda m, p: write_legacy_vtk(m, p.with_suffix(".vtk"), False, 42)),
    Column("vtu elements via meshio", ("elements",),
           lambda m, p: write_meshio_vtu(m, p.with_suffix(".vtu")), MESHIO_TAGS),
    Column("su2", ("elements",), _other_format("su2")),
    Column("cgns sections", ("elements",), _other_format("cgns-sections")),
    Column("cgns mixed", ("elements",), _other_format("cgns-mixed")),
    Column("cgns ngon/nface", BOTH, _other_format("cgns-ngon")),
    Column("face .msh ascii", BOTH, _other_format("msh-ascii")),
    Column("face .msh binary", BOTH, _other_format("msh-binary")),
]
