"""Damaged meshes through ``caselint check``: a clear exit-2 message, or findings with counts.

Every mesh is a 3 x 2 x 1 block of unit hexahedra (``structured_hex``: cell id =
i + 3 j, point id = i + 4 (j + 3 k)) with its six sides in groups xmin ... zmax (no walls,
so the wall rules stay out of it), damaged in one way and written for real (gmsh 2.2
text, edited by hand or written by meshio, or meshio's VTU). The
expected counts follow from the block by hand; JSON reports are parsed with a strict
parser (NaN and infinity refused) and validated against the report schema.
"""

from __future__ import annotations

import re
from pathlib import Path

import meshio
import numpy as np
import pytest
from jsonschema import Draft202012Validator

import caselint.engine.plugins as plugins
import caselint.rules.mesh_integrity as integrity
from caselint import hookimpl
from caselint.mesh.blocks import structured_hex, write_gmsh22
from caselint.report.json_report import report_schema
from fuzz_properties import strict_json
from test_cli import run_cli

MODULE = "caselint.rules.mesh_integrity"
ROLES = "{xmin: inlet, xmax: outlet, ymin: symmetry, ymax: symmetry, zmin: symmetry, zmax: symmetry}"


@pytest.fixture(autouse=True)
def integrity_rules(monkeypatch, tmp_path):
    """The CLI's plugin manager with the mesh-integrity rules and a set listing them."""
    rule_set = tmp_path / "integrity.yaml"
    rule_set.write_text("extends: general\nrules:\n" + "".join(
        f"  {rule.id}: {{}}\n" for rule in integrity.RULES), encoding="utf-8")
    original = plugins.get_plugin_manager

    class _Sets:
        @hookimpl
        def caselint_register_rule_sets(self):
            return [rule_set]

    def with_integrity(**kwargs):
        pm = original(**kwargs)
        if not pm.has_plugin(MODULE):
            pm.register(integrity, name=MODULE)
        pm.register(_Sets(), name="test-integrity-set")
        return pm

    monkeypatch.setattr(plugins, "get_plugin_manager", with_integrity)


def block() -> meshio.Mesh:
    """The undamaged 3 x 2 x 1 block (6 cells, 24 points, 22 boundary quads)."""
    return structured_hex([0.0, 1.0, 2.0, 3.0], [0.0, 1.0, 2.0], [0.0, 1.0])


def with_cells(m: meshio.Mesh, points, hexes, quads=None) -> meshio.Mesh:
    """``m`` with new points and hexahedra; quads added after the block's go to group xmin."""
    quads = m.cells[1].data if quads is None else quads
    extra = len(quads) - len(m.cells[1].data)
    data = {k: [np.zeros(len(hexes), dtype=np.int64),
                np.concatenate([v[1], np.repeat(v[1][:1], extra)])] for k, v in m.cell_data.items()}
    xmin = m.field_data["xmin"][0]
    sets = {name: [np.zeros(0, dtype=np.int64), np.flatnonzero(data["gmsh:physical"][1] == tag)]
            for name, (tag, _) in m.field_data.items()}
    assert sets["xmin"][1].size == 2 + extra and xmin == 1
    return meshio.Mesh(points, [("hexahedron", hexes), ("quad", quads)], cell_data=data,
                       field_data=m.field_data, cell_sets=sets)


def write_case(folder: Path, mesh: Path) -> Path:
    """A case for ``mesh`` with every group given a role, checked with the integrity set."""
    case = folder / f"{mesh.stem}.yaml"
    case.write_text(f"caselint: 1\ncase: {{name: Damaged block {mesh.stem}}}\nmesh:\n"
                    f"  file: {mesh.name}\n  boundaries: {ROLES}\n"
                    "checks: {rule_sets: [integrity]}\n", encoding="utf-8")
    return case


def gmsh_text(folder: Path, name: str, edit) -> Path:
    """The block as gmsh 2.2 text, passed through ``edit(text) -> text``."""
    path = folder / name
    write_gmsh22(block(), path)
    path.write_text(edit(path.read_text(encoding="ascii")), encoding="ascii")
    return path


