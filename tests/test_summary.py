"""Mesh summary: counts and extents of analytic blocks, JSON safety, determinism, text layout.

Volume reference: scipy.spatial.ConvexHull of a sheared (convex) block gives its volume.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh import mesh_from_meshio
from caselint.mesh.blocks import graded, structured_hex, write_gmsh22
from caselint.mesh.summary import PERCENTILES, mesh_summary, render_summary_text, summarize

NX, NY, NZ = 5, 3, 2
GRADING = 1.4
SHEAR_DEG = 20.0


def block():
    m = structured_hex(graded(0.0, 2.0, NX, GRADING), np.linspace(0, 0.6, NY + 1),
                       np.linspace(0, 0.4, NZ + 1))
    m.points[:, 1] += math.tan(math.radians(SHEAR_DEG)) * m.points[:, 2]
    return m


@pytest.fixture(scope="module")
def summary():
    return summarize(mesh_from_meshio(block(), path="block.msh"))


def test_counts_are_those_of_the_block(summary):
    assert summary["dim"] == 3
    assert summary["cells"] == {"total": NX * NY * NZ, "by_type": {"hexahedron": NX * NY * NZ}}
    assert summary["points"] == (NX + 1) * (NY + 1) * (NZ + 1)
    internal = (NX - 1) * NY * NZ + NX * (NY - 1) * NZ + NX * NY * (NZ - 1)
    boundary = 2 * (NY * NZ + NX * NZ + NX * NY)
    assert summary["faces"] == {"total": internal + boundary, "internal": internal,
                                "boundary": boundary}
    groups = {g["name"]: g["faces"] for g in summary["boundary_groups"]}
    assert groups == {"xmin": NY * NZ, "xmax": NY * NZ, "ymin": NX * NZ, "ymax": NX * NZ,
                      "zmin": NX * NY, "zmax": NX * NY}
    assert summary["ungrouped_boundary_faces"] == 0


def test_extent_and_volumes(summary):
    shift = math.tan(math.radians(SHEAR_DEG)) * 0.4
    assert summary["extent_m"]["min"] == pytest.approx([0.0, 0.0, 0.0])
    assert summary["extent_m"]["max"] == pytest.approx([2.0, 0.6 + shift, 0.4])
    from scipy.spatial import ConvexHull

    hull = ConvexHull(block().points)
    assert summary["volume_m3"]["total"] == pytest.approx(hull.volume, rel=1e-12)  # scipy reference
    assert summary["volume_m3"]["total"] == pytest.approx(2.0 * 0.6 * 0.4, rel=1e-12)
    first = 2.0 * (GRADING - 1) / (GRADING**NX - 1)         # first x spacing [computed]
    assert summary["volume_m3"]["min"] == pytest.approx(first * 0.2 * 0.2, rel=1e-12)
    largest = first * GRADING ** (NX - 1) * 0.2 * 0.2
    assert summary["volume_m3"]["max"] == pytest.approx(largest, rel=1e-12)
    assert summary["volume_m3"]["non_positive"] == 0
    assert summary["volume_m3"]["unit"] == "m^3"


def test_metric_percentiles_and_histograms(summary):
    metrics = summary["metrics"]
    assert list(metrics) == ["volume", "non-orthogonality", "skewness", "scaled-jacobian",
                             "edge-ratio", "growth-ratio"]
    growth = metrics["growth-ratio"]
    assert growth["over"] == "internal faces" and growth["count"] == summary["faces"]["internal"]
    assert growth["percentiles"]["p100"] == pytest.approx(GRADING, abs=1e-9)
    assert growth["percentiles"]["p0"] == pytest.approx(1.0, abs=1e-12)
    non_orth = metrics["non-orthogonality"]
    assert non_orth["percentiles"]["p100"] == pytest.approx(SHEAR_DEG, abs=1e-9)
    assert metrics["scaled-jacobian"]["percentiles"]["p0"] == pytest.approx(
        math.cos(math.radians(SHEAR_DEG)), abs=1e-12)      # sheared box: cos of the shear angle
    for metric in metrics.values():
        pct = [metric["percentiles"][f"p{p}"] for p in PERCENTILES]
        assert pct == sorted(pct)
        hist = metric["histogram"]
        assert sum(hist["counts"]) == metric["count"]
        assert len(hist["edges"]) == len(hist["counts"]) + 1
        assert hist["edges"][0] == pct[0] and hist["edges"][-1] == pct[-1]


def test_log_bins_for_metrics_spanning_decades():
    m = structured_hex(graded(0.0, 1.0, 12, 1.8), [0, 1], [0, 1])
    edge = summarize(mesh_from_meshio(m))["metrics"]["edge-ratio"]
    assert edge["histogram"]["scale"] == "log"
    edges = np.array(edge["histogram"]["edges"])
    ratios = edges[1:] / edges[:-1]
    assert np.allclose(ratios, ratios[0], rtol=1e-9)


def test_json_safe_and_deterministic(tmp_path):
    path = tmp_path / "block.msh"
    write_gmsh22(block(), path)
    first = json.dumps(mesh_summary(path), sort_keys=True, allow_nan=False)
    second = json.dumps(mesh_summary(path), sort_keys=True, allow_nan=False)
    assert first == second
    scaled = mesh_summary(path, scale_to_m=1e-3)
    assert scaled["scale_to_m"] == 1e-3
    assert scaled["extent_m"]["max"][0] == pytest.approx(2.0e-3)
    assert scaled["volume_m3"]["total"] == pytest.approx(2.0 * 0.6 * 0.4 * 1e-9, rel=1e-12)


def test_unreadable_mesh_raises_mesh_read_error(tmp_path):
    with pytest.raises(MeshReadError):
        mesh_summary(tmp_path / "missing.msh")


def test_text_rendering_is_plain_when_piped_and_fits_the_width(summary):
    text = render_summary_text(summary, color=False, width=100)
    assert "\x1b[" not in text
    assert max(len(line) for line in text.splitlines()) <= 100
    for word in ("hexahedron 30", "xmin", "zmax", "growth", "non-orth.", "[deg]", "[m^3]",
                 "extent max [m]", "#"):
        assert word in text
    assert text.isascii()  # piped output stays readable on any terminal
    assert "█" in render_summary_text(summary, color=True, width=100)
    # each histogram line ends with its count; the growth histogram adds up to the faces
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("growth-ratio over"))
    counts = [int(line.rsplit(None, 1)[-1]) for line in lines[start + 1:start + 21]]
    assert sum(counts) == summary["faces"]["internal"]


def test_text_rendering_in_colour_uses_escape_codes(summary):
    assert "\x1b[" in render_summary_text(summary, color=True, width=100)


def test_two_dimensional_mesh_reports_areas():
    from caselint.mesh.blocks import structured_quad

    out = summarize(mesh_from_meshio(structured_quad(graded(0, 1, 4, 1.5), [0, 0.5, 1.0])))
    assert out["dim"] == 2 and out["cells"]["by_type"] == {"quad": 8}
    assert out["volume_m3"]["unit"] == "m^2" and out["metrics"]["volume"]["unit"] == "m^2"
    assert out["volume_m3"]["total"] == pytest.approx(1.0, rel=1e-12)
    assert out["metrics"]["growth-ratio"]["percentiles"]["p100"] == pytest.approx(1.5, abs=1e-9)
    assert "cell volume [m^2]" in render_summary_text(out)
