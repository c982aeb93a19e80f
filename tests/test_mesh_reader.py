"""Reading mesh files: formats, boundary groups, unit scaling and clear errors.

References: files written by gmsh 4.15.2 (embedded below, with the .geo they came from);
files written by meshio 5.3.5 from blocks with known counts; closed-form volumes.
"""

from __future__ import annotations

import contextlib
import io

import meshio
import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh import mesh_from_meshio, read_mesh
from caselint.mesh.blocks import HEX_SIDES, structured_hex, structured_quad, write_gmsh22

# Written by gmsh 4.15.2 (msh 4.1) from: a 2 x 1 rectangle, 3 x 3 transfinite nodes,
# recombined, extruded 0.5 in z with Layers{1}; Recombine; physical surfaces floor (z = 0),
# ceiling (z = 0.5), walls (the four sides) and volume air. 2 x 2 x 1 hexahedra of 0.25 m^3.
GMSH_BOX_41 = """$MeshFormat
4.1 0 8
$EndMeshFormat
$PhysicalNames
4
2 1 "floor"
2 2 "ceiling"
2 3 "walls"
3 4 "air"
$EndPhysicalNames
$Entities
8 12 6 1
1 0 0 0 0 
2 2 0 0 0 
3 2 1 0 0 
4 0 1 0 0 
5 0 0 0.5 0 
6 2 0 0.5 0 
10 2 1 0.5 0 
14 0 1 0.5 0 
1 0 0 0 2 0 0 0 2 1 -2 
2 2 0 0 2 1 0 0 2 2 -3 
3 0 1 0 2 1 0 0 2 3 -4 
4 0 0 0 0 1 0 0 2 4 -1 
6 0 0 0.5 2 0 0.5 0 2 5 -6 
7 2 0 0.5 2 1 0.5 0 2 6 -10 
8 0 1 0.5 2 1 0.5 0 2 10 -14 
9 0 0 0.5 0 1 0.5 0 2 14 -5 
11 0 0 0 0 0 0.5 0 2 1 -5 
12 2 0 0 2 0 0.5 0 2 2 -6 
16 2 1 0 2 1 0.5 0 2 3 -10 
20 0 1 0 0 1 0.5 0 2 4 -14 
1 0 0 0 2 1 0 1 1 4 1 2 3 4 
13 0 0 0 2 0 0.5 1 3 4 1 12 -6 -11 
17 2 0 0 2 1 0.5 1 3 4 2 16 -7 -12 
21 0 1 0 2 1 0.5 1 3 4 3 20 -8 -16 
25 0 0 0 0 1 0.5 1 3 4 4 11 -9 -20 
26 0 0 0.5 2 1 0.5 1 2 4 6 7 8 9 
1 0 0 0 2 1 0.5 1 4 6 -1 26 13 17 21 25 
$EndEntities
$Nodes
23 18 1 18
0 1 0 1
1
0 0 0
0 2 0 1
2
2 0 0
0 3 0 1
3
2 1 0
0 4 0 1
4
0 1 0
0 5 0 1
5
0 0 0.5
0 6 0 1
6
2 0 0.5
0 10 0 1
7
2 1 0.5
0 14 0 1
8
0 1 0.5
1 1 0 1
9
0.9999999999973842 0 0
1 2 0 1
10
2 0.4999999999986921 0
1 3 0 1
11
1.000000000004119 1 0
1 4 0 1
12
0 0.5000000000020595 0
1 6 0 1
13
0.9999999999973842 0 0.5
1 7 0 1
14
2 0.4999999999986921 0.5
1 8 0 1
15
1.000000000004119 1 0.5
1 9 0 1
16
0 0.5000000000020595 0.5
2 1 0 1
17
1.000000000000752 0.5000000000003758 0
2 13 0 0
2 17 0 0
2 21 0 0
2 25 0 0
2 26 0 1
18
1.000000000000752 0.5000000000003758 0.5
3 1 0 0
$EndNodes
$Elements
7 20 1 20
2 1 3 4
1 1 9 17 12 
2 12 17 11 4 
3 9 2 10 17 
4 17 10 3 11 
2 13 3 2
5 1 9 13 5 
6 9 2 6 13 
2 17 3 2
7 2 10 14 6 
8 10 3 7 14 
2 21 3 2
9 3 11 15 7 
10 11 4 8 15 
2 25 3 2
11 4 12 16 8 
12 12 1 5 16 
2 26 3 4
13 5 13 18 16 
14 16 18 15 8 
15 13 6 14 18 
16 18 14 7 15 
3 1 5 4
17 1 9 17 12 5 13 18 16 
18 12 17 11 4 16 18 15 8 
19 9 2 10 17 13 6 14 18 
20 17 10 3 11 18 14 7 15 
$EndElements
"""


