"""CGNS/HDF5 meshes: element sections, MIXED, NGON_n/NFACE_n, structured multi-zone grids,
boundary conditions and families, and no partial reads.

Files are written with h5py from the SIDS-to-HDF5 mapping (``tests/cgns_writer.py``).
References: the mixed-element box of ``tests/mixed_mesh.py`` read from VTU through meshio;
closed-form volumes and face counts of the structured blocks [computed].
"""

from __future__ import annotations

import sys

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh import read_mesh
from cgns_writer import write_cgns_elements, write_cgns_ngon, write_cgns_structured
from mixed_mesh import mixed_box, reference_data
from test_cli import run_cli

ROLES = {"floor": "wall", "inlet": "inlet", "outlet": "outlet", "top": "symmetry",
         "walls": "wall"}
BOX_FACES = {"floor": 33, "inlet": 6, "outlet": 12, "top": 33, "walls": 36}


def faces_per_group(mesh) -> dict[str, int]:
    return {g: len(mesh.group_faces(g)) for g in mesh.group_names}


@pytest.mark.parametrize("layout", [{}, {"mixed": True}, {"mixed": True, "offsets": False}])
def test_element_sections_read_like_the_vtu(tmp_path, layout):
    mesh = read_mesh(write_cgns_elements(mixed_box(mirrored=True), tmp_path / "box.cgns",
                                         **layout))
    assert mesh.cell_counts == {"hexahedron": 12, "wedge": 24, "pyramid": 42, "tetra": 132}
    assert mesh.cell_volumes.sum() == pytest.approx(0.042, rel=1e-12)
    assert mesh.cell_volumes.min() > 0
    assert faces_per_group(mesh) == BOX_FACES
    assert mesh.data.group_types == ROLES                   # from the families' FamilyBC
    assert [n for n in mesh.notes if "mirrored" in n]      # the wedges were turned round


def test_mixed_section_names_cells_by_their_place_in_the_file(tmp_path):
    box = mixed_box()
    box.blocks[-1][1][7] = box.blocks[-1][1][7][[0, 2, 1, 3]]     # one tetrahedron inverted
    mesh = read_mesh(write_cgns_elements(box, tmp_path / "box.cgns", mixed=True))
    bad = np.flatnonzero(mesh.cell_volumes < 0)
    assert mesh.file_cell_ids(bad).tolist() == [78 + 7]        # 78 cells come before the tets


@pytest.mark.parametrize("old_style", [False, True])
def test_ngon_nface_polyhedra(tmp_path, old_style):
    ref = reference_data(mixed_box(), tmp_path)
    mesh = read_mesh(write_cgns_ngon(ref, tmp_path / "poly.cgns", old_style=old_style))
    assert mesh.n_cells == 210 and mesh.data.n_faces == ref.n_faces
    assert mesh.cell_volumes.sum() == pytest.approx(0.042, rel=1e-12)
    assert mesh.cell_volumes.min() > 0
    assert faces_per_group(mesh) == BOX_FACES and mesh.data.group_types == ROLES


def two_blocks():
    ys, zs = np.linspace(0, 1, 3), np.linspace(0, 0.5, 2)
    return [(np.linspace(0, 1, 3), ys, zs), (np.linspace(1, 2, 4), ys, zs)]


def test_structured_zones_join_on_their_interface(tmp_path):
    mesh = read_mesh(write_cgns_structured(two_blocks(), tmp_path / "blocks.cgns"))
    # 2 x 2 x 1 + 3 x 2 x 1 hexahedra; 18 + 24 points less the 6 of the shared plane
    assert (mesh.n_cells, mesh.n_points) == (10, 36)
    assert mesh.cell_counts == {"hexahedron": 10}
    assert mesh.cell_volumes.sum() == pytest.approx(1.0, rel=1e-12)
    assert faces_per_group(mesh) == {"floor": 10, "inlet": 2, "outlet": 2, "top": 10,
                                     "walls": 10}
    # joined 5 x 2 x 1 cells: 4 x 2 faces across x (the interface among them), 5 x 1 across y
    assert mesh.data.n_internal == 4 * 2 + 5 * 1
    assert mesh.data.zone_names == ("block1", "block2")
    assert np.bincount(mesh.data.cell_zone).tolist() == [4, 6]


def test_structured_zones_without_interfaces_stay_apart(tmp_path):
    mesh = read_mesh(write_cgns_structured(two_blocks(), tmp_path / "apart.cgns",
                                           interfaces=False))
    assert (mesh.n_cells, mesh.n_points) == (10, 42)
    exposed = (mesh.data.neighbour < 0) & (mesh.data.face_group < 0)
    assert int(exposed.sum()) == 4                      # the two sides of the shared plane


def test_mesh_zone_reads_one_zone(tmp_path):
    path = write_cgns_structured(two_blocks(), tmp_path / "blocks.cgns")
    second = read_mesh(path, zone="block2")
    assert second.n_cells == 6 and second.cell_volumes.sum() == pytest.approx(0.5)
    with pytest.raises(MeshReadError, match="mesh.zone 'block3' is not a zone of this file "
                                            r"\(zones block1, block2\)"):
        read_mesh(path, zone="block3")


# -- files that are not, or not wholly, CGNS meshes: exit 2 naming the file and the gap ----


def refused(path) -> str:
    code, _, err = run_cli("mesh", str(path))
    assert code == 2 and str(path) in err, err
    return err


def test_part_of_a_mesh_is_refused(tmp_path):
    # the tetrahedra section left out, the zone sizes still declaring every cell
    err = refused(write_cgns_elements(mixed_box(), tmp_path / "part.cgns",
                                      drop_last_block=True))
    assert ("/Base/fluid: declares 210 cells (its zone sizes) but its element sections hold "
            "78 volume cells: the file holds only part of the mesh") in err


def test_a_zone_without_sizes_is_refused(tmp_path):
    err = refused(write_cgns_elements(mixed_box(), tmp_path / "nosizes.cgns",
                                      zone_sizes=False, version=False))
    assert "/Base/fluid: the zone holds no zone sizes (vertex and cell counts)" in err


def test_missing_library_version_is_a_note(tmp_path):
    mesh = read_mesh(write_cgns_elements(mixed_box(), tmp_path / "v.cgns", version=False))
    assert mesh.notes == ("the file has no CGNSLibraryVersion node (not written through the "
                          "CGNS library)",)


def test_adf_file_gets_a_clear_message(tmp_path):
    path = tmp_path / "old.cgns"
    path.write_bytes(b"@(#)ADF Database Version A02011>" + bytes(200))
    assert "older ADF storage format" in refused(path)


def test_truncated_file_is_refused(tmp_path):
    path = write_cgns_elements(mixed_box(), tmp_path / "cut.cgns")
    path.write_bytes(path.read_bytes()[:4000])
    assert "cannot open it (truncated or damaged)" in refused(path)


def test_without_h5py_the_message_names_the_package(tmp_path, monkeypatch):
    path = write_cgns_elements(mixed_box(), tmp_path / "box.cgns")
    monkeypatch.setitem(sys.modules, "h5py", None)
    assert "needs the Python package h5py: pip install h5py" in refused(path)
