"""The cells file (--cells-out): read back with VTK and meshio, ids, rules and values kept."""

from __future__ import annotations

import math

import meshio
import numpy as np
import pytest
import vtk
from vtk.util.numpy_support import vtk_to_numpy

from caselint.mesh import Mesh, mesh_from_meshio
from caselint.mesh.blocks import shuffled, structured_hex
from caselint.mesh.refined import refined_block
from caselint.model import Finding, Where
from caselint.report.cells_file import write_cells_file


def finding(rule, severity, value, cells=(), faces=()):
    return Finding(rule, severity, f"{rule} is {value}", value, 1.0, "", Where(
        cells=tuple(int(c) for c in cells), faces=tuple(int(f) for f in faces)), "hint", "src")


def read_vtk(path):
    reader = vtk.vtkXMLUnstructuredGridReader()
    reader.SetFileName(str(path))
    reader.Update()
    return reader.GetOutput()


def test_polyhedra_and_faces_read_back_with_vtk(tmp_path):
    axis = np.linspace(0.0, 4.0, 5)
    mesh = Mesh(refined_block(axis, axis, axis, ((1, 3),) * 3))
    poly = np.flatnonzero(mesh.cell_shape < 0)[:3]
    hexes = np.flatnonzero(mesh.cell_shape >= 0)[:2]
    found = [finding("growth-ratio", "error", 8.0, mesh.file_cell_ids(poly), faces=[0, 5]),
             finding("aspect-ratio", "warning", 3.5, mesh.file_cell_ids(np.r_[hexes, poly[:1]]))]
    path = tmp_path / "cells.vtu"
    assert write_cells_file(path, mesh, found) == 5 + 2
    grid = read_vtk(path)
    cd = grid.GetCellData()
    ids = vtk_to_numpy(cd.GetArray("file_cell_id"))
    types = [grid.GetCellType(i) for i in range(grid.GetNumberOfCells())]
    assert sorted(ids[ids >= 0].tolist()) == sorted(mesh.file_cell_ids(np.r_[hexes, poly]).tolist())
    assert types.count(42) == 3 and types.count(12) == 2 and types.count(7) == 2
    # Reference: VTK's vtkCellSizeFilter measures every written cell as a unit cube
    size = vtk.vtkCellSizeFilter()
    size.SetInputData(grid)
    size.Update()
    volume = vtk_to_numpy(size.GetOutput().GetCellData().GetArray("Volume"))
    np.testing.assert_allclose(volume[ids >= 0], 1.0, rtol=1e-12)
    growth, aspect = vtk_to_numpy(cd.GetArray("growth-ratio")), vtk_to_numpy(cd.GetArray("aspect-ratio"))
    named_poly = np.isin(ids, mesh.file_cell_ids(poly))
    assert np.all(growth[named_poly] == 8.0) and np.all(growth[vtk_to_numpy(cd.GetArray("face_id")) >= 0] == 8.0)
    assert np.isnan(growth[np.isin(ids, mesh.file_cell_ids(hexes))]).all()
    assert np.all(aspect[np.isin(ids, mesh.file_cell_ids(hexes))] == 3.5)
    severity = vtk_to_numpy(cd.GetArray("severity"))
    assert set(severity[named_poly].tolist()) == {3}                # error beats warning
    # points in the file's coordinates, with their file ids
    pid = vtk_to_numpy(grid.GetPointData().GetArray("file_point_id"))
    ours = np.empty(mesh.n_points, dtype=np.int64)
    ours[mesh.file_point_ids()] = np.arange(mesh.n_points)
    np.testing.assert_array_equal(vtk_to_numpy(grid.GetPoints().GetData()), mesh.points[ours[pid]])


def test_shaped_cells_read_back_with_meshio_in_file_units(tmp_path):
    raw = shuffled(structured_hex(*(np.linspace(0, 1, 4),) * 3), seed=7)
    mesh = mesh_from_meshio(raw, scale_to_m=1e-3)                   # the file is in mm
    named = [3, 17, 22]
    path = tmp_path / "cells.vtu"
    write_cells_file(path, mesh, [finding("skewness", "warning", 0.7, named)], scale_to_m=1e-3)
    back = meshio.read(path)
    assert [c.type for c in back.cells] == ["hexahedron"]
    ids = back.cell_data["file_cell_id"][0]
    assert sorted(ids.tolist()) == named
    for row, cell in zip(back.cells[0].data, ids):
        # the same corners, in millimetres, as the file's cell
        np.testing.assert_allclose(back.points[row], raw.points[raw.cells[0].data[cell]],
                                   rtol=1e-12)
    assert np.all(back.cell_data["skewness"][0] == 0.7)
    assert not math.isnan(back.cell_data["skewness"][0][0])


def test_no_named_entities_gives_an_empty_but_valid_file(tmp_path):
    mesh = mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 3),) * 3))
    path = tmp_path / "cells.vtu"
    assert write_cells_file(path, mesh, [finding("skewness", "warning", 0.7)]) == 0
    assert read_vtk(path).GetNumberOfCells() == 0
    with pytest.raises(FileNotFoundError):
        write_cells_file(tmp_path / "no-such-folder" / "c.vtu", mesh, [])


def test_check_cells_out_matches_the_json_findings(tmp_path):
    """End to end: ``check --cells-out`` on a case whose mesh has a 4x size jump (the
    growth-ratio findings name cells and faces); the file's ids and values are the JSON's."""
    import json

    from test_cli import run_cli
    from test_cli_e2e import write_block_mesh, write_case

    mesh = write_block_mesh(tmp_path / "jump.msh", xs=[0.0, 0.1, 0.2, 0.6])
    case = write_case(tmp_path, mesh, name="Invented duct with a jump")
    cells = tmp_path / "where.vtu"
    code, out, err = run_cli("check", str(case), "--format", "json", "--cells-out", str(cells))
    assert code == 1 and f"wrote cells file {cells}" in err
    document = json.loads(out)
    named_cells, named_faces = {}, {}
    for f in document["cases"][0]["findings"]:
        for c in f["where"].get("cells", []):
            named_cells.setdefault(c, {})[f["rule"]] = f["measured"]
        for face in f["where"].get("faces", []):
            named_faces.setdefault(face, {})[f["rule"]] = f["measured"]
    assert named_cells and named_faces
    grid = read_vtk(cells)
    cd = grid.GetCellData()
    ids = vtk_to_numpy(cd.GetArray("file_cell_id"))
    face_ids = vtk_to_numpy(cd.GetArray("face_id"))
    assert sorted(ids[ids >= 0].tolist()) == sorted(named_cells)
    assert sorted(face_ids[face_ids >= 0].tolist()) == sorted(named_faces)
    for row, cell in enumerate(ids):
        entity = named_cells[cell] if cell >= 0 else named_faces[face_ids[row]]
        for rule, value in entity.items():
            assert vtk_to_numpy(cd.GetArray(rule))[row] == pytest.approx(value)
    # the mesh file was not touched, and a cells file inside a case's inputs is refused
    code, _, err = run_cli("check", str(case), "--cells-out", str(mesh))
    assert code == 2 and "never overwrites its inputs" in err