def counts(mesh) -> dict[str, int]:
    return {g: len(mesh.group_faces(g)) for g in mesh.group_names}


def block():
    return structured_hex(np.linspace(0, 3, 4), np.linspace(0, 2, 3), np.linspace(0, 1, 2))


BLOCK_COUNTS = {"xmin": 2, "xmax": 2, "ymin": 3, "ymax": 3, "zmin": 6, "zmax": 6}


def test_gmsh41_file_written_by_gmsh(tmp_path):
    path = tmp_path / "box.msh"
    path.write_text(GMSH_BOX_41)
    mesh = read_mesh(path)
    assert mesh.cell_counts == {"hexahedron": 4}
    assert np.allclose(mesh.cell_volumes, 0.25, rtol=1e-9)
    assert counts(mesh) == {"ceiling": 4, "floor": 4, "walls": 8}
    assert len(mesh.boundary_faces) == 16 and np.all(mesh.face_group[mesh.boundary_faces] >= 0)
    assert mesh.unmatched_group_elements == {}
    assert mesh.path == str(path)


@pytest.mark.parametrize("binary", [False, True])
def test_gmsh22_written_by_meshio(tmp_path, binary):
    path = tmp_path / "block.msh"
    write_gmsh22(block(), path, binary=binary)
    mesh = read_mesh(path)
    assert counts(mesh) == BLOCK_COUNTS
    assert mesh.cell_volumes.sum() == pytest.approx(6.0, rel=1e-14)


def test_vtu_with_cell_sets(tmp_path):
    # meshio stores cell sets in a VTU as one integer cell-data array named by the joined set
    # names (values = set index, -1 = none); the case names that array as its tag_array.
    path = tmp_path / "block.vtu"
    with contextlib.redirect_stderr(io.StringIO()):
        meshio.write(path, block())
    key = "-".join(HEX_SIDES)
    mesh = read_mesh(path, tag_array=key, tags=dict(enumerate(HEX_SIDES)))
    assert counts(mesh) == BLOCK_COUNTS
    # Without it, the gmsh physical tags meshio also kept are used, unnamed in a VTU.
    plain = read_mesh(path)
    assert plain.group_names == tuple(f"physical-{k}" for k in range(1, 7))
    assert counts(plain)["physical-1"] == BLOCK_COUNTS["xmin"]


def test_tag_array_names_unmapped_and_skips_negative_tags():
    m = block()
    side = m.cell_data["gmsh:physical"][1]
    zone = np.where(side <= 2, 7, np.where(side <= 4, 9, -1))   # x sides 7, y sides 9, z none
    m.cell_data["zone_id"] = [np.zeros(len(m.cells[0].data), int), zone]
    mesh = mesh_from_meshio(m, tag_array="zone_id", tags={7: "outlets"})
    assert counts(mesh) == {"outlets": 4, "tag-9": 6}
    exposed = mesh.face_group[mesh.boundary_faces]
    assert (exposed < 0).sum() == 12                            # the z sides, in no group
    with pytest.raises(MeshReadError, match=r"no cell data array 'zone' \(tag_array\)"):
        mesh_from_meshio(m, tag_array="zone", tags={})


