"""Plane cuts through cells (caselint.mesh.cut) against cuts derived by hand."""

from __future__ import annotations

import math

import numpy as np
import pytest

from caselint.mesh import Mesh, mesh_from_meshio
from caselint.mesh.blocks import structured_hex, structured_quad, tetrahedralise
from caselint.mesh.cut import plane_axes, plane_cut
from caselint.mesh.refined import refined_block


def sheared_block(angle_deg: float):
    """A 4 x 3 x 2 block of unit cubes sheared so that x += tan(angle) z."""
    m = structured_hex(np.arange(5.0), np.arange(4.0), np.arange(3.0))
    m.points[:, 0] += math.tan(math.radians(angle_deg)) * m.points[:, 2]
    return mesh_from_meshio(m)


def test_axes_are_orthonormal_and_right_handed():
    for normal in ([0, 1, 0], [0, 0, 1], [1, 2, 3]):
        n, u, v = plane_axes(normal)
        basis = np.stack([u, v, n])
        np.testing.assert_allclose(basis @ basis.T, np.eye(3), atol=1e-15)
        np.testing.assert_allclose(np.cross(u, v), n, atol=1e-15)
    with pytest.raises(ValueError):
        plane_axes([0, 0, 0])


def test_cut_of_a_sheared_block_shows_parallelograms_where_the_cells_are():
    """Derived by hand: the plane y = 1.5 crosses the middle row of cells; each cut is the
    parallelogram with corners x = i + s z, z in {k, k + 1} (s = tan 30 deg), of area 1
    (base 1, height 1), centred on the cell's centroid."""
    mesh = sheared_block(30.0)
    cut = plane_cut(mesh, origin=[0, 1.5, 0], normal=[0, 1, 0])
    assert len(cut.cells) == 4 * 2                     # one row of cells across y = 1.5
    np.testing.assert_allclose(cut.areas(), 1.0, rtol=1e-12)
    s = math.tan(math.radians(30.0))
    for i in range(len(cut.cells)):
        corners = cut.to_space(cut.polygon(i))
        np.testing.assert_allclose(corners[:, 1], 1.5, atol=1e-12)
        # the corners of a sheared cell: x - s z is an integer and z is 0, 1 or 2
        np.testing.assert_allclose(np.round(corners[:, 2]), corners[:, 2], atol=1e-12)
        shifted = corners[:, 0] - s * corners[:, 2]
        np.testing.assert_allclose(np.round(shifted), shifted, atol=1e-12)
        # the cell's centroid projects into its polygon's mean
        centroid = mesh.cell_centroids[cut.cells[i]]
        np.testing.assert_allclose(corners.mean(axis=0), centroid, atol=1e-12)


def test_a_plane_through_nodes_and_a_slanted_plane():
    mesh = mesh_from_meshio(structured_hex(*(np.arange(3.0),) * 3))
    on_nodes = plane_cut(mesh, origin=[0, 0, 1.0], normal=[0, 0, 1])
    # z = 1 is a face plane: the cells below and above both touch it in a unit square
    assert len(on_nodes.cells) == 8 and np.allclose(on_nodes.areas(), 1.0)
    slanted = plane_cut(mesh, origin=[1, 1, 1], normal=[1, 1, 1])
    # the plane x + y + z = 3 through a 2 m cube: a regular hexagon of side sqrt(2)
    # [computed: (3 sqrt 3 / 2) s^2 = 3 sqrt 3]
    assert slanted.areas().sum() == pytest.approx(3 * math.sqrt(3), rel=1e-12)


def test_cut_of_tetrahedra_and_polyhedra_cover_the_section():
    tets = mesh_from_meshio(tetrahedralise(structured_hex(*(np.linspace(0, 1, 4),) * 3)))
    cut = plane_cut(tets, origin=[0, 0, 0.41], normal=[0, 0, 1])
    assert cut.areas().sum() == pytest.approx(1.0, rel=1e-12)       # the unit section
    axis = np.linspace(0.0, 4.0, 5)
    octree = Mesh(refined_block(axis, axis, axis, ((1, 3),) * 3))
    cut = plane_cut(octree, origin=[0, 0, 1.75], normal=[0, 0, 1])
    assert cut.areas().sum() == pytest.approx(16.0, rel=1e-12)
    # 12 coarse cells around the refined middle, 4 x 4 fine cells of a quarter each
    assert sorted(np.round(cut.areas(), 12).tolist()) == [0.25] * 16 + [1.0] * 12


def test_2d_cells_are_their_own_polygons():
    mesh = mesh_from_meshio(structured_quad(np.linspace(0, 2, 3), np.linspace(0, 1, 3)))
    cut = plane_cut(mesh, origin=[0, 0, 0], normal=[0, 0, 1])
    assert len(cut.cells) == mesh.n_cells
    np.testing.assert_allclose(cut.areas(), mesh.cell_volumes, rtol=1e-12)


def test_picture_of_a_sheared_block_shows_the_sheared_cells_where_they_are(tmp_path):
    """non-orthogonality fails on a block sheared by 75 deg; its picture cuts the plane
    normal to y (the axis the worst face's normal leaves out) through the worst cell, and
    every polygon is that cell's parallelogram: corners at x - s z integer, z integer,
    relative to the worst cell's centroid; the worst cell is highlighted."""
    from pathlib import Path

    from caselint.engine.runner import check_rule
    from caselint.manifest.case import Case, CaseInfo, MeshSpec
    from caselint.report.plots import plot_svg
    from caselint.rules.mesh_quality import NON_ORTHOGONALITY

    mesh = sheared_block(75.0)
    case = Case(path=Path("case.yaml"), version=1, info=CaseInfo(name="sheared"),
                mesh=MeshSpec(file=Path("mesh.msh")))
    result = check_rule(NON_ORTHOGONALITY, case, mesh)
    (picture,) = [p for p in result.plots if p.kind == "cut"]
    assert picture.x_label.startswith("x ") and picture.y_label.startswith("z ")
    worst = picture.series[picture.highlight]
    s = math.tan(math.radians(75.0))
    for poly in picture.series:
        x, z = np.array(poly.x), np.array(poly.y)
        assert len(x) == 4
        area = 0.5 * abs(np.dot(x, np.roll(z, -1)) - np.dot(z, np.roll(x, -1)))
        assert area == pytest.approx(1.0, rel=1e-12)          # base 1, height 1
        dz = np.diff(np.sort(z))
        assert np.allclose(dz[[0, 2]], 0) and dz[1] == pytest.approx(1.0)
    wx, wz = np.array(worst.x), np.array(worst.y)
    np.testing.assert_allclose([wx.mean(), wz.mean()], [0.0, 0.0], atol=1e-12)
    # the slanted sides run at the shear: x changes by s over a unit of z
    order = np.argsort(wz)
    bottom, top = wx[order[:2]], wx[order[2:]]
    assert np.sort(top) - np.sort(bottom) == pytest.approx([s, s])
    svg = plot_svg(picture, "t")
    assert svg.startswith("<svg") and "cells around the worst" in svg
