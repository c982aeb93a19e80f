"""Meshes made with gmsh (PyPI, a test dependency) for the near-wall tests: a pipe O-grid,
a 2-D aerofoil with a quadrilateral layer block under triangles, a cylinder in unstructured
triangles and a box of tetrahedra graded towards its floor.

gmsh only *makes* the meshes; every expected value in the tests comes from the
construction (layer heights, radii) or from an independent computation, never from
gmsh. Each builder writes a gmsh 4.1 file with named physical groups and returns its path.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from gmsh_cases import session as _gmsh   # gmsh started quietly, single-threaded, seeded


def _grade_towards(gmsh, key: str, tags: list[int], wall_size: float, far_size: float,
                   grow_over: float) -> None:
    """Cells ``wall_size`` at the entities ``tags`` (``key``: CurvesList or SurfacesList),
    growing linearly to ``far_size`` over ``grow_over`` from them; nothing else sets sizes."""
    field = gmsh.model.mesh.field
    dist = field.add("Distance")
    field.setNumbers(dist, key, tags)
    field.setNumber(dist, "Sampling", 400)
    thr = field.add("Threshold")
    for name, value in (("InField", dist), ("SizeMin", wall_size), ("SizeMax", far_size),
                        ("DistMin", 0.0), ("DistMax", grow_over)):
        field.setNumber(thr, name, value)
    field.setAsBackgroundMesh(thr)
    for name in ("MeshSizeFromPoints", "MeshSizeFromCurvature", "MeshSizeExtendFromBoundary"):
        gmsh.option.setNumber(f"Mesh.{name}", 0)


def pipe_o_grid(path: Path, *, radius: float = 0.05, n_side: int = 12, n_radial: int = 15,
                progression: float = 0.85, core: float = 0.45, length: float = 0.2,
                n_axial: int = 4) -> Path:
    """A pipe along z: a square core block (corners at ``core * radius``, ``n_side`` cells a
    side) and four blocks of radial hexahedra out to the wall, ``n_radial`` cells whose
    height multiplies by ``progression`` from the core to the wall (transfinite, so the
    radial lines meet the wall at right angles). Groups: wall, inlet (z = 0), outlet."""
    with _gmsh("pipe") as gmsh:
        geo = gmsh.model.geo
        centre = geo.addPoint(0, 0, 0)
        angles = np.pi / 4 + np.pi / 2 * np.arange(4)
        inner = [geo.addPoint(core * radius * np.cos(a), core * radius * np.sin(a), 0)
                 for a in angles]
        outer = [geo.addPoint(radius * np.cos(a), radius * np.sin(a), 0) for a in angles]
        sides = [geo.addLine(inner[i], inner[(i + 1) % 4]) for i in range(4)]
        arcs = [geo.addCircleArc(outer[i], centre, outer[(i + 1) % 4]) for i in range(4)]
        spokes = [geo.addLine(inner[i], outer[i]) for i in range(4)]
        surfaces = [geo.addPlaneSurface([geo.addCurveLoop(sides)])]
        for i in range(4):
            loop = geo.addCurveLoop([sides[i], spokes[(i + 1) % 4], -arcs[i], -spokes[i]])
            surfaces.append(geo.addPlaneSurface([loop]))
        for line in sides + arcs:
            geo.mesh.setTransfiniteCurve(line, n_side + 1)
        for line in spokes:
            geo.mesh.setTransfiniteCurve(line, n_radial + 1, "Progression", progression)
        for s in surfaces:
            geo.mesh.setTransfiniteSurface(s)
            geo.mesh.setRecombine(2, s)
        out = geo.extrude([(2, s) for s in surfaces], 0, 0, length, numElements=[n_axial],
                          recombine=True)
        geo.synchronize()
        tops, walls = [], []
        for dim, tag in out:
            if dim != 2:
                continue
            lo = np.array(gmsh.model.getBoundingBox(2, tag))
            if abs(lo[2] - length) < 1e-9 and abs(lo[5] - length) < 1e-9:
                tops.append(tag)
            elif np.hypot(*gmsh.model.getValue(2, tag, [0.5, 0.5])[:2]) > 0.99 * radius:
                walls.append(tag)
        gmsh.model.addPhysicalGroup(2, surfaces, name="inlet")
        gmsh.model.addPhysicalGroup(2, tops, name="outlet")
        gmsh.model.addPhysicalGroup(2, walls, name="wall")
        gmsh.model.addPhysicalGroup(3, [t for d, t in out if d == 3], name="fluid")
        gmsh.model.mesh.generate(3)
        gmsh.write(str(path))
    return path


def naca_half_thickness(x: np.ndarray, chord: float, thickness: float = 0.12) -> np.ndarray:
    """Half thickness of a symmetric NACA four-digit section (closed trailing edge form)."""
    t = x / chord
    return 5 * thickness * chord * (0.2969 * np.sqrt(t) - 0.1260 * t - 0.3516 * t**2
                                    + 0.2843 * t**3 - 0.1036 * t**4)


def aerofoil_layers(path: Path, *, chord: float = 1.0, first: float = 1e-4, ratio: float = 1.15,
                    block: float = 0.085, surface_size: float = 0.01,
                    nose_size: float = 0.0015) -> Path:
    """A 12 % symmetric aerofoil (leading edge at the origin, chord along x) in a 2-D box:
    a quadrilateral layer block ``block`` thick (first layer ``first``, growing by
    ``ratio``), triangles outside; surface cells ``nose_size`` at the leading edge and
    ``surface_size`` elsewhere. Groups: foil, inlet, outlet, sides."""
    with _gmsh("aerofoil") as gmsh:
        geo = gmsh.model.geo
        x = chord * 0.5 * (1 - np.cos(np.linspace(0, np.pi, 121)))
        half = naca_half_thickness(x, chord)
        size = np.interp(x, [0, 0.05 * chord, 0.3 * chord, chord],
                         [nose_size, 2 * nose_size, surface_size, surface_size])
        upper = [geo.addPoint(float(a), float(b), 0, float(s)) for a, b, s in zip(x, half, size)]
        lower = [geo.addPoint(float(a), float(-b), 0, float(s))
                 for a, b, s in zip(x[1:-1], half[1:-1], size[1:-1])]
        top = geo.addSpline(upper)
        bottom = geo.addSpline([upper[-1], *lower[::-1], upper[0]])
        foil = geo.addCurveLoop([top, bottom])
        corners = [geo.addPoint(px * chord, py * chord, 0, 0.1 * chord)
                   for px, py in ((-1.5, -1.5), (3.0, -1.5), (3.0, 1.5), (-1.5, 1.5))]
        box = [geo.addLine(corners[i], corners[(i + 1) % 4]) for i in range(4)]
        air = geo.addPlaneSurface([geo.addCurveLoop(box), foil])
        geo.synchronize()
        field = gmsh.model.mesh.field
        layer = field.add("BoundaryLayer")
        field.setNumbers(layer, "CurvesList", [top, bottom])
        field.setNumbers(layer, "FanPointsList", [upper[-1]])
        field.setNumber(layer, "Size", first)
        field.setNumber(layer, "Ratio", ratio)
        field.setNumber(layer, "Thickness", block)
        field.setNumber(layer, "Quads", 1)
        field.setAsBoundaryLayer(layer)
        for group, tags in (("inlet", [box[3]]), ("outlet", [box[1]]),
                            ("sides", [box[0], box[2]]), ("foil", [top, bottom])):
            gmsh.model.addPhysicalGroup(1, tags, name=group)
        gmsh.model.addPhysicalGroup(2, [air], name="air")
        gmsh.model.mesh.generate(2)
        gmsh.write(str(path))
    return path


def cylinder_triangles(path: Path, *, diameter: float = 0.1, wall_size: float = 0.0015,
                       far_size: float = 0.05, grow_over: float = 0.08) -> Path:
    """A cylinder (centre at the origin) in a 2-D box of unstructured triangles, ``wall_size``
    at the wall growing linearly to ``far_size`` over ``grow_over`` from it. Groups:
    cylinder, inlet (x min), outlet, sides."""
    with _gmsh("cylinder") as gmsh:
        occ = gmsh.model.occ
        box = occ.addRectangle(-4 * diameter, -3 * diameter, 0, 14 * diameter, 6 * diameter)
        disk = occ.addDisk(0, 0, 0, diameter / 2, diameter / 2)
        occ.cut([(2, box)], [(2, disk)])
        occ.synchronize()
        curves = {}
        for _, tag in gmsh.model.getEntities(1):
            lo = np.array(gmsh.model.getBoundingBox(1, tag))
            name = ("cylinder" if np.all(np.abs(lo[[0, 1, 3, 4]]) < diameter) else
                    "inlet" if lo[3] < -3.9 * diameter else
                    "outlet" if lo[0] > 9.9 * diameter else "sides")
            curves.setdefault(name, []).append(tag)
        for name, tags in sorted(curves.items()):
            gmsh.model.addPhysicalGroup(1, tags, name=name)
        gmsh.model.addPhysicalGroup(2, [t for _, t in gmsh.model.getEntities(2)], name="air")
        _grade_towards(gmsh, "CurvesList", curves["cylinder"], wall_size, far_size, grow_over)
        gmsh.model.mesh.generate(2)
        gmsh.write(str(path))
    return path


def tet_box(path: Path, *, wall_size: float = 0.006, far_size: float = 0.04,
            grow_over: float = 0.15) -> Path:
    """Optimised tetrahedra in a 0.6 m x 0.3 m x 0.3 m box, ``wall_size`` at the floor
    (z = 0) growing to ``far_size`` over ``grow_over``. Groups: floor, inlet (x = 0),
    outlet, walls (the rest)."""
    with _gmsh("tets") as gmsh:
        gmsh.model.occ.addBox(0, 0, 0, 0.6, 0.3, 0.3)
        gmsh.model.occ.synchronize()
        groups: dict[str, list[int]] = {}
        for _, tag in gmsh.model.getEntities(2):
            lo = np.array(gmsh.model.getBoundingBox(2, tag))
            name = ("floor" if lo[5] < 1e-6 else "inlet" if lo[3] < 1e-6 else
                    "outlet" if lo[0] > 0.6 - 1e-6 else "walls")
            groups.setdefault(name, []).append(tag)
        for name, tags in sorted(groups.items()):
            gmsh.model.addPhysicalGroup(2, tags, name=name)
        gmsh.model.addPhysicalGroup(3, [1], name="air")
        _grade_towards(gmsh, "SurfacesList", groups["floor"], wall_size, far_size, grow_over)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(path))
    return path
