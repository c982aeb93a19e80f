"""Round-trip matrix: one mesh of every cell kind written in every format caselint reads.

The mesh (``tests/mixed_meshes.py``: hexahedra, wedges, pyramids, tetrahedra and, in the
``mixed`` variant, seven-faced polyhedra, conforming) is written by each column of
``mixed_meshes.WRITERS`` (the face-based mesh folder plain, binary/gzip/64-bit and
decomposed; VTU 2.3 written by VTK 9 in three encodings; VTU 2.2 by the test writer;
legacy VTK 5.1 and 4.2 written by VTK 9; element VTU written by meshio; SU2; CGNS as
element sections, one MIXED section and NGON_n/NFACE_n; the face-based .msh in ASCII and
binary) and read back.
Every column must give the same cell counts per shape, total volume, groups (faces and
area) and rule results (``caselint check`` on one case file): the files differ, the mesh
does not.

The scaled Jacobian and edge ratio of cells whose shape a face-based file does not state
(the shapes are recognised from the faces, :mod:`caselint.mesh.shapes`) must equal those
of the element file of the same mesh, cell for cell.
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import pytest

from caselint.api import lint_case
from caselint.mesh import quality, read_mesh
from caselint.mesh.analysis import Mesh
from mixed_meshes import WRITERS, mixed_mesh

CASE = """\
caselint: 1
case: {{name: mixed-duct, safety: none}}
mesh:
  file: {mesh}
  boundaries: {{xmin: inlet, xmax: outlet, ymin: wall, ymax: wall, zmin: wall, zmax: wall}}
physics:
  fluid: {{density: 1.2 kg/m^3, viscosity: 1.8e-5 Pa*s}}
  flow: {{kind: internal, velocity: 2 m/s, length: 1 m}}
  turbulence: {{model: k-omega-sst, wall_treatment: wall-function}}
time: {{mode: transient, step: 0.01 s, end: 1 s}}
"""


def _summary(mesh: Mesh) -> dict:
    """What must not depend on the format."""
    areas = mesh.face_areas
    return {
        "cells": dict(sorted(mesh.cell_counts.items())),
        "volume": round(float(mesh.cell_volumes.sum()), 10),
        "groups": {name: (len(mesh.group_faces(name)),
                          round(float(areas[mesh.group_faces(name)].sum()), 10))
                   for name in mesh.group_names},
        "faces": (mesh.n_faces, mesh.n_internal),
    }


def _rules(report) -> dict:
    """Outcome and measured value of every rule, and the number of findings per rule."""
    checks = {c.rule: (c.outcome, None if c.measured is None else float(f"{c.measured:.9g}"))
              for c in report.checks if c.rule != "mesh-reading"}   # per format
    counts: dict[str, int] = {}
    for f in report.findings:
        if f.rule != "mesh-reading":
            counts[f.rule] = counts.get(f.rule, 0) + 1
    return {"checks": checks, "findings": counts}


@pytest.fixture(scope="module", params=["elements", "mixed"])
def matrix(request, tmp_path_factory):
    """(column name -> summary, rule results) for one mesh written in every format."""
    kind = request.param
    mixed = mixed_mesh(2, polyhedra=kind == "mixed")
    root = tmp_path_factory.mktemp(kind)
    out = {}
    for i, column in enumerate(WRITERS):
        if kind not in column.meshes:
            continue
        path = column.write(mixed, root / f"column{i}")
        mesh = read_mesh(path, **column.options)
        case = root / f"case{i}.yaml"
        text = CASE.format(mesh=json.dumps(path.name))
        if column.options:
            tags = ", ".join(f"{k}: {v}" for k, v in column.options["tags"].items())
            text = text.replace("  boundaries:", f"  tag_array: gmsh:physical\n"
                                                 f"  tags: {{{tags}}}\n  boundaries:")
        case.write_text(text)
        out[column.name] = (_summary(mesh), _rules(lint_case(case)), mesh)
    return kind, mixed, out


def test_every_format_reads_the_same_mesh(matrix):
    kind, mixed, columns = matrix
    expected = _summary(Mesh(mixed.data))
    assert expected["cells"] == ({"hexahedron": 8, "polyhedron": 4, "pyramid": 44, "tetra": 56,
                                  "wedge": 16} if kind == "mixed" else
                                 {"hexahedron": 8, "pyramid": 44, "tetra": 56, "wedge": 16})
    assert len(columns) >= (12 if kind == "mixed" else 11)
    for name, (summary, _, _) in columns.items():
        assert summary == expected, name


def test_every_format_gives_the_same_rule_results(matrix):
    _, _, columns = matrix
    (first, (_, rules, _)), *rest = columns.items()
    assert len(rules["checks"]) > 10
    measured = [r for r, (_, v) in rules["checks"].items() if v is not None]
    assert {"non-orthogonality", "skewness", "growth-ratio", "wall-yplus"} <= set(measured)
    for name, (_, other, _) in rest:
        assert other == rules, f"{name} differs from {first}"


def test_recognised_shapes_give_the_element_files_metrics(matrix):
    kind, _, columns = matrix
    if kind != "elements":
        pytest.skip("the element file holds no polyhedra")
    element = columns["vtu elements via meshio"][2]
    for name in ("face-folder ascii", "vtu 2.2 base64"):
        faces = columns[name][2]
        for metric in (quality.scaled_jacobian, quality.edge_ratio):
            a, b = metric(faces), metric(element)
            # cells in another order: compare each cell by its centroid
            ka = np.lexsort(np.round(faces.cell_centroids, 9).T)
            kb = np.lexsort(np.round(element.cell_centroids, 9).T)
            np.testing.assert_allclose(a[ka], b[kb], rtol=1e-12, err_msg=f"{name} {metric}")
        assert np.isfinite(quality.scaled_jacobian(faces)).all()
