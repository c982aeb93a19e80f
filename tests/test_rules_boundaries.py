"""unassigned-boundary on small blocks whose face counts are known: an n_x x n_y x n_z block
has n_y n_z faces on each x side, n_x n_z on each y side and n_x n_y on each z side [computed].
"""

from __future__ import annotations

from pathlib import Path

import meshio
import numpy as np
import pytest

from caselint.engine.runner import check_rule
from caselint.manifest.case import Case, CaseInfo, MeshSpec
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import HEX_SIDES, structured_hex
from caselint.rules import boundaries
from caselint.rules.boundaries import UNASSIGNED_BOUNDARY
from caselint.rules.mesh_integrity import UNMATCHED_BOUNDARY_ELEMENTS

NX, NY, NZ = 4, 3, 2
SIDE_FACES = {"xmin": NY * NZ, "xmax": NY * NZ, "ymin": NX * NZ, "ymax": NX * NZ,
              "zmin": NX * NY, "zmax": NX * NY}
ALL_ROLES = {"xmin": "inlet", "xmax": "outlet", "ymin": "wall", "ymax": "wall",
             "zmin": "wall", "zmax": "symmetry"}


def block() -> meshio.Mesh:
    return structured_hex(np.arange(NX + 1.0), np.arange(NY + 1.0), np.arange(NZ + 1.0))


def case(roles: dict[str, str]) -> Case:
    return Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="test"),
                mesh=MeshSpec(file=Path("mesh.msh"), boundaries=dict(roles)))


def run(mesh, roles):
    return check_rule(UNASSIGNED_BOUNDARY, case(roles), mesh)


def without_side(m: meshio.Mesh, side: str) -> meshio.Mesh:
    """The block with one side's boundary elements removed: those faces are in no group."""
    tag = HEX_SIDES.index(side) + 1
    quads = m.cells[1].data
    physical = m.cell_data["gmsh:physical"][1]
    keep = physical != tag
    tags = [m.cell_data["gmsh:physical"][0], physical[keep]]
    field = {k: v for k, v in m.field_data.items() if k != side}
    return meshio.Mesh(m.points, [("hexahedron", m.cells[0].data), ("quad", quads[keep])],
                       cell_data={"gmsh:physical": tags}, field_data=field)


def test_every_group_with_a_role_passes():
    result = run(mesh_from_meshio(block()), ALL_ROLES)
    assert result.skipped is None and len(result.measurements) == 1
    m = result.measurements[0]
    assert m.value == 0 and m.where.face_count == 0
    assert m.detail == f"all {sum(SIDE_FACES.values())} exposed faces belong to a boundary group"


def test_groups_without_a_role_are_measured_one_by_one():
    roles = {k: v for k, v in ALL_ROLES.items() if k not in ("ymax", "zmin")}
    mesh = mesh_from_meshio(block())
    result = run(mesh, roles)
    first, *groups = result.measurements
    assert first.value == 0                                    # no ungrouped faces
    assert [g.where.boundary for g in groups] == ["ymax", "zmin"]
    for g in groups:
        name = g.where.boundary
        assert g.value == SIDE_FACES[name] and g.where.face_count == SIDE_FACES[name]
        assert g.where.faces == tuple(sorted(mesh.group_faces(name).tolist()))[:10]
        assert f"group '{name}' ({SIDE_FACES[name]} exposed faces) has no role" in g.detail
        assert f"{name}: <role>" in g.fix
    # the zmin faces sit on z = 0; the point is on the first listed face
    assert groups[1].where.point[2] == pytest.approx(0.0)


def test_exposed_faces_in_no_group_are_counted():
    mesh = mesh_from_meshio(without_side(block(), "zmax"))
    assert "zmax" not in mesh.group_names
    roles = {k: v for k, v in ALL_ROLES.items() if k != "zmax"}
    result = run(mesh, roles)
    assert len(result.measurements) == 1
    m = result.measurements[0]
    assert m.value == SIDE_FACES["zmax"] and m.where.face_count == SIDE_FACES["zmax"]
    assert m.where.boundary is None
    assert m.where.cell_count == NX * NY                       # the top layer of cells
    assert m.where.point[2] == pytest.approx(float(NZ))        # on the top face
    assert m.detail.startswith(f"{NX * NY} of {sum(SIDE_FACES.values())} exposed faces "
                               "in no boundary group")
    assert "mesh.boundaries" in m.fix


def test_case_with_no_roles_flags_every_group():
    result = run(mesh_from_meshio(block()), {})
    values = {m.where.boundary: m.value for m in result.measurements}
    assert values == {None: 0.0, **{k: float(v) for k, v in SIDE_FACES.items()}}


def test_rule_is_registered_with_an_error_limit_of_zero():
    rules = boundaries.caselint_register_rules()
    assert [r.id for r in rules] == ["unassigned-boundary"]
    rule = rules[0]
    assert (rule.limits.warn, rule.limits.error) == (None, 0)
    assert rule.source == "common practice" and rule.needs == ("mesh",)


def test_group_on_internal_faces_needs_a_role_and_stray_elements_give_a_note():
    m = block()

    def p(i, j, k):
        return i + (NX + 1) * (j + (NY + 1) * k)

    # the internal plane x = 2 (NY * NZ faces) and one diagonal quad that is no cell face
    plane = np.array([[p(2, j, k), p(2, j + 1, k), p(2, j + 1, k + 1), p(2, j, k + 1)]
                      for j in range(NY) for k in range(NZ)])
    stray = np.array([[p(0, 0, 0), p(1, 0, 0), p(1, 1, 1), p(0, 1, 1)]])
    baffle = np.vstack([plane, stray])
    tags = list(m.cell_data["gmsh:physical"]) + [np.full(len(baffle), 7)]
    field = {**m.field_data, "baffle": np.array([7, 2])}
    mesh = mesh_from_meshio(meshio.Mesh(m.points, [*((b.type, b.data) for b in m.cells),
                                                   ("quad", baffle)],
                                        cell_data={"gmsh:physical": tags}, field_data=field))
    result = run(mesh, ALL_ROLES)
    first, group = result.measurements
    assert first.value == 0
    assert group.where.boundary == "baffle" and group.value == NY * NZ
    assert group.where.face_count == 0
    assert f"0 exposed faces, {NY * NZ} more on internal faces" in group.detail
    # the stray element is unmatched-boundary-elements' business, not repeated here
    assert result.notes == ()
    (stray,) = check_rule(UNMATCHED_BOUNDARY_ELEMENTS, case(ALL_ROLES), mesh).measurements
    assert (stray.value, stray.where.boundary) == (1.0, "baffle")
