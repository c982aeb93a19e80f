"""Resource limits: the memory a check needs is estimated before the work, and a mesh over
the limit is refused with a clear message (exit 2) instead of being killed by the system.

The per-cell constants come from benchmarks/memory_per_cell.py (see caselint/mesh/limits.py);
these tests check the arithmetic, the sources of the limit, the header counts of each
format against the files' real contents, and that the refusal comes before meshio reads
the file (header) or before topology is built (cell counts).
"""

from __future__ import annotations

import os

import meshio
import numpy as np
import pytest

import caselint.mesh.limits as limits
from caselint.errors import MeshReadError, UsageError
from caselint.mesh import read_mesh
from caselint.mesh.blocks import structured_hex, write_gmsh22
from test_cli import run_cli
from test_cli_e2e import write_block_mesh, write_case
from test_mesh_reader import GMSH_BOX_41


@pytest.fixture(autouse=True)
def _no_limit_from_outside(monkeypatch):
    monkeypatch.delenv(limits.ENV_LIMIT, raising=False)


@pytest.mark.parametrize("text, size", [
    ("8GB", 8_000_000_000), ("8 gb", 8_000_000_000), ("8GiB", 8 * 2**30),
    ("512MiB", 512 * 2**20), ("1.5G", 1_500_000_000), ("2e9", 2_000_000_000),
    ("100000", 100_000), ("64 kB", 64_000), ("off", None), ("0", None), ("none", None),
    (" Unlimited ", None),
])
def test_sizes(text, size):
    assert limits.parse_size(text) == size


@pytest.mark.parametrize("text", ["lots", "-1GB", "8 XB", "", "1e400", "0.1"])
def test_bad_sizes_are_usage_errors_naming_the_setting(text):
    with pytest.raises(UsageError, match="--memory-limit: expected a size"):
        limits.parse_size(text, "--memory-limit")


def test_estimate_is_the_measured_cost_per_cell_plus_the_fixed_part():
    per_hex, per_tet = limits.BYTES_PER_CELL["hexahedron"], limits.BYTES_PER_CELL["tetra"]
    fixed = limits.FIXED_BYTES
    assert limits.estimate_bytes({"hexahedron": 1_000_000}) == fixed + 1_000_000 * per_hex
    # higher-order cells count as their corners' type; boundary quads of a volume mesh are few
    assert limits.estimate_bytes({"tetra10": 10, "quad": 4}) == \
        fixed + 10 * per_tet + 4 * limits.BOUNDARY_ELEMENT_BYTES
    # a 2-D mesh's quads are its cells: charged as hexahedra (upper bound)
    assert limits.estimate_bytes({"quad": 4, "line": 2}, volume=False) == \
        fixed + 6 * limits.OTHER_CELL_BYTES
    # the measured 898 B per hexahedron, rounded up about 10 %
    assert 898 < per_hex <= 1.15 * 898 and 600 < per_tet <= 1.15 * 600


def test_limit_is_the_size_given_else_a_share_of_the_available_memory(monkeypatch):
    monkeypatch.setattr(limits, "available_memory", lambda: 8_000_000_000)
    assert limits.memory_limit() == (6_800_000_000, "85% of the 8 GB available")
    assert limits.memory_limit("2GB") == (2_000_000_000, "set by --memory-limit")
    assert limits.memory_limit("off", limits.ENV_LIMIT) == (None, f"set by {limits.ENV_LIMIT}")
    # the library never reads the environment: the command line passes the variable on
    monkeypatch.setenv(limits.ENV_LIMIT, "2GB")
    assert limits.memory_limit() == (6_800_000_000, "85% of the 8 GB available")
    monkeypatch.setattr(limits, "available_memory", lambda: None)
    assert limits.memory_limit() == (None, "unknown")


def test_available_memory_is_read_from_the_system():
    available = limits.available_memory()
    if not os.path.exists("/proc/meminfo"):
        pytest.skip("no /proc/meminfo")
    total = next(int(line.split()[1]) * 1024 for line in open("/proc/meminfo")
                 if line.startswith("MemTotal:"))
    assert 0 < available <= total


def test_the_limit_is_passed_to_the_reader_explicitly(tmp_path):
    write_gmsh22(structured_hex([0.0, 1.0], [0.0, 1.0], [0.0, 1.0]), tmp_path / "one.msh")
    with pytest.raises(MeshReadError, match=r"the limit is 100 MB \(set by --memory-limit\)"):
        read_mesh(tmp_path / "one.msh", memory_limit=limits.memory_limit("100MB"))
    assert read_mesh(tmp_path / "one.msh", memory_limit=(None, "off")).n_cells == 1
    with pytest.raises(UsageError, match="--memory-limit"):
        limits.memory_limit("many")


@pytest.fixture
def case(tmp_path):
    mesh = write_block_mesh(tmp_path / "duct.msh", xs=[0.0, 0.1, 0.2, 0.3])   # 12 hexahedra
    return write_case(tmp_path, mesh)


def test_check_refuses_a_mesh_over_the_limit_with_a_clear_message(case, monkeypatch):
    import caselint.mesh.build as build

    def never(*args, **kwargs):
        raise AssertionError("faces were built before the memory check")

    monkeypatch.setattr(build, "pair_faces", never)
    code, out, err = run_cli("check", str(case), "--memory-limit", "100MB")
    assert (code, out) == (2, "")
    # 12 hexahedra and 32 boundary quads: 100 MB fixed + 12 x 900 B + 32 x 200 B
    need = limits.FIXED_BYTES + 12 * 900 + 32 * 200
    assert need == 100_017_200
    assert err.startswith(f"caselint: error: {case}:4: [mesh.file] cannot read the mesh: ")
    assert "checking this mesh needs about 100.017 MB of memory (44 cells, counted from the " \
           "cells read); the limit is 100 MB (set by --memory-limit" in err
    assert "Raise it with --memory-limit 120MB" in err
    assert limits.ENV_LIMIT not in os.environ


