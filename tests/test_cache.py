"""The mesh as plain arrays, the on-disk mesh cache and the batch's mesh store."""

from __future__ import annotations

import io
import os

import numpy as np
import pytest

import caselint.mesh
from caselint import cache as cache_mod
from caselint.cache import MeshCache, MeshStore, mesh_key
from caselint.cachedir import default_cache_dir
from caselint.mesh import Mesh, mesh_from_meshio, quality
from caselint.mesh.arrays import mesh_from_arrays, mesh_to_arrays
from caselint.mesh.blocks import shuffled, structured_hex, structured_quad, write_gmsh22
from near_wall_meshes import geometric, prism_block


def _npz_round_trip(mesh: Mesh) -> Mesh:
    buffer = io.BytesIO()
    np.savez(buffer, **mesh_to_arrays(mesh))
    buffer.seek(0)
    with np.load(buffer, allow_pickle=False) as arrays:   # no pickle: arrays only
        return mesh_from_arrays(arrays, path="elsewhere.msh")


@pytest.mark.parametrize("raw", [
    shuffled(prism_block(geometric(1e-3, 1.2, 3), [0.02]), seed=2),
    structured_quad(np.linspace(0, 1, 5), np.linspace(0, 2, 4)),
], ids=["prism-tet", "2-D quads"])
def test_arrays_round_trip_keeps_topology_geometry_and_metrics(raw):
    raw.point_data["speed"] = np.arange(len(raw.points), dtype=np.float64)
    raw.cell_data = {"zone": [np.arange(len(b.data)) % 3 for b in raw.cells]}
    mesh = mesh_from_meshio(raw)
    mesh.cell_volumes  # noqa: B018 - the geometry goes into the arrays
    back = _npz_round_trip(mesh)
    assert back.path == "elsewhere.msh" and back.dim == mesh.dim
    assert back.group_names == mesh.group_names and back.notes == mesh.notes
    assert back.has("geometry")                                      # not recomputed
    for name in ("face_offsets", "face_points", "owner", "neighbour", "face_group",
                 "face_area_vectors", "face_centroids", "cell_volumes", "cell_centroids",
                 "points", "cell_shape", "nonmanifold_faces", "clashing_faces"):
        np.testing.assert_array_equal(getattr(back, name), getattr(mesh, name), err_msg=name)
    np.testing.assert_array_equal(back.geometry.apex, mesh.geometry.apex)
    np.testing.assert_array_equal(back.cell_face_table(), mesh.cell_face_table())
    for metric in (quality.non_orthogonality_deg, quality.skewness, quality.scaled_jacobian,
                   quality.edge_ratio, quality.growth_ratio):
        np.testing.assert_array_equal(metric(back), metric(mesh))
    assert back.unmatched_group_elements == mesh.unmatched_group_elements
    np.testing.assert_array_equal(back.point_data["speed"], mesh.point_data["speed"])
    np.testing.assert_array_equal(back.cell_data["zone"], mesh.cell_data["zone"])


def test_arrays_of_an_unanalysed_mesh_hold_no_geometry():
    mesh = mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 3),) * 3))
    arrays = mesh_to_arrays(mesh)
    assert not any(k.startswith("geometry_") for k in arrays)
    assert all(a.dtype != object for a in arrays.values())
    back = mesh_from_arrays(arrays)
    assert not back.has("geometry")
    np.testing.assert_array_equal(back.cell_volumes, mesh.cell_volumes)


def test_arrays_of_another_format_are_refused():
    arrays = mesh_to_arrays(mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 3),) * 3)))
    with pytest.raises(ValueError, match="format"):
        mesh_from_arrays({**arrays, "format": np.array(99)})
    del arrays["points"]
    with pytest.raises(ValueError, match="points"):
        mesh_from_arrays(arrays)


def test_key_follows_content_and_read_settings():
    base = mesh_key("ab" * 32, 1.0, None, None)
    assert base == mesh_key("ab" * 32, 1.0, None, {})
    others = {mesh_key("cd" * 32, 1.0, None, None), mesh_key("ab" * 32, 1e-3, None, None),
              mesh_key("ab" * 32, 1.0, "tag", None), mesh_key("ab" * 32, 1.0, "tag", {1: "a"})}
    assert base not in others and len(others) == 4


def test_cache_folder_from_environment(monkeypatch, tmp_path):
    monkeypatch.setenv("CASELINT_CACHE_DIR", str(tmp_path / "c"))
    assert default_cache_dir() == tmp_path / "c"
    monkeypatch.delenv("CASELINT_CACHE_DIR")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "x"))
    assert default_cache_dir() == tmp_path / "x" / "caselint"