def vtu(folder: Path, name: str, m: meshio.Mesh) -> Path:
    """``m`` as VTU (its groups unnamed: for meshes that must fail before groups matter)."""
    path = folder / name
    meshio.write(path, meshio.Mesh(m.points, m.cells))
    return path


def msh(folder: Path, name: str, m: meshio.Mesh) -> Path:
    """``m`` as gmsh 2.2 text, with its groups as named physical groups."""
    path = folder / name
    write_gmsh22(m, path)
    return path


def check(case: Path) -> tuple[int, dict, str]:
    """``caselint check CASE --format json``: exit code, strict-JSON report, stderr."""
    code, out, err = run_cli("check", str(case), "--format", "json")
    if code == 2:
        return code, {}, err
    document = strict_json(out)
    assert Draft202012Validator(report_schema()).is_valid(document)
    return code, document, err


def outcome(document: dict, rule: str) -> dict:
    return next(c for c in document["cases"][0]["checks"] if c["rule"] == rule)


def finding(document: dict, rule: str) -> dict:
    found = [f for f in document["cases"][0]["findings"] if f["rule"] == rule
             and f["severity"] != "note"]
    assert len(found) == 1, found
    return found[0]


# -- refused with a clear message (exit 2) -------------------------------------------------


def _element_node(text: str, new: str) -> str:
    """Replace the last node of the first element line (a hexahedron) by ``new``."""
    lines = text.split("\n")
    i = lines.index("$Elements") + 2
    lines[i] = re.sub(r" \d+$", f" {new}", lines[i])
    return "\n".join(lines)


def _node_coords(text: str, node: int, coords: str) -> str:
    """Give gmsh node ``node`` (1-based tag) the coordinates ``coords``."""
    return re.sub(rf"\n{node} [^\n]*", f"\n{node} {coords}", text, count=1)


def _cut(fraction: float):
    return lambda text: text[: int(len(text) * fraction)]


def _damaged_vtu(kind: str):
    def make(folder: Path, name: str) -> Path:
        m = block()
        points, hexes = m.points.copy(), m.cells[0].data.copy()
        if kind == "index":
            hexes[3, 6] = 24                  # points are 0..23
        elif kind == "nan":
            points[5, 1] = np.nan
        elif kind == "huge":
            points *= 1e13                    # 3e13 m across: beyond 1e12 m
        return vtu(folder, name, with_cells(m, points, hexes))
    return make


def _truncated_vtu(folder: Path, name: str) -> Path:
    path = vtu(folder, name, block())
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    return path


@pytest.mark.parametrize("name, make, fragment", [
    ("truncated.msh", lambda f, n: gmsh_text(f, n, _cut(0.66)), "meshio could not read the file"),
    ("truncated-nodes.msh", lambda f, n: gmsh_text(f, n, lambda t: t[: t.index("$EndNodes") - 30]),
     "meshio could not read the file"),
    ("truncated.vtu", _truncated_vtu, "meshio could not read the file"),
    ("index-out-of-range.msh", lambda f, n: gmsh_text(f, n, lambda t: _element_node(t, "999")),
     "meshio could not read the file"),
    ("index-out-of-range.vtu", _damaged_vtu("index"),
     "hexahedron cells refer to point 24; points are 0..23"),
    ("nan.vtu", _damaged_vtu("nan"), "1 points have non-finite coordinates (first: point 5)"),
    ("inf.msh", lambda f, n: gmsh_text(f, n, lambda t: _node_coords(t, 6, "inf 0 0")),
     "1 points have non-finite coordinates (first: point 5)"),
    ("nan.msh", lambda f, n: gmsh_text(f, n, lambda t: _node_coords(t, 6, "0 nan 0")),
     "1 points have non-finite coordinates (first: point 5)"),
    ("huge.vtu", _damaged_vtu("huge"), "coordinates reach 3e+13 m"),
    ("empty.msh", lambda f, n: gmsh_text(f, n, lambda t: ""), "meshio could not read the file"),
    ("no-elements.msh",
     lambda f, n: gmsh_text(f, n, lambda t: t[: t.index("$Elements")] + "$Elements\n0\n$EndElements\n"),
     "no volume cells (tetra, hexahedron, wedge, pyramid) or 2-D cells; found no cells"),
    ("no-points.vtu", lambda f, n: vtu(f, n, meshio.Mesh(np.zeros((0, 3)), [])),
     "meshio could not read the file"),
    ("surface-only.vtu",
     lambda f, n: vtu(f, n, meshio.Mesh(block().points, [("quad", block().cells[1].data)])),
     "holds only surface cells"),
])
def test_unusable_mesh_is_exit_2_naming_case_key_and_mesh(tmp_path, name, make, fragment):
    mesh = make(tmp_path, name)
    case = write_case(tmp_path, mesh)
    code, _, err = check(case)
    assert code == 2
    # the case file, the line and key of mesh.file, the mesh file, then what is wrong
    assert err.startswith(f"caselint: error: {case}:4: [mesh.file] cannot read the mesh: "
                          f"{mesh.resolve()}: "), err
    assert fragment in err
    assert err.count("\n") == 1 and "Traceback" not in err