def test_meshio_cell_sets_name_groups():
    m = block()
    m.cell_data = {}
    m.field_data = {}
    m.cell_sets["fluid"] = [np.arange(6), np.zeros(0, int)]       # a volume set: not a group
    mesh = mesh_from_meshio(m)
    assert counts(mesh) == BLOCK_COUNTS


def test_millimetre_mesh_scaled_to_metres():
    # Coordinates in mm with scale_to_m = 1e-3: volumes x 1e-9, areas x 1e-6.
    m = block()
    m.points *= 1000.0
    mesh = mesh_from_meshio(m, scale_to_m=1e-3)
    assert mesh.cell_volumes.sum() == pytest.approx(6.0, rel=1e-14)
    assert mesh.face_areas[mesh.group_faces("zmin")].sum() == pytest.approx(6.0, rel=1e-14)
    assert np.allclose(mesh.bounds[1], [3, 2, 1])
    raw = mesh_from_meshio(m)
    assert raw.cell_volumes.sum() == pytest.approx(6.0e9, rel=1e-14)
    with pytest.raises(MeshReadError, match="scale_to_m must be a positive number"):
        mesh_from_meshio(m, scale_to_m=0.0)


def test_higher_order_cells_read_by_corners():
    pts = np.array([(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1)], float)
    mids = [(pts[a] + pts[b]) / 2 for a, b in ((0, 1), (1, 2), (2, 0), (0, 3), (1, 3), (2, 3))]
    m = meshio.Mesh(np.vstack([pts, mids]), [("tetra10", np.arange(10)[None, :])])
    mesh = mesh_from_meshio(m)
    assert mesh.cell_counts == {"tetra": 1}
    assert mesh.cell_volumes[0] == pytest.approx(1 / 6, rel=1e-14)
    assert any("tetra10" in note and "corner" in note for note in mesh.notes)


def test_2d_mesh_from_two_column_points():
    m = structured_quad(np.linspace(0, 2, 3), np.linspace(0, 1, 2))
    m.points = m.points[:, :2].copy()
    mesh = mesh_from_meshio(m)
    assert mesh.dim == 2 and mesh.points.shape[1] == 3
    assert counts(mesh) == {"xmin": 1, "xmax": 1, "ymin": 2, "ymax": 2}


def _garbage(path):
    path.write_bytes(bytes(range(256)) * 8)


def _truncated_msh(path):
    write_gmsh22(block(), path)
    text = path.read_text()
    path.write_text(text[: len(text) // 2])


def _truncated_vtu(path):
    with contextlib.redirect_stderr(io.StringIO()):
        meshio.write(path, block())
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])


def _lines_only(path):
    m = meshio.Mesh(np.random.default_rng(0).random((4, 3)), [("line", np.array([[0, 1], [2, 3]]))])
    meshio.write(path, m)


def _surface_only(path):
    # A closed triangulated surface (tetrahedron skin): no volume cells, not planar.
    pts = np.array([(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1)], float)
    tris = np.array([[0, 2, 1], [0, 1, 3], [1, 2, 3], [0, 3, 2]])
    meshio.write(path, meshio.Mesh(pts, [("triangle", tris)]))


@pytest.mark.parametrize("name, make, message", [
    ("missing.msh", None, "mesh file not found"),
    ("mesh.xyz", lambda p: p.write_text("1 2 3\n"), "unknown mesh format '.xyz'"),
    ("garbage.vtu", _garbage, "meshio could not read the file"),
    ("garbage.msh", _garbage, "meshio could not read the file"),
    ("empty.msh", lambda p: p.write_bytes(b""), "meshio could not read the file"),
    ("truncated.msh", _truncated_msh, "meshio could not read the file"),
    ("truncated.vtu", _truncated_vtu, "meshio could not read the file"),
    ("lines.vtu", _lines_only, "no volume cells"),
    ("skin.vtu", _surface_only, "surface mesh"),
])
def test_bad_files_raise_mesh_read_error_naming_the_file(tmp_path, capfd, name, make, message):
    path = tmp_path / name
    if make is not None:
        make(path)
    capfd.readouterr()
    with pytest.raises(MeshReadError) as info:
        read_mesh(path)
    assert info.value.file == str(path)
    assert str(info.value).startswith(f"{path}: ")
    assert message in str(info.value)
    out, err = capfd.readouterr()
    assert out == "" and err == ""                     # meshio's own printing is swallowed


