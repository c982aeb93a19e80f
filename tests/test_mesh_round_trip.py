"""One mesh, every format caselint reads with its own readers: the same cells, volume,
groups and rule results as the VTU read through meshio.

The mesh is the mixed-element box of ``tests/mixed_mesh.py`` (hexahedra, prisms in either
node order, pyramids, tetrahedra), written by the writers of ``tests/format_writers.py``
(:data:`ROUND_TRIP_WRITERS`, one entry per format and layout; a list meant to grow into
one matrix with the other formats' writers). Reference: the same mesh as VTU, read by
meshio 5.3.5 (its boundary faces tagged in a cell-data array).
"""

from __future__ import annotations

import json

import meshio
import pytest

from caselint.mesh import read_mesh
from format_writers import FACE_BASED, ROUND_TRIP_WRITERS
from mixed_mesh import mixed_box, tags, volume_boundary_meshio
from test_cli import run_cli

ROLES = ("{inlet: inlet, outlet: outlet, walls: wall, floor: wall, top: symmetry}")
#: Rules whose value needs a cell's corner nodes (its shape): on the face-based formats the
#: cells are general polyhedra until their shapes are recognised from the faces.
SHAPE_RULES: tuple[str, ...] = ()   # face-based readers recognise shapes too


def case(folder, mesh_name: str, extra: str = "") -> str:
    path = folder / f"{mesh_name}.yaml"
    path.write_text(f"caselint: 1\ncase: {{name: round trip}}\nmesh:\n  file: {mesh_name}\n"
                    f"  boundaries: {ROLES}\n{extra}", encoding="utf-8")
    return str(path)


def results(case_path: str) -> dict[str, tuple]:
    code, out, err = run_cli("check", case_path, "--format", "json")
    assert code in (0, 1), err
    document = json.loads(out)
    return {c["rule"]: (c["outcome"], None if c.get("measured") is None
                        else round(c["measured"], 9))
            for c in document["cases"][0]["checks"]
            if c["rule"] != "mesh-reading"}      # what the reader changed: per format


@pytest.fixture(scope="module", params=[False, True], ids=["wedges", "mirrored-wedges"])
def reference(request, tmp_path_factory):
    folder = tmp_path_factory.mktemp("reference")
    box = mixed_box(mirrored=request.param)
    meshio.write(folder / "box.vtu", volume_boundary_meshio(box))
    tag_lines = "  tag_array: boundary\n  tags: {" + ", ".join(
        f"{k}: {v}" for k, v in tags().items()) + "}\n"
    path = case(folder, "box.vtu")
    text = open(path).read().replace("  boundaries:", tag_lines + "  boundaries:")
    open(path, "w").write(text)
    mesh = read_mesh(folder / "box.vtu", tag_array="boundary", tags=tags())
    return box, mesh, results(path)


@pytest.mark.parametrize("fmt", sorted(ROUND_TRIP_WRITERS))
def test_round_trip(tmp_path, reference, fmt):
    box, ref, ref_results = reference
    path, options = ROUND_TRIP_WRITERS[fmt](box, tmp_path)
    mesh = read_mesh(path, zone=options.zone)
    assert mesh.n_cells == ref.n_cells
    if fmt not in FACE_BASED:
        assert mesh.cell_counts == ref.cell_counts
    assert mesh.cell_volumes.sum() == pytest.approx(ref.cell_volumes.sum(), rel=1e-12)
    assert mesh.cell_volumes.min() > 0
    assert {g: len(mesh.group_faces(g)) for g in mesh.group_names} == {
        g: len(ref.group_faces(g)) for g in ref.group_names}
    assert set(mesh.data.group_types.values()) <= {"wall", "inlet", "outlet", "symmetry"}
    got = results(case(tmp_path, path.name))
    skip = SHAPE_RULES if fmt in FACE_BASED else ()
    assert {k: v for k, v in got.items() if k not in skip} == {
        k: v for k, v in ref_results.items() if k not in skip}
