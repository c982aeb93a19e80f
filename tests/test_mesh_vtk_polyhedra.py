"""Polyhedral VTU and legacy VTK files: read without VTK, checked against VTK itself.

References: files written by VTK 9 (the ``vtk`` PyPI package, a test dependency) and by the
test writer of the 2.2 layout (``tests/vtk_writers.py``); cell volumes from VTK's
``vtkCellSizeFilter`` on the same file, read by VTK's own reader.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh import read_mesh
from caselint.mesh.formats import BUILTIN_READERS
from caselint.mesh.readers import choose_reader
from mixed_meshes import (
    MESHIO_TAGS, SIDES, mixed_mesh, write_legacy_vtk, write_meshio_vtu, write_vtu_own,
    write_vtu_vtk,
)


@pytest.fixture(scope="module")
def mixed():
    return mixed_mesh(2, polyhedra=True)


def vtk_volumes(path: Path) -> np.ndarray:
    """Per-cell volumes of a file as VTK computes them (0 for boundary polygons)."""
    import vtk
    from vtk.util.numpy_support import vtk_to_numpy

    reader = (vtk.vtkXMLUnstructuredGridReader() if path.suffix == ".vtu"
              else vtk.vtkUnstructuredGridReader())
    reader.SetFileName(str(path))
    sizes = vtk.vtkCellSizeFilter()
    sizes.SetInputConnection(reader.GetOutputPort())
    sizes.ComputeVolumeOn()
    sizes.Update()
    return vtk_to_numpy(sizes.GetOutput().GetCellData().GetArray("Volume"))


@pytest.mark.parametrize("write", [
    lambda m, p: write_vtu_vtk(m, p / "a.vtu"),
    lambda m, p: write_vtu_own(m, p / "a.vtu", fmt="ascii"),
    lambda m, p: write_legacy_vtk(m, p / "a.vtk", binary=True),
], ids=["vtu-2.3-by-vtk", "vtu-2.2-by-test-writer", "vtk-5.1-by-vtk"])
def test_cell_volumes_equal_vtks(mixed, tmp_path, write):
    path = write(mixed, tmp_path)
    mesh = read_mesh(path)
    expected = vtk_volumes(path)[mesh.file_cell_ids()]
    assert len(expected) == mesh.n_cells == 128
    np.testing.assert_allclose(mesh.cell_volumes, expected, rtol=1e-10)
    assert mesh.cell_counts["polyhedron"] == 4


def test_file_cell_ids_skip_the_boundary_polygons(mixed, tmp_path):
    path = write_vtu_vtk(mixed, tmp_path / "a.vtu")
    mesh = read_mesh(path)
    # volume cells come first in the file, polygons after them
    assert np.array_equal(mesh.file_cell_ids(), np.arange(128))
    assert mesh.group_names == tuple(sorted(SIDES))


def test_groups_from_a_tag_array_and_names_from_the_case(mixed, tmp_path):
    path = write_vtu_vtk(mixed, tmp_path / "a.vtu")
    named = read_mesh(path, **MESHIO_TAGS)
    numbered = read_mesh(path, tag_array="gmsh:physical")
    assert named.group_names == tuple(sorted(SIDES))
    assert numbered.group_names == tuple(f"tag-{i}" for i in range(1, 7))
    assert len(named.group_faces("zmax")) == len(numbered.group_faces("tag-6")) == 26
    with pytest.raises(MeshReadError, match="no cell data array 'zone' \\(tag_array\\)"):
        read_mesh(path, tag_array="zone")


def test_reader_choice(mixed, tmp_path):
    elements = mixed_mesh(2, polyhedra=False)
    readers = BUILTIN_READERS
    assert choose_reader(write_vtu_vtk(mixed, tmp_path / "p.vtu"), readers).name \
        == "vtu-polyhedra"
    assert choose_reader(write_legacy_vtk(mixed, tmp_path / "p.vtk"), readers).name \
        == "vtk-polyhedra"
    # meshio reads element files of the versions it knows (0.1); this reader the rest
    assert choose_reader(write_meshio_vtu(elements, tmp_path / "e.vtu"), readers).name \
        == "meshio"
    assert choose_reader(write_vtu_own(elements, tmp_path / "o.vtu"), readers).name \
        == "vtu-polyhedra"


def test_several_pieces_are_refused(mixed, tmp_path):
    import vtk

    from mixed_meshes import _vtk_grid

    path = tmp_path / "pieces.vtu"
    writer = vtk.vtkXMLUnstructuredGridWriter()
    writer.SetFileName(str(path))
    writer.SetInputData(_vtk_grid(mixed))
    writer.SetNumberOfPieces(3)
    assert writer.Write() == 1
    with pytest.raises(MeshReadError, match="holds 3 pieces; caselint reads files of one piece"):
        read_mesh(path)


# -- damaged files ------------------------------------------------------------------------


def _fails(path: Path, data: bytes, expected: str) -> None:
    path.write_bytes(data)
    with pytest.raises(MeshReadError) as err:
        read_mesh(path)
    assert str(path) in str(err.value) and expected in err.value.message, err.value.message


def test_vtu_counts_must_match(mixed, tmp_path):
    path = write_vtu_vtk(mixed, tmp_path / "a.vtu", "ascii")
    text = path.read_bytes()
    _fails(path, re.sub(rb'NumberOfCells="(\d+)"', b'NumberOfCells="999"', text),
           "for NumberOfCells=999")
    _fails(path, re.sub(rb'NumberOfPoints="(\d+)"', b'NumberOfPoints="2"', text),
           "points for NumberOfPoints=2")


def test_vtu_truncated_or_damaged(mixed, tmp_path):
    path = write_vtu_vtk(mixed, tmp_path / "a.vtu")
    data = path.read_bytes()
    _fails(path, data[:len(data) - 400], "(truncated)")
    middle = data.find(b"<AppendedData") + 200
    _fails(path, data[:middle] + bytes(200) + data[middle + 200:], "damaged or truncated data")
    inline = write_vtu_vtk(mixed, tmp_path / "b.vtu", "binary").read_bytes()
    _fails(path, inline[:len(inline) // 2], "not well-formed XML")
    _fails(path, data.replace(b"vtkZLibDataCompressor", b"vtkLZ4DataCompressor"),
           "compressed with vtkLZ4DataCompressor")


def test_vtu_22_face_offsets_must_fit(mixed, tmp_path):
    path = write_vtu_own(mixed, tmp_path / "a.vtu", fmt="ascii")
    text = path.read_text()
    offsets = re.search(r'Name="faceoffsets"[^>]*>\n([^<]*)', text)
    values = offsets.group(1).split()
    last = next(i for i, v in reversed(list(enumerate(values))) if v != "-1")
    values[last] = str(int(values[last]) + 3)
    _fails(path, text.replace(offsets.group(1), " ".join(values) + "\n").encode(),
           "do not end where faceoffsets says")


def test_legacy_counts_must_match(mixed, tmp_path):
    path = write_legacy_vtk(mixed, tmp_path / "a.vtk")
    text = path.read_bytes()
    _fails(path, text[:len(text) * 2 // 3], "(truncated)")
    count = re.search(rb"CELL_TYPES (\d+)", text)
    n = int(count.group(1))
    _fails(path, text.replace(count.group(0), b"CELL_TYPES %d" % (n + 1)),
           f"CELL_TYPES declares {n + 1} values but holds {n}")
    binary = write_legacy_vtk(mixed, tmp_path / "b.vtk", binary=True).read_bytes()
    _fails(path, binary[:len(binary) // 2], "the file ends after")


def test_legacy_42_cell_lengths_must_add_up(mixed, tmp_path):
    path = write_legacy_vtk(mixed, tmp_path / "a.vtk", version=42)
    text = path.read_bytes()
    head = re.search(rb"CELLS (\d+) (\d+)", text)
    _fails(path, text.replace(head.group(0), b"CELLS %d %s" % (int(head.group(1)) - 1,
                                                                head.group(2))),
           "the cell lengths do not add up")


def test_memory_estimate_from_the_declared_cells(mixed, tmp_path, monkeypatch):
    monkeypatch.setenv("CASELINT_MEMORY_LIMIT", "2GB")
    path = write_vtu_vtk(mixed, tmp_path / "a.vtu", "ascii")
    path.write_bytes(re.sub(rb'NumberOfCells="\d+"', b'NumberOfCells="90000000"',
                            path.read_bytes()))
    with pytest.raises(MeshReadError, match="counted from the file's NumberOfCells"):
        read_mesh(path)
    path = write_legacy_vtk(mixed, tmp_path / "a.vtk")
    path.write_bytes(re.sub(rb"CELLS \d+", b"CELLS 90000000", path.read_bytes()))
    with pytest.raises(MeshReadError, match="counted from the CELLS header"):
        read_mesh(path)
