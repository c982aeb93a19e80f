"""The face-based mesh folder reader (constant/polyMesh): layouts, checks, decomposed cases,
2-D cases, cell zones.

References: meshes written by ``tests/mesh_writers.py`` from the published structure of the
format (header dictionary, ASCII and binary lists, offsets + points face lists, processor
patches and addressing files) and read back array for array; closed-form volumes of the
blocks (a 4 m cube: 64 m^3); the 2-D case against the same quadrilaterals read as a 2-D
element file through meshio.
"""

from __future__ import annotations

import gzip
import json
import re
import shutil
from pathlib import Path

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh import read_mesh
from caselint.mesh.analysis import Mesh
from caselint.mesh.blocks import structured_hex, structured_quad
from caselint.mesh.formats.meshio_files import meshio_data
from caselint.mesh.refined import refined_block
from caselint.mesh.roles import default_roles, role_of_type
from mesh_writers import write_decomposed, write_face_folder

ARRAYS = ("points", "face_offsets", "face_points", "owner", "neighbour", "face_group")
LAYOUTS = {
    "ascii": {},
    "ascii-compact": {"compact": True},
    "binary": {"binary": True},
    "binary-64-bit-labels": {"binary": True, "labels": 64},
    "gzip-ascii": {"gz": True},
    "gzip-binary-64": {"binary": True, "labels": 64, "gz": True},
}


@pytest.fixture(scope="module")
def octree() -> Mesh:
    """4 x 4 x 4 cubes of 1 m, the middle 2 x 2 x 2 split 2:1 (hexahedra and polyhedra),
    in the face order of the folder format (patches one after another)."""
    axis = np.linspace(0.0, 4.0, 5)
    return Mesh(refined_block(axis, axis, axis, ((1, 3),) * 3))


@pytest.fixture(scope="module")
def folder_mesh(octree, tmp_path_factory) -> Mesh:
    """The octree block as read back from an ASCII folder: the reference numbering."""
    case = tmp_path_factory.mktemp("reference")
    write_face_folder(case / "constant" / "polyMesh", octree.data)
    return read_mesh(case)


def same_arrays(a: Mesh, b: Mesh) -> None:
    for name in ARRAYS:
        assert np.array_equal(getattr(a.data, name), getattr(b.data, name)), name
    assert a.group_names == b.group_names and a.n_cells == b.n_cells


@pytest.mark.parametrize("layout", sorted(LAYOUTS))
def test_every_layout_reads_the_same_mesh(folder_mesh, tmp_path, layout):
    write_face_folder(tmp_path / "constant" / "polyMesh", folder_mesh.data, **LAYOUTS[layout])
    mesh = read_mesh(tmp_path)
    same_arrays(mesh, folder_mesh)
    assert mesh.cell_volumes.sum() == pytest.approx(64.0, rel=1e-12)
    # 56 unsplit coarse cubes away from the refinement keep six faces, as do the 64 fine
    # cubes; coarse cubes touching the refined core have split faces (polyhedra)
    assert mesh.cell_counts == {"hexahedron": 72, "polyhedron": 48}


def test_32_bit_scalars_and_the_polymesh_folder_itself(folder_mesh, tmp_path):
    folder = write_face_folder(tmp_path / "constant" / "polyMesh", folder_mesh.data,
                               binary=True, scalars=32)
    mesh = read_mesh(folder)
    assert mesh.path == str(folder)
    # the coordinates are whole metres and halves: exact in single precision
    same_arrays(mesh, folder_mesh)


def test_matches_the_mesh_it_was_written_from(octree, folder_mesh):
    # the folder lists boundary faces patch after patch; the block interleaves them
    assert folder_mesh.n_faces == octree.n_faces and folder_mesh.n_cells == octree.n_cells
    np.testing.assert_allclose(folder_mesh.cell_volumes, octree.cell_volumes, rtol=1e-13)
    for name in octree.group_names:
        assert len(folder_mesh.group_faces(name)) == len(octree.group_faces(name))


def test_shapes_found_equal_the_known_hexahedra(octree, folder_mesh):
    (known,), (found,) = octree.data.shapes, folder_mesh.data.shapes
    assert found.type == known.type == "hexahedron"
    assert np.array_equal(found.cells, known.cells)
    # the same cube, possibly from another corner: the same node set per cell
    assert np.array_equal(np.sort(found.connectivity, axis=1), np.sort(known.connectivity, axis=1))