# -- read, with findings -------------------------------------------------------------------


def test_undamaged_block_passes_every_integrity_rule(tmp_path):
    code, document, err = check(write_case(tmp_path, msh(tmp_path, "intact.msh", block())))
    assert (code, err) == (0, "")
    expected = {"duplicate-points": 0.0, "non-manifold-faces": 0.0, "disconnected-pieces": 1.0,
                "unmatched-boundary-elements": 0.0, "inverted-cells": 0.0,
                "unassigned-boundary": 0.0}
    for rule, value in expected.items():
        assert (outcome(document, rule)["outcome"], outcome(document, rule)["measured"]) == \
            ("pass", value), rule


def test_duplicate_nodes_along_a_seam(tmp_path):
    # The 6 points of the plane x = 2 are copied; the 2 cells at x in [2, 3] (ids 2, 5) and
    # the boundary quads there use the copies: a crack between cells 1|2 and 4|5.
    m = block()
    seam = np.flatnonzero(m.points[:, 0] == 2.0)
    assert seam.size == 6
    new_id = np.arange(len(m.points))
    new_id[seam] = len(m.points) + np.arange(seam.size)
    points = np.vstack([m.points, m.points[seam]])
    hexes, quads = m.cells[0].data.copy(), m.cells[1].data.copy()
    right = m.points[hexes].mean(axis=1)[:, 0] > 2.0
    hexes[right] = new_id[hexes[right]]
    q_right = m.points[quads].mean(axis=1)[:, 0] > 2.0
    quads[q_right] = new_id[quads[q_right]]
    code, document, err = check(write_case(tmp_path, msh(tmp_path, "seam.msh",
                                                         with_cells(m, points, hexes, quads))))
    assert (code, err) == (1, "")
    dup = finding(document, "duplicate-points")
    assert (dup["severity"], dup["measured"]) == ("warning", 6.0)
    assert dup["where"]["cells"] == [1, 2, 4, 5] and dup["where"]["cell_count"] == 4
    assert dup["where"]["point"] == [2.0, 0.0, 0.0]
    # the crack: 2 faces on each side in no group, and the block falls into two pieces
    assert finding(document, "unassigned-boundary")["measured"] == 4.0
    pieces = finding(document, "disconnected-pieces")
    assert (pieces["measured"], pieces["where"]["cells"]) == (2.0, [2, 5])


def test_zero_volume_cells(tmp_path):
    # The 6 points at x = 3 are moved to x = 2: cells 2 and 5 get zero thickness.
    m = block()
    points = m.points.copy()
    points[points[:, 0] == 3.0, 0] = 2.0
    code, document, _ = check(write_case(tmp_path, msh(tmp_path, "flat.msh",
                                                       with_cells(m, points, m.cells[0].data))))
    assert code == 1
    inverted = finding(document, "inverted-cells")
    assert (inverted["severity"], inverted["measured"]) == ("error", 2.0)
    assert inverted["where"]["cells"] == [2, 5]
    assert "volume 0 m^3" in inverted["message"]
    # the moved points now sit on the x = 2 points: 6 coincident pairs
    assert finding(document, "duplicate-points")["measured"] == 6.0


