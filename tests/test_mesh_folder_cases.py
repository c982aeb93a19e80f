"""Case files on face-based mesh folders and polyhedral files: `caselint init` from every
format read, roles from patch types, cell zones as regions, fingerprints of folders.

References: meshes written by ``tests/mesh_writers.py`` and ``tests/mixed_meshes.py``
whose group types, face counts and zones are set by the test.
"""

from __future__ import annotations

import numpy as np
import pytest

from caselint.api import lint_case
from caselint.cli import main
from caselint.errors import CaseFileError
from caselint.manifest.loader import load_case
from caselint.manifest.starter import write_starter
from caselint.mesh.blocks import structured_hex
from caselint.mesh.formats.meshio_files import meshio_data
from caselint.mesh.reader import mesh_sha256
from mesh_writers import write_face_folder
from mixed_meshes import WRITERS, mixed_mesh

TYPES = {"xmin": "patch", "xmax": "patch", "ymin": "wall", "ymax": "symmetryPlane",
         "zmin": "wall", "zmax": "cyclic"}


@pytest.fixture
def case_folder(tmp_path):
    """A face-based case (3 x 2 x 2 hexahedra) whose patches have the TYPES above."""
    data = meshio_data(structured_hex(np.arange(4.0), np.arange(3.0), np.arange(3.0)))
    write_face_folder(tmp_path / "room" / "constant" / "polyMesh", data, patch_types=TYPES,
                      zones={"heater": np.arange(4)})
    return tmp_path / "room"


def test_init_on_a_case_folder(case_folder):
    written = write_starter(case_folder)
    assert written == case_folder / "case.yaml"
    text = written.read_text()
    assert "file: ." in text and "name: room" in text
    assert "ymin: wall       # 6 faces, type wall" in text
    assert "ymax: symmetry   # 6 faces, type symmetryPlane" in text
    assert "zmax: periodic   # 6 faces, type cyclic" in text
    assert "xmin: wall       # 4 faces, type patch: role guessed from the name" in text
    case = load_case(written)
    assert case.mesh.file == case_folder.resolve()
    assert case.mesh.boundaries["zmax"] == "periodic"


def test_init_on_the_polymesh_folder_goes_to_the_case_folder(case_folder):
    written = write_starter(case_folder / "constant" / "polyMesh")
    assert written == case_folder / "case.yaml"
    assert "file: constant/polyMesh" in written.read_text()


@pytest.mark.parametrize("column", [c for c in WRITERS if "mixed" in c.meshes],
                         ids=lambda c: c.name)
def test_init_from_every_polyhedral_format(tmp_path, column):
    path = column.write(mixed_mesh(2, polyhedra=True), tmp_path / "duct")
    out = tmp_path / "starter.yaml"
    assert main(["init", str(path), "--output", str(out)]) == 0
    case = load_case(out)
    assert sorted(case.mesh.boundaries) == ["xmax", "xmin", "ymax", "ymin", "zmax", "zmin"]
    assert main(["check", str(out), "--format", "json", "--output",
                 str(tmp_path / "r.json")]) in (0, 1)


def test_two_d_case_starter_names_the_empty_patches(tmp_path):
    data = meshio_data(structured_hex([0.0, 1.0, 2.0], [0.0, 1.0], [0.0, 0.1]))
    folder = write_face_folder(tmp_path / "flat" / "constant" / "polyMesh", data,
                               patch_types={"zmin": "empty", "zmax": "empty"})
    text = write_starter(folder.parent.parent).read_text()
    assert "zmin: symmetry   # front and back of the 2-D case (type empty): no faces in 2-D" \
        in text


CASE = """\
caselint: 1
case: {{name: typed-room, safety: none}}
mesh:
  file: .
  boundaries: {boundaries}
regions:
  - {{name: heater-zone, zone: {zone}, max_cell_size: 2 m}}
"""


def _run(case_folder, boundaries: str, zone: str = "heater"):
    (case_folder / "case.yaml").write_text(CASE.format(boundaries=boundaries, zone=zone))
    return lint_case(case_folder / "case.yaml")


def test_typed_patches_need_no_role_but_plain_patches_do(case_folder):
    report = _run(case_folder, "{xmin: inlet}")
    check = next(c for c in report.checks if c.rule == "unassigned-boundary")
    flagged = sorted(f.where.boundary for f in report.findings
                     if f.rule == "unassigned-boundary")
    # xmax is a plain patch: the case file must say; the typed patches have their roles
    assert check.outcome == "fail" and flagged == ["xmax"]
    report = _run(case_folder, "{xmin: inlet, xmax: outlet, zmin: symmetry}")
    assert next(c for c in report.checks if c.rule == "unassigned-boundary").outcome == "pass"


def test_cell_zone_region(case_folder):
    report = _run(case_folder, "{xmin: inlet, xmax: outlet}")
    check = next(c for c in report.checks if c.rule == "region-cell-size")
    assert (check.outcome, check.measured) == ("pass", pytest.approx(1.0))
    with pytest.raises(CaseFileError, match="cell zone 'heaters' is not in the mesh .*"
                                            "did you mean 'heater'"):
        _run(case_folder, "{xmin: inlet, xmax: outlet}", zone="heaters")


def test_folder_fingerprint_covers_the_mesh_files_only(case_folder):
    before = mesh_sha256(case_folder)
    (case_folder / "notes.txt").write_text("not part of the mesh")
    (case_folder / "system").mkdir()
    assert mesh_sha256(case_folder) == before
    points = case_folder / "constant" / "polyMesh" / "points"
    points.write_bytes(points.read_bytes().replace(b"(0.0 0.0 0.0)", b"(0.0 0.0 0.01)"))
    assert mesh_sha256(case_folder) != before


def test_reports_are_not_written_into_the_mesh_folder(case_folder, capsys):
    (case_folder / "case.yaml").write_text(CASE.format(boundaries="{xmin: inlet}",
                                                       zone="heater"))
    inside = case_folder / "constant" / "polyMesh" / "report.json"
    assert main(["check", str(case_folder / "case.yaml"), "--format", "json",
                 "--output", str(inside)]) == 2
    assert "caselint never overwrites its inputs" in capsys.readouterr().err
    assert not inside.exists()
    beside = case_folder / "report.json"
    assert main(["check", str(case_folder / "case.yaml"), "--format", "json",
                 "--output", str(beside)]) in (0, 1)