def test_gzip_beside_plain_files(folder_mesh, tmp_path):
    folder = write_face_folder(tmp_path / "p", folder_mesh.data)
    for name in ("faces", "owner"):
        raw = (folder / name).read_bytes()
        (folder / f"{name}.gz").write_bytes(gzip.compress(raw))
        (folder / name).unlink()
    same_arrays(read_mesh(folder), folder_mesh)


def test_patch_types_and_default_roles(folder_mesh, tmp_path):
    types = {"xmin": "patch", "xmax": "patch", "ymin": "wall", "ymax": "symmetryPlane",
             "zmin": "cyclicAMI", "zmax": "wall"}
    mesh = read_mesh(write_face_folder(tmp_path / "p", folder_mesh.data, patch_types=types))
    assert mesh.data.group_types == types
    assert default_roles(mesh.data.group_types) == {
        "ymin": "wall", "ymax": "symmetry", "zmin": "periodic", "zmax": "wall"}
    assert role_of_type("patch") is None and role_of_type("cyclicSlip") == "periodic"


def test_cell_zones(folder_mesh, tmp_path):
    centres = folder_mesh.cell_centroids
    heater = np.flatnonzero(centres[:, 2] < 1.0)
    fins = np.flatnonzero(centres[:, 2] > 3.0)
    mesh = read_mesh(write_face_folder(tmp_path / "p", folder_mesh.data, binary=True,
                                       zones={"heater": heater, "fins": fins}))
    assert mesh.data.zone_names == ("heater", "fins")
    assert np.array_equal(np.flatnonzero(mesh.data.cell_zone == 0), heater)
    assert np.array_equal(np.flatnonzero(mesh.data.cell_zone == 1), fins)
    assert np.count_nonzero(mesh.data.cell_zone == -1) == mesh.n_cells - len(heater) - len(fins)
    with pytest.raises(MeshReadError, match=r"cell \d+ is in two cell zones: 'heater' and 'all'"):
        read_mesh(write_face_folder(tmp_path / "q", folder_mesh.data,
                                    zones={"heater": heater, "all": np.arange(mesh.n_cells)}))


# -- decomposed cases ------------------------------------------------------------------------


def _parts(mesh: Mesh) -> np.ndarray:
    """Four parts by quadrant of the cell centres in x and y."""
    c = mesh.cell_centroids
    return (c[:, 0] > 2.0).astype(int) + 2 * (c[:, 1] > 2.5).astype(int)


@pytest.mark.parametrize("options", [{}, {"binary": True, "gz": True, "labels": 64}])
def test_decomposed_with_addressing_is_the_undecomposed_mesh(folder_mesh, tmp_path, options):
    write_decomposed(tmp_path, folder_mesh.data, _parts(folder_mesh), **options)
    assert sorted(p.name for p in tmp_path.iterdir()) == [f"processor{i}" for i in range(4)]
    mesh = read_mesh(tmp_path)
    same_arrays(mesh, folder_mesh)
    assert mesh.data.notes == ()        # exactly the undecomposed mesh: nothing to say


def test_decomposed_without_addressing_gives_the_same_mesh_renumbered(folder_mesh, tmp_path):
    write_decomposed(tmp_path, folder_mesh.data, _parts(folder_mesh), addressing=False)
    mesh = read_mesh(tmp_path)
    assert (mesh.n_cells, mesh.n_faces, mesh.n_points, mesh.n_internal) == (
        folder_mesh.n_cells, folder_mesh.n_faces, folder_mesh.n_points, folder_mesh.n_internal)
    assert mesh.cell_volumes.sum() == pytest.approx(64.0, rel=1e-12)
    np.testing.assert_allclose(np.sort(mesh.cell_volumes), np.sort(folder_mesh.cell_volumes))
    for name in folder_mesh.group_names:
        assert len(mesh.group_faces(name)) == len(folder_mesh.group_faces(name))
    # the same points, in another order
    assert np.array_equal(np.unique(mesh.points, axis=0), np.unique(folder_mesh.points, axis=0))
    assert mesh.cell_counts == folder_mesh.cell_counts


def test_unequal_processor_patches_are_refused(folder_mesh, tmp_path):
    write_decomposed(tmp_path, folder_mesh.data, _parts(folder_mesh), addressing=False)
    boundary = tmp_path / "processor0" / "constant" / "polyMesh" / "boundary"
    # processor0's patch towards processor1 now claims to border processor3 instead
    boundary.write_text(boundary.read_text().replace("neighbProcNo    1;", "neighbProcNo    3;"))
    with pytest.raises(MeshReadError, match=r"processor\d has \d+ faces towards processor\d"):
        read_mesh(tmp_path)