def test_environment_limit_and_off(case, monkeypatch):
    monkeypatch.setenv(limits.ENV_LIMIT, "50MB")
    code, _, err = run_cli("check", str(case))
    assert code == 2 and "the limit is 50 MB" in err
    code, _, err = run_cli("check", str(case), "--memory-limit", "off")
    assert code in (0, 1) and err == ""                     # the option wins over the variable
    assert os.environ[limits.ENV_LIMIT] == "50MB"


def test_bad_option_is_a_usage_error(case):
    code, _, err = run_cli("check", str(case), "--memory-limit", "plenty")
    assert code == 2
    assert err == "caselint: error: --memory-limit: expected a size such as 8GB, 512MiB or " \
                  "'off', got 'plenty'\n"


def _files(tmp_path):
    """The same 2-hexahedron block in each format with a header count, and its true count."""
    m = structured_hex([0.0, 1.0, 2.0], [0.0, 1.0], [0.0, 1.0])     # 2 hexahedra, 10 quads
    out = {}
    for name, binary in (("ascii22.msh", False), ("binary22.msh", True)):
        write_gmsh22(m, tmp_path / name, binary=binary)
        out[name] = 12
    meshio.write(tmp_path / "block.vtu", meshio.Mesh(m.points, m.cells))
    out["block.vtu"] = 12
    for name, binary in (("ascii41.msh", False), ("binary41.msh", True)):
        meshio.write(tmp_path / name, meshio.Mesh(m.points, [m.cells[0]]), file_format="gmsh",
                     binary=binary)
        out[name] = 2
    (tmp_path / "gmsh41.msh").write_text(GMSH_BOX_41)       # written by gmsh itself
    out["gmsh41.msh"] = 20                                  # its "$Elements" says 7 blocks, 20
    return out


def test_header_counts_match_the_files(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "HEADER_CHECK_MIN_BYTES", 0)
    for name, count in _files(tmp_path).items():
        assert limits.header_cell_count(str(tmp_path / name)) == count, name
    # cross-check with what meshio reads
    m = meshio.read(tmp_path / "binary22.msh")
    assert sum(len(b.data) for b in m.cells) == 12
    (tmp_path / "other.xdmf").write_text("<Xdmf/>")
    assert limits.header_cell_count(str(tmp_path / "other.xdmf")) is None


def test_header_refusal_comes_before_meshio_reads(tmp_path, monkeypatch):
    monkeypatch.setattr(limits, "HEADER_CHECK_MIN_BYTES", 0)

    def never(*args, **kwargs):
        raise AssertionError("meshio read a file the header said was too large")

    monkeypatch.setattr(meshio, "read", never)
    limit = limits.memory_limit(str(limits.FIXED_BYTES + 100))
    for name, count in _files(tmp_path).items():
        with pytest.raises(MeshReadError) as info:
            read_mesh(tmp_path / name, memory_limit=limit)
        assert f"({count} cells, counted from the file header)" in str(info.value), name


def test_small_files_skip_the_header_scan(tmp_path):
    write_gmsh22(structured_hex([0.0, 1.0], [0.0, 1.0], [0.0, 1.0]), tmp_path / "small.msh")
    assert limits.header_cell_count(str(tmp_path / "small.msh")) is None
    assert np.isclose(read_mesh(tmp_path / "small.msh").cell_volumes.sum(), 1.0)


def _face_folder(folder, data):
    from mesh_writers import write_face_folder

    return write_face_folder(folder / "constant" / "polyMesh", data).parent.parent


def _decomposed(folder, data):
    from caselint.mesh.analysis import Mesh
    from mesh_writers import write_decomposed

    return write_decomposed(folder, data, (Mesh(data).cell_centroids[:, 0] > 0.5).astype(int))


def _vtu_polyhedra(folder, data):
    from vtk_writers import write_vtu_22_polyhedra

    return write_vtu_22_polyhedra(folder / "cells.vtu", data)


def _legacy_vtk(folder, data):
    import vtk

    from vtk_writers import vtk_polyhedral_grid

    writer = vtk.vtkUnstructuredGridWriter()
    writer.SetFileName(str(folder / "cells.vtk"))
    writer.SetInputData(vtk_polyhedral_grid(data))
    assert writer.Write() == 1
    return folder / "cells.vtk"


@pytest.mark.parametrize("write", [_face_folder, _decomposed, _vtu_polyhedra, _legacy_vtk])
def test_every_face_based_reader_obeys_the_limit_it_is_given(tmp_path, write):
    """The face-folder (whole and decomposed), polyhedral VTU and legacy VTK readers refuse
    a mesh over the limit passed to them, not the default share of the machine's memory."""
    from caselint.mesh.refined import refined_block

    axis = np.linspace(0.0, 1.0, 5)
    data = refined_block(axis, axis, axis, ((0.2, 0.6),) * 3)
    path = write(tmp_path, data)
    small = limits.memory_limit(str(limits.FIXED_BYTES + 100))
    with pytest.raises(MeshReadError, match=r"the limit is .* \(set by --memory-limit\)") as err:
        read_mesh(path, memory_limit=small)
    if write is not _legacy_vtk:       # counted from the cells read, named as they are
        assert f"({data.n_cells:,} cells, counted from" in str(err.value)
    assert read_mesh(path, memory_limit=(None, "off")).n_cells == data.n_cells