def test_inverted_cell(tmp_path):
    m = block()
    hexes = m.cells[0].data.copy()
    hexes[2] = hexes[2][[4, 5, 6, 7, 0, 1, 2, 3]]      # top and bottom swapped: mirrored
    code, document, _ = check(write_case(tmp_path, msh(tmp_path, "mirror.msh",
                                                       with_cells(m, m.points, hexes))))
    assert code == 1
    inverted = finding(document, "inverted-cells")
    assert (inverted["measured"], inverted["where"]["cells"]) == (1.0, [2])
    assert "volume -1 m^3" in inverted["message"]          # a unit cube, turned inside out


def test_face_shared_by_three_cells(tmp_path):
    # A seventh hexahedron on the face x = 1, y in [0, 1] between cells 0 and 1, reaching
    # 0.3 m into cell 1: that face now has three cells.
    m = block()
    hexes = m.cells[0].data
    face = hexes[0, [1, 2, 6, 5]]                       # cell 0's x-max side
    k = len(m.points)
    points = np.vstack([m.points, m.points[face] + [0.3, 0.0, 0.0]])
    third = [face[0], k, k + 1, face[1], face[3], k + 3, k + 2, face[2]]
    code, document, _ = check(write_case(tmp_path, msh(tmp_path, "third.msh", with_cells(
        m, points, np.vstack([hexes, third])))))
    assert code == 1
    shared = finding(document, "non-manifold-faces")
    assert (shared["severity"], shared["measured"]) == ("error", 1.0)
    assert shared["where"]["cells"] == [0, 1, 6] and shared["where"]["cell_count"] == 3
    assert shared["where"]["point"] == [1.0, 0.5, 0.5]


def test_duplicated_cell(tmp_path):
    # Cell 0 twice: its 2 internal faces (to cells 1 and 3) now have three cells each.
    m = block()
    hexes = np.vstack([m.cells[0].data, m.cells[0].data[:1]])
    code, document, _ = check(write_case(tmp_path, msh(tmp_path, "twice.msh",
                                                       with_cells(m, m.points, hexes))))
    assert code == 1
    shared = finding(document, "non-manifold-faces")
    assert shared["measured"] == 2.0
    assert shared["where"]["cells"] == [0, 1, 3, 6]


def test_disconnected_pieces(tmp_path):
    # A lone unit cube 5 m away from the block: 2 pieces, cell 6 outside the largest.
    m = block()
    cube = structured_hex([5.0, 6.0], [0.0, 1.0], [0.0, 1.0])
    k = len(m.points)
    points = np.vstack([m.points, cube.points])
    hexes = np.vstack([m.cells[0].data, cube.cells[0].data + k])
    code, document, _ = check(write_case(tmp_path, msh(tmp_path, "apart.msh",
                                                       with_cells(m, points, hexes))))
    assert code == 1
    pieces = finding(document, "disconnected-pieces")
    assert (pieces["severity"], pieces["measured"]) == ("warning", 2.0)
    assert pieces["where"]["cells"] == [6] and pieces["where"]["point"] == [5.5, 0.5, 0.5]
    assert "(6, 1 cells)" in pieces["message"]
    # the cube's 6 faces are in no group
    assert finding(document, "unassigned-boundary")["measured"] == 6.0


def test_boundary_element_matching_no_cell_face(tmp_path):
    # A quad through cell 0's diagonal plane (points 0, 5, 17, 12), in group xmin.
    m = block()
    quads = np.vstack([m.cells[1].data, [0, 5, 17, 12]])
    code, document, _ = check(write_case(tmp_path, msh(tmp_path, "stray.msh", with_cells(
        m, m.points, m.cells[0].data, quads))))
    assert code == 0                                    # a warning: below the fail level
    stray = finding(document, "unmatched-boundary-elements")
    assert (stray["severity"], stray["measured"]) == ("warning", 1.0)
    assert stray["where"] == {"boundary": "xmin"}


def test_gmsh_node_tag_zero_is_a_distorted_cell(tmp_path):
    # gmsh numbers nodes from 1. meshio 5.3.5 maps tag 0 to index -1, which numpy reads as
    # the last node (3, 2, 1): no reader error, but cell 0's corner 7 jumps there and the
    # cell folds. caselint cannot tell tag 0 from a real node; it reports the fold.
    mesh = gmsh_text(tmp_path, "tag0.msh", lambda t: _element_node(t, "0"))
    code, document, _ = check(write_case(tmp_path, mesh))
    assert code == 1
    inverted = finding(document, "inverted-cells")
    assert inverted["where"]["cells"] == [0]