CASE = """\
caselint: 1
case: {{name: decomposed-room, safety: none}}
mesh:
  file: {mesh}
  boundaries: {{xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall, zmax: wall}}
physics:
  fluid: {{density: 1.2 kg/m^3, viscosity: 1.8e-5 Pa*s}}
  flow: {{kind: internal, velocity: 1 m/s, length: 4 m}}
regions:
  - {{name: core, zone: core, max_cell_size: 0.5 m}}
"""


def test_decomposed_and_undecomposed_reports_are_byte_identical(folder_mesh, tmp_path):
    """`caselint check --format json`: the same bytes, but for the mesh fingerprint, which
    covers the files read (they differ)."""
    from caselint.cli import main

    core = np.flatnonzero(np.all(np.abs(folder_mesh.cell_centroids - 2.0) < 1.0, axis=1))
    reports = []
    for kind in ("whole", "split"):
        case = tmp_path / kind
        if kind == "whole":
            write_face_folder(case / "constant" / "polyMesh", folder_mesh.data,
                              zones={"core": core})
        else:
            data = read_mesh(tmp_path / "whole").data
            write_decomposed(case, data, _parts(folder_mesh))
        (case / "case.yaml").write_text(CASE.format(mesh="."))
        out = case / "report.json"
        code = main(["check", str(case / "case.yaml"), "--format", "json", "--output", str(out)])
        assert code in (0, 1)
        reports.append(json.loads(out.read_text()))
    whole, split = reports
    assert whole["cases"][0]["mesh_sha256"] != split["cases"][0]["mesh_sha256"]
    for report in reports:
        for case in report["cases"]:
            case["mesh_sha256"] = ""
            case["case"] = case["case"].replace("split", "whole")
    assert json.dumps(whole, sort_keys=True) == json.dumps(split, sort_keys=True)
    checks = {c["rule"]: c for c in whole["cases"][0]["checks"]}
    # the zone holds the 64 fine cubes of 0.5 m, not the coarse ones around them
    assert (checks["region-cell-size"]["measured"], checks["region-cell-size"]["outcome"]) == (
        0.5, "pass")


# -- multi-region and 2-D cases --------------------------------------------------------------


def test_multi_region_case_needs_a_region(folder_mesh, tmp_path):
    for region in ("fluid", "solid"):
        write_face_folder(tmp_path / "constant" / region / "polyMesh", folder_mesh.data)
    with pytest.raises(MeshReadError, match=r"holds the meshes of 2 regions \(fluid, solid\)"):
        read_mesh(tmp_path)
    assert read_mesh(tmp_path, zone="solid").n_cells == folder_mesh.n_cells
    with pytest.raises(MeshReadError, match="has no region 'air'"):
        read_mesh(tmp_path, zone="air")


def _slab(front_back: tuple[int, int] = (4, 5)):
    """3 x 2 quadrilaterals extruded one cell (0.1 m) in z; zmin/zmax empty patches."""
    xs, ys = np.array([0.0, 0.5, 1.5, 3.0]), np.array([0.0, 0.4, 1.0])
    data = meshio_data(structured_hex(xs, ys, [0.0, 0.1]))
    return data, xs, ys


def test_two_d_case_is_read_as_a_planar_mesh(tmp_path):
    data, xs, ys = _slab()
    types = {"zmin": "empty", "zmax": "empty", "ymin": "wall", "ymax": "wall"}
    mesh = read_mesh(write_face_folder(tmp_path / "p", data, patch_types=types))
    flat = Mesh(meshio_data(structured_quad(xs, ys)))
    assert (mesh.dim, mesh.n_cells, mesh.n_points, mesh.n_faces) == (2, 6, 12, 17)
    assert mesh.cell_counts == {"quad": 6}
    assert mesh.group_names == ("xmax", "xmin", "ymax", "ymin", "zmax", "zmin")
    assert len(mesh.group_faces("zmin")) == 0 and len(mesh.group_faces("ymin")) == 3
    np.testing.assert_allclose(np.sort(mesh.cell_volumes), np.sort(flat.cell_volumes))
    assert mesh.cell_volumes.sum() == pytest.approx(3.0)
    assert np.all(mesh.points[:, 2] == 0.0)
    from caselint.mesh import quality

    np.testing.assert_allclose(np.sort(quality.scaled_jacobian(mesh)),
                               np.sort(quality.scaled_jacobian(flat)))
    np.testing.assert_allclose(np.sort(quality.non_orthogonality_deg(mesh)),
                               np.sort(quality.non_orthogonality_deg(flat)), atol=1e-9)
    assert "read as a 2-D mesh" in mesh.data.notes[0]