def test_store_then_load_and_damaged_entries_are_rebuilt(tmp_path):
    cache = MeshCache(tmp_path, min_cells=0)
    mesh = mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 4),) * 3))
    mesh.cell_volumes  # noqa: B018
    assert cache.store("k1", mesh)
    assert [p.name for p in tmp_path.iterdir()] == ["mesh-k1.npz"]     # no temporary left
    back = cache.load("k1", "here.msh")
    assert back.path == "here.msh"
    np.testing.assert_array_equal(back.cell_volumes, mesh.cell_volumes)
    assert cache.load("missing", "x") is None
    entry = cache.entry("k1")
    entry.write_bytes(entry.read_bytes()[: entry.stat().st_size // 2])   # a partial write
    assert cache.load("k1", "here.msh") is None
    assert not entry.exists()                                            # removed, rebuilt later


def test_small_meshes_are_not_cached_and_the_folder_is_trimmed(tmp_path):
    mesh = mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 4),) * 3))
    assert not MeshCache(tmp_path, min_cells=10**6).store("small", mesh)
    cache = MeshCache(tmp_path, min_cells=0)
    cache.store("old", mesh)
    size = cache.entry("old").stat().st_size
    os.utime(cache.entry("old"), (1, 1))
    cache.max_bytes = int(1.5 * size)
    cache.store("new", mesh)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mesh-new.npz"]


def test_store_reads_each_mesh_once_and_the_cache_skips_the_read(tmp_path, monkeypatch):
    path = tmp_path / "block.msh"
    write_gmsh22(structured_hex(*(np.linspace(0, 1, 5),) * 3), path, binary=True)
    reads = []
    real = caselint.mesh.read_mesh

    def counting(*args, **kwargs):
        reads.append(args[0])
        return real(*args, **kwargs)

    monkeypatch.setattr(caselint.mesh, "read_mesh", counting)
    cache = MeshCache(tmp_path / "cache", min_cells=0)
    store = MeshStore(cache)
    first = store.read(path, scale_to_m=1.0)
    assert store.read(path, scale_to_m=1.0) is first and len(reads) == 1
    assert store.read(path, scale_to_m=1e-3) is not first and len(reads) == 2
    first.cell_volumes  # noqa: B018 - analysed before it is saved
    store.save()
    assert len(list((tmp_path / "cache").glob("mesh-*.npz"))) == 2
    again = MeshStore(cache).read(path, scale_to_m=1.0)
    assert len(reads) == 2                                       # taken from the cache
    assert again.has("geometry")
    np.testing.assert_array_equal(again.face_points, first.face_points)


def test_unwritable_cache_folder_leaves_the_run_alone(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    mesh = mesh_from_meshio(structured_hex(*(np.linspace(0, 1, 3),) * 3))
    assert not MeshCache(blocker / "sub", min_cells=0).store("k", mesh)


def test_default_minimum_size_is_read_when_the_cache_is_made(monkeypatch, tmp_path):
    monkeypatch.setattr(cache_mod, "MIN_CELLS", 5)
    assert MeshCache(tmp_path).min_cells == 5


def test_changed_mesh_code_misses_the_cache(tmp_path, monkeypatch):
    """A formula changed without a version bump must not be served old geometry."""
    import shutil

    from caselint.mesh import fingerprint

    copy = tmp_path / "mesh_code"
    shutil.copytree(fingerprint.MESH_PACKAGE, copy, ignore=shutil.ignore_patterns("__pycache__"))
    before = fingerprint.code_fingerprint(copy)
    assert fingerprint.code_fingerprint(copy) == before              # stable
    geometry = copy / "geometry.py"
    text = geometry.read_text()
    assert "frac = dim / (dim + 1.0)" in text
    geometry.write_text(text.replace("frac = dim / (dim + 1.0)", "frac = dim / (dim + 2.0)"))
    fingerprint.code_fingerprint.cache_clear()
    assert fingerprint.code_fingerprint(copy) != before

    # end to end: an entry written under the old code is not read under the new one
    path = tmp_path / "block.msh"
    write_gmsh22(structured_hex(*(np.linspace(0, 1, 3),) * 3), path, binary=True)
    cache = MeshCache(tmp_path / "cache", min_cells=0)
    store = MeshStore(cache)
    store.read(path).cell_volumes  # noqa: B018
    store.save()
    reads = []
    real = caselint.mesh.read_mesh
    monkeypatch.setattr(caselint.mesh, "read_mesh",
                        lambda *a, **k: reads.append(a[0]) or real(*a, **k))
    MeshStore(cache).read(path)
    assert reads == []                                            # same code: a hit
    monkeypatch.setattr(fingerprint, "code_fingerprint", lambda root=None: "changed")
    MeshStore(cache).read(path)
    assert reads == [path]                                        # new code: read again
