"""Formats read through meshio that need h5py or netCDF4: a missing package is named, MED
families and Exodus side sets become boundary groups.

Files are written by meshio 5.3.5 (XDMF, MED, Exodus); the Exodus side sets are added
with netCDF4 from the Exodus II layout (``elem_ss{k}``, ``side_ss{k}``, ``ss_names``),
which meshio does not write. Reference: the 3 x 2 x 1 block of unit hexahedra
(``structured_hex``), whose sides hold 2 (x), 3 (y) and 6 (z) faces [computed].
"""

from __future__ import annotations

import sys

import meshio
import numpy as np
import pytest

from caselint.mesh import read_mesh
from caselint.mesh.blocks import structured_hex
from test_cli import run_cli


def block() -> meshio.Mesh:
    return structured_hex([0.0, 1.0, 2.0, 3.0], [0.0, 1.0, 2.0], [0.0, 1.0])


def volume_only(m: meshio.Mesh) -> meshio.Mesh:
    return meshio.Mesh(m.points, [m.cells[0]])


@pytest.mark.parametrize("suffix, package", [(".xdmf", "h5py"), (".med", "h5py"),
                                             (".exo", "netCDF4")])
def test_a_missing_package_is_named(tmp_path, monkeypatch, suffix, package):
    path = tmp_path / f"block{suffix}"
    meshio.write(path, volume_only(block()))
    assert read_mesh(path).n_cells == 6                # with the package installed
    monkeypatch.setitem(sys.modules, package, None)
    code, _, err = run_cli("mesh", str(path))
    assert code == 2
    assert f"reading {suffix} files needs the Python package {package}: pip install " \
           f"{package}" in err
    assert "damaged" not in err


def test_med_families_become_groups(tmp_path):
    m = block()
    quads = m.cells[1].data
    tag = m.cell_data["gmsh:physical"][1]
    names = {int(v[0]): k for k, v in m.field_data.items()}
    family = -np.asarray(tag, dtype=np.int64)      # element families are negative in MED
    med = meshio.Mesh(m.points, [m.cells[0], ("quad", quads)],
                      cell_data={"cell_tags": [np.zeros(6, np.int64), family]})
    # family -1 (xmin) also in a second group: a face may belong to several groups
    med.cell_tags = {-t: [names[t]] + (["inflow"] if names[t] == "xmin" else [])
                     for t in names}
    path = tmp_path / "block.med"
    meshio.write(path, med)
    mesh = read_mesh(path)
    # a face holds one group: the first name in sorted order wins, and the report counts
    # the faces named more than once
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        "inflow": 2, "xmax": 2, "xmin": 0, "ymax": 3, "ymin": 3, "zmax": 6, "zmin": 6}
    assert mesh.data.report.multi_group == 2


def add_side_sets(path, sets: dict[str, tuple[list[int], list[int]]]) -> None:
    """Append Exodus II side sets (element ids and side numbers from 1) to ``path``."""
    import netCDF4

    with netCDF4.Dataset(str(path), "a") as nc:
        nc.createDimension("num_side_sets", len(sets))
        if "len_string" not in nc.dimensions:
            nc.createDimension("len_string", 33)
        names = nc.createVariable("ss_names", "S1", ("num_side_sets", "len_string"))
        for k, (name, (elems, sides)) in enumerate(sets.items(), start=1):
            names[k - 1] = netCDF4.stringtochar(np.array([name], dtype="S33"))
            nc.createDimension(f"num_side_ss{k}", len(elems))
            nc.createVariable(f"elem_ss{k}", "i4", (f"num_side_ss{k}",))[:] = elems
            nc.createVariable(f"side_ss{k}", "i4", (f"num_side_ss{k}",))[:] = sides


def test_exodus_side_sets_become_groups(tmp_path):
    path = tmp_path / "block.exo"
    meshio.write(path, volume_only(block()))
    # cells 1..6 (i + 3 j + 1); Exodus hexahedron sides: 4 is x = min, 2 x = max, 5 z = min
    add_side_sets(path, {"inlet": ([1, 4], [4, 4]), "outlet": ([3, 6], [2, 2]),
                         "floor": ([1, 2, 3, 4, 5, 6], [5] * 6)})
    mesh = read_mesh(path)
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        "floor": 6, "inlet": 2, "outlet": 2}
    centres = {g: mesh.face_centroids[mesh.group_faces(g)].mean(axis=0).round(6).tolist()
               for g in mesh.group_names}
    assert centres == {"floor": [1.5, 1.0, 0.0], "inlet": [0.0, 1.0, 0.5],
                       "outlet": [3.0, 1.0, 0.5]}