def test_bad_in_memory_meshes():
    pts = np.zeros((4, 3))
    with pytest.raises(MeshReadError, match="refer to point 9"):
        mesh_from_meshio(meshio.Mesh(pts, [("tetra", np.array([[0, 1, 2, 9]]))]), path="a.vtu")
    pts[2, 1] = np.nan
    with pytest.raises(MeshReadError, match="1 points have non-finite coordinates"):
        mesh_from_meshio(meshio.Mesh(pts, [("tetra", np.array([[0, 1, 2, 3]]))]))
    with pytest.raises(MeshReadError, match="VTK_LAGRANGE_HEXAHEDRON are not supported"):
        mesh_from_meshio(meshio.Mesh(np.zeros((8, 3)),
                                     [("VTK_LAGRANGE_HEXAHEDRON", np.arange(8)[None, :])]))


def test_directory_is_not_a_mesh(tmp_path):
    with pytest.raises(MeshReadError, match="folder that no mesh reader recognises"):
        read_mesh(tmp_path)


# -- choosing a reader ---------------------------------------------------------------------


def test_meshio_suffixes_are_meshios_own():
    import meshio

    from caselint.mesh.formats.meshio_files import SUFFIXES

    assert sorted(SUFFIXES) == sorted(meshio.extension_to_filetypes)


def test_a_reader_with_a_content_check_is_asked_first(tmp_path):
    from caselint.mesh.build import mesh_from_faces
    from caselint.mesh.formats import BUILTIN_READERS
    from caselint.mesh.readers import MeshReader, choose_reader

    def one_tet(path, options):
        pts = np.array([[0, 0, 0], [1, 0, 0], [0, 1, 0], [0, 0, 1]], float)
        faces = [[0, 2, 1], [0, 1, 3], [1, 2, 3], [0, 3, 2]]
        return mesh_from_faces(path=str(path), points=pts * options.scale_to_m, dim=3,
                               face_offsets=np.arange(0, 13, 3),
                               face_points=np.concatenate(faces), owner=np.zeros(4, int),
                               neighbour=np.full(4, -1))

    mine = MeshReader(name="tet-text", description="a test format", read=one_tet,
                      suffixes=(".msh",), accepts=lambda p: p.read_text().startswith("TET"))
    ours, other = tmp_path / "a.msh", tmp_path / "b.msh"
    ours.write_text("TET\n")
    other.write_text("$MeshFormat\n")
    readers = (*BUILTIN_READERS, mine)
    assert choose_reader(ours, readers) is mine
    assert choose_reader(other, readers).name == "meshio"
    mesh = read_mesh(ours, scale_to_m=2.0, readers=readers)
    assert mesh.cell_volumes[0] == pytest.approx(8 / 6)
    with pytest.raises(MeshReadError, match="no reader recognises the content"):
        choose_reader(ours, [MeshReader(name="never", description="x", read=one_tet,
                                        suffixes=(".msh",), accepts=lambda p: False)])
    with pytest.raises(ValueError, match="lower-case words"):
        MeshReader(name="Bad Name", description="x", read=one_tet, suffixes=(".x",))


def test_plugins_lists_the_mesh_readers():
    from caselint.engine.plugins import get_plugin_manager, plugin_listing

    rows = {r["name"]: r for r in plugin_listing(get_plugin_manager())}
    assert "meshio" in rows["caselint.engine.builtin_sets"]["mesh_readers"]