def test_empty_patches_not_normal_to_z_stay_three_d(tmp_path):
    data, _, _ = _slab()
    types = {"xmin": "empty", "xmax": "empty"}
    mesh = read_mesh(write_face_folder(tmp_path / "p", data, patch_types=types))
    assert mesh.dim == 3 and mesh.cell_counts == {"hexahedron": 6}
    assert "not all normal to z" in mesh.data.notes[0]


# -- damaged files: exit 2 naming the file and what is wrong --------------------------------


def _damaged(folder_mesh, tmp_path, name, change, **options) -> str:
    folder = write_face_folder(tmp_path / "p", folder_mesh.data, **options)
    path = folder / name
    path.write_bytes(change(path.read_bytes()))
    with pytest.raises(MeshReadError) as err:
        read_mesh(folder)
    assert str(path) in str(err.value)
    return err.value.message


@pytest.mark.parametrize("name,change,options,expected", [
    ("points", lambda b: b[:len(b) // 2], {}, "declares 223 points but holds"),
    ("points", lambda b: b[:len(b) // 2], {"binary": True},
     "the points list declares 223 items but the file ends after"),
    ("faces", lambda b: b[:-300], {}, "the faces list declares 444 faces but holds 422"),
    ("faces", lambda b: b.replace(b"4(", b"5(", 1), {}, "does not hold the number of points"),
    ("owner", lambda b: b[:-60], {"binary": True}, "owner list declares"),
    ("neighbour", lambda b: b.replace(b"\n21\n", b"\nseven\n", 1), {},
     "holds text that is not a number"),
    ("owner", lambda b: b.replace(b"nCells:120", b"nCells:121"), {},
     "declares nCells 121 but the mesh files hold 120"),
    ("boundary", lambda b: b.replace(b"startFace       396", b"startFace       397"), {},
     "starts at face 397, expected 396"),
    ("faces", lambda b: b.replace(b'arch        "LSB;label=32;scalar=64";\n', b""),
     {"binary": True}, "without an 'arch' entry"),
    ("points.gz", lambda b: b[:len(b) // 2], {"gz": True}, "damaged or truncated gzip data"),
    # a deflate block garbled, a checksum that does not match the data, not gzip at all
    ("points.gz", lambda b: b[:40] + bytes(x ^ 0x5A for x in b[40:200]) + b[200:],
     {"gz": True}, "damaged or truncated gzip data"),
    ("points.gz", lambda b: b[:-8] + bytes(x ^ 1 for x in b[-8:-4]) + b[-4:], {"gz": True},
     "damaged or truncated gzip data (CRC check failed"),
    ("points.gz", lambda b: b"plain text, not gzip" + b, {"gz": True},
     "damaged or truncated gzip data (Not a gzipped file"),
])
def test_damaged_files_name_the_problem(folder_mesh, tmp_path, name, change, options, expected):
    assert expected in _damaged(folder_mesh, tmp_path, name, change, **options)


def test_face_point_out_of_range(folder_mesh, tmp_path):
    message = _damaged(folder_mesh, tmp_path, "faces",
                       lambda b: re.sub(rb"\n4\((\d+) ", b"\n4(999 ", b, count=1))
    assert "a face refers to point 999; points holds 223 points" in message


def test_missing_file_and_cli_exit_code(folder_mesh, tmp_path, capsys):
    from caselint.cli import main

    folder = write_face_folder(tmp_path / "p", folder_mesh.data)
    (folder / "neighbour").unlink()
    assert main(["mesh", str(folder)]) == 2
    # a folder with neither the files nor a case layout: no reader takes it
    shutil.rmtree(folder)
    folder.mkdir()
    assert main(["mesh", str(folder)]) == 2
    err = capsys.readouterr().err
    assert "is a folder that no mesh reader recognises" in err


def test_memory_estimate_refuses_before_reading(folder_mesh, tmp_path, monkeypatch):
    folder = write_face_folder(tmp_path / "p", folder_mesh.data)
    owner = folder / "owner"
    owner.write_bytes(owner.read_bytes().replace(b"nCells:120", b"nCells:90000000"))
    monkeypatch.setenv("CASELINT_MEMORY_LIMIT", "2GB")
    with pytest.raises(MeshReadError, match="counted from the mesh files' headers"):
        read_mesh(folder)
