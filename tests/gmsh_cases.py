"""Making meshes with gmsh for the calibration corpus (tests/calibration.py): the gmsh
session, boundary groups by box side, background size fields, the case files, and the
shared geometries (a channel box, a prism-layer plate strip).

gmsh only makes meshes here; nothing takes a quality value from it.
"""

from __future__ import annotations

import contextlib
from pathlib import Path

import numpy as np


@contextlib.contextmanager
def session(name: str):
    import gmsh

    gmsh.initialize(interruptible=False)
    try:
        gmsh.option.setNumber("General.Terminal", 0)
        gmsh.option.setNumber("General.NumThreads", 1)
        gmsh.option.setNumber("Mesh.MshFileVersion", 4.1)
        gmsh.option.setNumber("Mesh.RandomSeed", 1)
        gmsh.model.add(name)
        yield gmsh
    finally:
        gmsh.finalize()


def name_box_sides(gmsh, lo, hi, names: dict[str, str], dim: int = 2) -> None:
    """Physical groups of the boundary entities on each side of the box [lo, hi]; sides
    map to group names (several sides may share one); entities elsewhere go to 'walls'."""
    tol = 1e-6 * max(h - l for l, h in zip(lo, hi))
    groups: dict[str, list[int]] = {}
    for _, tag in gmsh.model.getEntities(dim):
        box = gmsh.model.getBoundingBox(dim, tag)
        emin, emax = np.array(box[:3]), np.array(box[3:])
        side = "walls"
        for axis, label in enumerate("xyz"[: len(lo)]):
            for end, value in (("min", lo[axis]), ("max", hi[axis])):
                if abs(emin[axis] - value) < tol and abs(emax[axis] - value) < tol:
                    side = names.get(f"{label}{end}", "walls")
        groups.setdefault(side, []).append(tag)
    for group, tags in sorted(groups.items()):
        gmsh.model.addPhysicalGroup(dim, tags, name=group)


def no_size_from_geometry(gmsh) -> None:
    """Sizes from the background field only (not from points, curvature or boundaries)."""
    for key in ("MeshSizeFromPoints", "MeshSizeFromCurvature", "MeshSizeExtendFromBoundary"):
        gmsh.option.setNumber(f"Mesh.{key}", 0)


def graded_up(gmsh, *, floor: float, core: float, far: float, start: float,
               growth: float) -> None:
    """Background size ``floor`` on the floor z = 0, ``core`` at height ``start`` growing
    by ``growth`` per unit height up to ``far`` (a gmsh MathEval field of z itself: a
    Distance field samples the floor at points and overestimates the height between them)."""
    field = gmsh.model.mesh.field
    size = field.add("MathEval")
    # max(..., floor - 1e3 z): the floor's own size at z = 0, gone within a millimetre
    field.setString(size, "F", f"min({far:.9f}, max({core:.9f} + {growth:.9f} * (z - {start:.9f}), "
                               f"{floor:.9f} - 1000 * z))")
    field.setAsBackgroundMesh(size)
    no_size_from_geometry(gmsh)


def case_file(folder: Path, name: str, body: str) -> Path:
    case = folder / f"{name}.yaml"
    case.write_text(f"caselint: 1\ncase: {{name: {name}, safety: none}}\n{body}")
    return case


AIR = """  fluid: {density: 1.2 kg/m^3, viscosity: 1.8e-5 Pa*s}
"""
#: Euler flow: what a mesh without wall layers is made for (no boundary layer to resolve).
INVISCID = "  turbulence: {model: inviscid}\n"


def channel_case(folder: Path, name: str, extra_bounds: str = "", physics: str = INVISCID,
                  extra: str = "") -> Path:
    return case_file(folder, name, f"""mesh:
  file: {name}.msh
  boundaries: {{inlet: inlet, outlet: outlet, walls: wall{extra_bounds}}}
physics:
{AIR}{physics}time: {{mode: steady}}
{extra}checks: {{rule_sets: [general]}}
""")