def test_reports_of_damaged_meshes_hold_no_nan(tmp_path):
    """Every number in every report above is finite (strict parsing), and a flat mesh whose
    metrics are undefined has its rules skipped with a reason rather than NaN."""
    m = block()
    points = m.points.copy()
    points[:, 2] = 0.0                                  # every cell flat
    code, document, _ = check(write_case(tmp_path, msh(tmp_path, "all-flat.msh",
                                                       with_cells(m, points, m.cells[0].data))))
    assert code == 1
    assert finding(document, "inverted-cells")["measured"] == 6.0
    for c in document["cases"][0]["checks"]:
        assert c["outcome"] != "error", c                # no rule crashed
        if c["outcome"] == "skipped":
            assert c["reason"]


# -- reference checks of the vectorised helpers --------------------------------------------


def test_cell_pieces_match_scipy_connected_components():
    # Reference: scipy.sparse.csgraph.connected_components on the cell adjacency graph.
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    from caselint.mesh import mesh_from_meshio
    from caselint.mesh.blocks import shuffled

    rng = np.random.default_rng(7)
    offset, points, hexes = 0, [], []
    for i in range(5):
        n = rng.integers(1, 5, size=3)
        b = structured_hex(*(np.arange(k + 1) + 10.0 * i for k in n))
        points.append(b.points)
        hexes.append(b.cells[0].data + offset)
        offset += len(b.points)
    m = shuffled(meshio.Mesh(np.vstack(points), [("hexahedron", np.vstack(hexes))]), seed=3)
    mesh = mesh_from_meshio(m)
    labels = integrity.cell_pieces(mesh)
    inner = mesh.neighbour >= 0
    graph = coo_matrix((np.ones(inner.sum()), (mesh.owner[inner], mesh.neighbour[inner])),
                       shape=(mesh.n_cells, mesh.n_cells))
    n_ref, ref = connected_components(graph, directed=False)
    assert n_ref == 5 and np.unique(labels).size == 5
    # same partition: each of our pieces is exactly one reference component
    pairs = np.unique(np.stack([labels, ref], axis=1), axis=0)
    assert len(pairs) == 5


def test_coincident_points_match_a_kd_tree():
    # Reference: scipy.spatial.cKDTree.query_pairs at a radius far below the spacing.
    from scipy.spatial import cKDTree

    from caselint.mesh import mesh_from_meshio

    m = structured_hex(*(np.linspace(0.0, 1.0, 6),) * 3)
    rng = np.random.default_rng(1)
    copies = rng.choice(len(m.points), size=17, replace=False)
    points = np.vstack([m.points, m.points[copies]])
    hexes = m.cells[0].data.copy()
    swap = rng.choice(len(hexes), size=40, replace=False)
    remap = np.arange(len(points))
    remap[copies] = len(m.points) + np.arange(copies.size)
    hexes[swap] = remap[hexes[swap]]                 # some cells use the copies
    mesh = mesh_from_meshio(meshio.Mesh(points, [("hexahedron", hexes)]))
    ids, extra = integrity.coincident_points(mesh)
    used = np.flatnonzero(mesh.used_points())
    pairs = cKDTree(mesh.points[used]).query_pairs(r=1e-9, output_type="ndarray")
    assert extra == len(pairs)                       # no triple: one pair per copy
    assert set(ids.tolist()) == set(used[pairs.ravel()].tolist())


def test_a_damaged_grid_study_mesh_names_its_key(tmp_path):
    """A mesh read by a rule (the grid study's others) is refused like the case's own."""
    msh(tmp_path, "coarse.msh", block())
    fine = gmsh_text(tmp_path, "fine.msh", _cut(0.5))
    case = write_case(tmp_path, tmp_path / "coarse.msh")
    case.write_text(case.read_text(encoding="utf-8") + "grid_study:\n  meshes: [fine.msh, "
                    "coarse.msh]\n", encoding="utf-8")
    code, _, err = check(case)
    assert code == 2
    assert err.startswith(f"caselint: error: {case}:8: [grid_study.meshes[0]] cannot read the "
                          f"grid-study mesh: {fine}: meshio could not read the file"), err
