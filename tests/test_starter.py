"""Starter case files: roles guessed from group names, loadable output, never an overwrite."""

from __future__ import annotations

import meshio
import numpy as np
import pytest

from caselint.errors import MeshReadError, UsageError
from caselint.manifest.loader import load_case
from caselint.manifest.starter import guess_role, write_starter
from caselint.mesh.blocks import structured_hex, write_gmsh22

NAMES = ("Supply-Duct", "exhaust_2", "symmetry-mid", "farfield", "wall 1", "yes")
EXPECTED = {"Supply-Duct": "inlet", "exhaust_2": "outlet", "symmetry-mid": "symmetry",
            "farfield": "open", "wall 1": "wall", "yes": "wall"}


@pytest.mark.parametrize("name, role", [
    ("inlet", "inlet"), ("air-supply", "inlet"), ("INTAKE_1", "inlet"),
    ("inflow", "inlet"), ("duct-entry", "inlet"), ("outflow", "outlet"), ("exit_2", "outlet"),
    ("outlet", "outlet"), ("fan-exhaust", "outlet"), ("return-grille", "outlet"),
    ("extract", "outlet"), ("sym-plane", "symmetry"), ("periodic-left", "periodic"),
    ("cyclic_a", "periodic"), ("open-top", "open"), ("far-field", "open"),
    ("atmosphere", "open"), ("slip-top", "slip-wall"), ("inviscid-side", "slip-wall"),
    ("interface-rotor", "interface"), ("interior-3", "interface"),
    ("floor", "wall"), ("loading-door", "wall"),
])
def test_guess_role(name, role):
    assert guess_role(name) == role


@pytest.fixture
def mesh_file(tmp_path):
    path = tmp_path / "meshes" / "duct.msh"
    path.parent.mkdir()
    write_gmsh22(structured_hex(np.arange(4.0), np.arange(3.0), np.arange(3.0), names=NAMES), path)
    return path


def test_default_target_is_case_yaml_beside_the_mesh_and_loads(mesh_file):
    written = write_starter(mesh_file)
    assert written == mesh_file.parent / "case.yaml"
    text = written.read_text(encoding="utf-8")
    assert "file: duct.msh" in text
    assert '"wall 1":' in text and '"yes":' in text            # quoted where YAML needs it
    assert "The mesh spans 3 x 2 x 2 in its own coordinates" in text
    case = load_case(written)
    assert case.mesh.file == mesh_file.resolve()
    assert case.mesh.boundaries == EXPECTED
    assert case.info.name == "duct"
    assert case.time.mode == "steady" and case.checks.rule_sets == ("general",)


def test_face_counts_are_written_beside_each_group(mesh_file):
    text = write_starter(mesh_file).read_text(encoding="utf-8")
    # structured_hex sides: x sides 2 x 2 faces, y sides 3 x 2, z sides 3 x 2
    assert "Supply-Duct:" in text and "inlet      # 4 faces" in text
    assert "farfield:" in text and "open       # 6 faces" in text


def test_mesh_path_is_relative_to_the_output(mesh_file, tmp_path):
    out = tmp_path / "cases" / "run1" / "case.yaml"
    written = write_starter(mesh_file, out)
    assert written == out.resolve()
    assert "file: ../../meshes/duct.msh" in out.read_text(encoding="utf-8")
    assert load_case(out).mesh.file == mesh_file.resolve()


def test_never_overwrites(mesh_file):
    target = mesh_file.parent / "case.yaml"
    target.write_text("precious: true\n", encoding="utf-8")
    with pytest.raises(UsageError, match="already exists"):
        write_starter(mesh_file)
    assert target.read_text(encoding="utf-8") == "precious: true\n"


def test_mesh_without_groups_gives_an_empty_loadable_mapping(tmp_path):
    m = structured_hex([0, 1], [0, 1], [0, 1])
    path = tmp_path / "bare.vtu"
    meshio.write(str(path), meshio.Mesh(m.points, [("hexahedron", m.cells[0].data)]))
    written = write_starter(path)
    assert "none found" in written.read_text(encoding="utf-8")
    assert load_case(written).mesh.boundaries == {}


def test_unreadable_mesh_writes_nothing(tmp_path):
    with pytest.raises(MeshReadError):
        write_starter(tmp_path / "missing.msh")
    assert not (tmp_path / "case.yaml").exists()


@pytest.mark.parametrize("name", ["1", "1e3", ".5", "no", "On", "null", "~", "a:b", "#x",
                                  "wall 1", "-", "x'y", 'q"r', "../m/duct.msh", "plain-name"])
def test_group_names_read_back_as_the_same_text(name):
    import yaml

    from caselint.manifest.starter import _scalar

    assert yaml.safe_load(f"{_scalar(name)}: wall") == {name: "wall"}