def box_channel(gmsh, length: float = 1.0, side: float = 0.4) -> None:
    """A channel box with groups inlet (x = 0), outlet (x = length), walls, air."""
    gmsh.model.occ.addBox(0, 0, 0, length, side, side)
    gmsh.model.occ.synchronize()
    name_box_sides(gmsh, (0, 0, 0), (length, side, side), {"xmin": "inlet", "xmax": "outlet"})
    gmsh.model.addPhysicalGroup(3, [1], name="air")


def layered_box(gmsh, *, size: float, core: float, far: float, first: float, ratio: float,
                 n: int, length: float = 0.15, width: float = 0.01, height: float = 0.04,
                 growth: float = 0.15) -> None:
    """A strip of a test plate: the floor, meshed with triangles of ``size``, carries
    ``n`` prism layers (first height ``first``, growing by ``ratio``) under tetrahedra of
    ``core`` at the layer top, growing by ``growth`` per unit height to ``far``; groups
    inlet, outlet, floor, sides (the two side planes and the top), air."""
    geo = gmsh.model.geo
    corners = ((0, 0), (length, 0), (length, width), (0, width))
    pts = [geo.addPoint(x, y, 0, size) for x, y in corners]
    lines = [geo.addLine(pts[i], pts[(i + 1) % 4]) for i in range(4)]
    floor = geo.addPlaneSurface([geo.addCurveLoop(lines)])
    tops = np.cumsum(first * ratio ** np.arange(n))
    layers = geo.extrude([(2, floor)], 0, 0, float(tops[-1]), numElements=[1] * n,
                         heights=list(tops / tops[-1]), recombine=True)
    # the core: the layer top extruded without layers is meshed with tetrahedra
    above = geo.extrude([layers[0]], 0, 0, height - float(tops[-1]))
    geo.synchronize()
    groups: dict[str, list[int]] = {"inlet": [], "outlet": [], "sides": [above[0][1]]}
    for _, tag in layers[2:] + above[2:]:
        box = gmsh.model.getBoundingBox(2, tag)
        key = "inlet" if box[3] < 1e-9 else "outlet" if box[0] > length - 1e-9 else "sides"
        groups[key].append(tag)
    for group, tags in groups.items():
        gmsh.model.addPhysicalGroup(2, tags, name=group)
    gmsh.model.addPhysicalGroup(2, [floor], name="floor")
    gmsh.model.addPhysicalGroup(3, [layers[1][1], above[1][1]], name="air")
    graded_up(gmsh, floor=size, core=core, far=far, start=float(tops[-1]), growth=growth)


#: The laminar plate strip: 1 m/s in air over 0.15 m, Re_L = 1e4, Blasius delta99(L) =
#: 5 L / sqrt(Re_L) = 7.5 mm.
PLATE = ("  flow: {kind: external, velocity: 1 m/s, direction: [1, 0, 0], length: 0.15 m}\n"
          "  turbulence: {model: laminar}\n")


def plate_case(folder: Path, name: str) -> Path:
    return case_file(folder, name, f"""mesh:
  file: {name}.msh
  boundaries: {{inlet: inlet, outlet: outlet, floor: wall, sides: symmetry}}
physics:
{AIR}{PLATE}time: {{mode: steady}}
checks: {{rule_sets: [general]}}
""")


def grown_from(gmsh, kind: str, tags: list[int], size: float, growth: float = 0.1,
                far: float = 0.03) -> int:
    """A size field: ``size`` at the curves or points ``tags`` (``kind`` CurvesList or
    PointsList), growing by ``growth`` per unit distance up to ``far``."""
    field = gmsh.model.mesh.field
    dist = field.add("Distance")
    field.setNumbers(dist, kind, tags)
    field.setNumber(dist, "Sampling", 2000)
    thr = field.add("Threshold")
    field.setNumber(thr, "InField", dist)
    for key, value in (("SizeMin", size), ("SizeMax", far), ("DistMin", 0.0),
                       ("DistMax", (far - size) / growth)):
        field.setNumber(thr, key, value)
    return thr


def geometric_ratio(first: float, total: float, n: int) -> float:
    """The growth ratio r of ``n`` cells from ``first`` summing to ``total`` (bisection)."""
    lo, hi = 1.0 + 1e-9, 3.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if first * (mid ** n - 1) / (mid - 1) > total:
            hi = mid
        else:
            lo = mid
    return 0.5 * (lo + hi)
