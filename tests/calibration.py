"""The calibration corpus: meshes made with a real mesher (gmsh), good ones and bad ones.

gmsh (from PyPI, a test dependency) only *makes* the meshes; nothing here takes a quality
value from it. Each builder writes ``<name>.msh`` (gmsh 4.1, named physical groups) and a
case file beside it into a folder, and returns a :class:`Sample` saying what an engineer
expects: a good mesh passes the default rule set at ``--fail-on error`` with no warning
from the mesh-quality rules; a bad one fails on the rule that names its defect.

The good meshes are made as an engineer would make them for the case beside them: meshes
without wall layers (tetrahedra, extruded quadrilaterals) go with inviscid cases, where no
boundary layer is to be resolved; the prism-layer plate strip and the 2-D strut carry
layers that cover the laminar or turbulent boundary layer of their case, grown at 1.2 (1.18)
up to a last layer about as thick as the core cells beside it are big. The helpers that
drive gmsh are in tests/gmsh_cases.py.

Scenarios are invented: a ventilated test channel of the Orrinby Instruments lab (an
invented company), a fan-cooled heat-sink slot, a wind-tunnel plate insert.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

from gmsh_cases import (
    AIR, box_channel, case_file, channel_case, geometric_ratio, graded_up, grown_from,
    layered_box, name_box_sides, no_size_from_geometry, plate_case, session,
)

#: The mesh-quality rules that must stay silent (no warning) on a good mesh.
QUALITY_RULES = ("inverted-cells", "non-orthogonality", "skewness", "aspect-ratio",
                 "cell-shape", "growth-ratio", "volume-ratio", "face-warp")


@dataclass(frozen=True)
class Sample:
    """One corpus mesh: where its case file is, and the verdict an engineer expects."""

    name: str
    case: Path
    good: bool
    defect: str = ""            # for a bad mesh: the rule id that must fail
    what: str = ""              # one line for the corpus table


# -- good meshes ------------------------------------------------------------------------------


def tet_uniform(folder: Path) -> Sample:
    """Optimised tetrahedra of one target size in a 1 m x 0.4 m x 0.4 m channel."""
    name = "tet-uniform"
    with session(name) as gmsh:
        box_channel(gmsh)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.035)
        gmsh.option.setNumber("Mesh.MeshSizeMax", 0.035)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = channel_case(folder, name)
    return Sample(name, case, True, what="optimised tetrahedra of one size (inviscid channel)")


def tet_graded(folder: Path) -> Sample:
    """Optimised tetrahedra graded from 15 mm at the floor to 50 mm, size rate 0.15 per
    unit height; the band over the floor is a region of interest (judged strictly)."""
    name = "tet-graded"
    with session(name) as gmsh:
        box_channel(gmsh)
        graded_up(gmsh, floor=0.015, core=0.015, far=0.05, start=0.0, growth=0.15)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = channel_case(folder, name, extra=(
        "regions:\n  - {name: floor-band, box: {min: [0, 0, 0], max: [1.0, 0.4, 0.06]}, "
        "max_cell_size: 25 mm}\n"))
    return Sample(name, case, True,
                  what="optimised tetrahedra graded 15 to 50 mm from the floor (inviscid)")


def prism_tet(folder: Path) -> Sample:
    """Fourteen prism layers (first 0.136 mm, ratio 1.2, 8.0 mm in all against a boundary
    layer of 7.5 mm, the last 1.45 mm) over a laminar plate strip, on floor triangles of
    2.1 mm (the last layer is about as thick as the prisms are wide), under tetrahedra of
    1.4 mm just above the layers growing by 0.12 per unit height to 8 mm."""
    name = "prism-tet"
    with session(name) as gmsh:
        layered_box(gmsh, size=0.0021, core=0.0014, far=0.008, first=1.355e-4, ratio=1.2,
                     n=14, growth=0.12)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    return Sample(name, plate_case(folder, name), True,
                  what="14 prism layers at 1.2 under tetrahedra (laminar plate, Re 1e4)")


def strut_2d(folder: Path) -> Sample:
    """An aerofoil-like elliptic strut (0.2 m chord, 20 % thick) in a 2-D tunnel:
    quadrilateral layers (first 0.05 mm, ratio 1.18, 9 mm deep, covering the turbulent
    boundary layer at the trailing end) and triangles outside, 1.5 mm along the strut
    (0.7 mm at its ends) growing by 0.1 per unit distance.

    Not a sharp-edged aerofoil: gmsh's 2-D layer tool fans the layers round a sharp
    trailing edge with cells as small as the first layer beside layer cells as long as the
    surface spacing (a size ratio of 7 to 46 measured, which growth-ratio reports), and
    round a thin section's nose it widens the outer layers to three times the triangles
    next to them; a blunt elliptic nose and tail are what it meshes cleanly."""
    name = "strut-2d"
    with session(name) as gmsh:
        geo = gmsh.model.geo
        chord, b, n = 0.2, 0.02, 120
        theta = np.linspace(0.0, np.pi, n)           # nodes close where the ends curve
        x = 0.5 * chord * (1 - np.cos(theta))
        y = b * np.sin(theta)
        upper = [geo.addPoint(float(px), float(py), 0) for px, py in zip(x, y)]
        lower = [geo.addPoint(float(px), float(-py), 0) for px, py in zip(x[1:-1], y[1:-1])]
        # two splines joined at mid-chord (low curvature), each round one end
        k = n // 2
        front = geo.addSpline([upper[k], *upper[k - 1:0:-1], upper[0], *lower[:k - 1],
                               lower[k - 1]])
        back = geo.addSpline([lower[k - 1], *lower[k:], upper[-1], *upper[-2:k:-1], upper[k]])
        curves = [front, back]
        box = [geo.addPoint(px, py, 0) for px, py in
               ((-0.3, -0.25), (0.6, -0.25), (0.6, 0.25), (-0.3, 0.25))]
        walls = [geo.addLine(box[i], box[(i + 1) % 4]) for i in range(4)]
        air = geo.addPlaneSurface([geo.addCurveLoop(walls), geo.addCurveLoop(curves)])
        geo.synchronize()
        field = gmsh.model.mesh.field
        layer = field.add("BoundaryLayer")
        field.setNumbers(layer, "CurvesList", curves)
        for key, value in (("Size", 5e-5), ("Ratio", 1.18), ("Thickness", 9e-3), ("Quads", 1)):
            field.setNumber(layer, key, value)
        field.setAsBoundaryLayer(layer)
        sizes = [grown_from(gmsh, "CurvesList", curves, 1.5e-3),
                 grown_from(gmsh, "PointsList", [upper[0], upper[-1]], 7e-4)]
        smallest = field.add("Min")
        field.setNumbers(smallest, "FieldsList", sizes)
        field.setAsBackgroundMesh(smallest)
        no_size_from_geometry(gmsh)
        for group, tags in (("inlet", [walls[3]]), ("outlet", [walls[1]]),
                            ("walls", [walls[0], walls[2]]), ("strut", curves)):
            gmsh.model.addPhysicalGroup(1, tags, name=group)
        gmsh.model.addPhysicalGroup(2, [air], name="air")
        gmsh.model.mesh.generate(2)
        gmsh.write(str(folder / f"{name}.msh"))
    case = case_file(folder, name, f"""mesh:
  file: {name}.msh
  boundaries: {{inlet: inlet, outlet: outlet, walls: symmetry, strut: wall}}
physics:
{AIR}  flow: {{kind: external, velocity: 5 m/s, direction: [1, 0, 0], length: 0.2 m}}
  turbulence: {{model: k-omega-sst, wall_treatment: resolved}}
time: {{mode: steady}}
checks: {{rule_sets: [general]}}
""")
    return Sample(name, case, True,
                  what="2-D elliptic strut: quadrilateral layers covering the boundary layer, "
                       "triangles outside")


def hex_dominant(folder: Path) -> Sample:
    """A quadrilateral floor mesh (recombined, 10 mm at a round post to 30 mm) extruded
    in ten layers: unstructured hexahedra, for an inviscid channel flow round the post."""
    name = "hex-dominant"
    with session(name) as gmsh:
        geo = gmsh.model.geo
        pts = [geo.addPoint(x, y, 0, 0.03) for x, y in ((0, 0), (1, 0), (1, 0.4), (0, 0.4))]
        hole = [geo.addPoint(0.5 + 0.06 * np.cos(a), 0.2 + 0.06 * np.sin(a), 0, 0.01)
                for a in np.linspace(0, 2 * np.pi, 13)[:-1]]
        lines = [geo.addLine(pts[i], pts[(i + 1) % 4]) for i in range(4)]
        ring = [geo.addLine(hole[i], hole[(i + 1) % 12]) for i in range(12)]
        floor = geo.addPlaneSurface([geo.addCurveLoop(lines), geo.addCurveLoop(ring)])
        geo.mesh.setRecombine(2, floor)
        out = geo.extrude([(2, floor)], 0, 0, 0.3, numElements=[10], recombine=True)
        geo.synchronize()
        sides = [e[1] for e in out[2:]]
        groups = {"inlet": [], "outlet": [], "walls": [floor, out[0][1]], "post": []}
        for tag in sides:
            box = gmsh.model.getBoundingBox(2, tag)
            key = ("inlet" if box[3] < 1e-6 else "outlet" if box[0] > 1 - 1e-6
                   else "post" if box[0] > 0.3 and box[3] < 0.7 else "walls")
            groups[key].append(tag)
        for group, tags in groups.items():
            gmsh.model.addPhysicalGroup(2, tags, name=group)
        gmsh.model.addPhysicalGroup(3, [out[1][1]], name="air")
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = channel_case(folder, name, ", post: wall")
    return Sample(name, case, True,
                  what="extruded recombined quadrilaterals round a post (inviscid)")


# -- bad meshes -------------------------------------------------------------------------------


def size_jump(folder: Path) -> Sample:
    """A structured hexahedral channel (20 mm across) whose cells along x are 80 mm up to
    x = 0.72 m and 20 mm after it: a 4x jump at one plane. A size field cannot make the
    jump: gmsh smooths it (an 80 to 20 mm field on tetrahedra gives 2.19 at worst)."""
    name = "size-jump"
    with session(name) as gmsh:
        geo = gmsh.model.geo
        pts = [geo.addPoint(0, y, z) for y, z in ((0, 0), (0.4, 0), (0.4, 0.4), (0, 0.4))]
        lines = [geo.addLine(pts[i], pts[(i + 1) % 4]) for i in range(4)]
        inlet = geo.addPlaneSurface([geo.addCurveLoop(lines)])
        for line in lines:
            geo.mesh.setTransfiniteCurve(line, 21)
        geo.mesh.setTransfiniteSurface(inlet)
        geo.mesh.setRecombine(2, inlet)
        coarse = geo.extrude([(2, inlet)], 0.72, 0, 0, numElements=[9], recombine=True)
        fine = geo.extrude([coarse[0]], 0.28, 0, 0, numElements=[14], recombine=True)
        geo.synchronize()
        gmsh.model.addPhysicalGroup(2, [inlet], name="inlet")
        gmsh.model.addPhysicalGroup(2, [fine[0][1]], name="outlet")
        gmsh.model.addPhysicalGroup(2, [t for _, t in coarse[2:] + fine[2:]], name="walls")
        gmsh.model.addPhysicalGroup(3, [coarse[1][1], fine[1][1]], name="air")
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = channel_case(folder, name)
    return Sample(name, case, False, "growth-ratio",
                  "structured hexahedra jumping from 80 to 20 mm along the flow (inviscid)")


def layer_growth(folder: Path) -> Sample:
    """The prism-tet plate strip with seven layers growing by 1.6 (common practice: at
    most about 1.2-1.3)."""
    name = "layer-growth-1.6"
    with session(name) as gmsh:
        layered_box(gmsh, size=0.0021, core=0.0014, far=0.008, first=2e-4, ratio=1.6, n=7,
                     growth=0.12)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    return Sample(name, plate_case(folder, name), False, "layer-growth",
                  "prism layers growing by 1.6 (laminar plate)")


def uneven_first_layer(folder: Path) -> Sample:
    """A 2-D channel of structured quadrilaterals (transfinite) whose first cell over the
    floor is 0.5 mm at the inlet and 2.5 mm at the outlet: 5x along the wall."""
    name = "uneven-first-layer"
    with session(name) as gmsh:
        geo = gmsh.model.geo
        length, height, n_up = 1.0, 0.1, 25
        pts = [geo.addPoint(x, y, 0) for x, y in ((0, 0), (length, 0), (length, height),
                                                  (0, height))]
        floor, right, top, left = (geo.addLine(pts[i], pts[(i + 1) % 4]) for i in range(4))
        surface = geo.addPlaneSurface([geo.addCurveLoop([floor, right, top, left])])
        geo.synchronize()
        mesh = gmsh.model.mesh
        mesh.setTransfiniteCurve(floor, 81)
        mesh.setTransfiniteCurve(top, 81)
        # geometric spacing up the inlet (first 0.5 mm) and the outlet (first 2.5 mm)
        inlet_ratio = geometric_ratio(5e-4, height, n_up)
        outlet_ratio = geometric_ratio(2.5e-3, height, n_up)
        mesh.setTransfiniteCurve(left, n_up + 1, "Progression", -inlet_ratio)
        mesh.setTransfiniteCurve(right, n_up + 1, "Progression", outlet_ratio)
        mesh.setTransfiniteSurface(surface)
        mesh.setRecombine(2, surface)
        for group, tags in (("inlet", [left]), ("outlet", [right]), ("floor", [floor]),
                            ("walls", [top])):
            gmsh.model.addPhysicalGroup(1, tags, name=group)
        gmsh.model.addPhysicalGroup(2, [surface], name="air")
        gmsh.model.mesh.generate(2)
        gmsh.write(str(folder / f"{name}.msh"))
    case = channel_case(folder, name, ", floor: wall", physics=(
        "  flow: {kind: external, velocity: 3 m/s, direction: [1, 0, 0], length: 1 m}\n"
        "  turbulence: {model: k-omega-sst, wall_treatment: wall-function}\n"))
    return Sample(name, case, False, "wall-spacing-uniformity",
                  "2-D quadrilaterals, first cell 0.5 mm at the inlet, 2.5 mm at the outlet")


def slivers(folder: Path) -> Sample:
    """Delaunay tetrahedra with every optimisation off: flat slivers among them."""
    name = "slivers"
    with session(name) as gmsh:
        box_channel(gmsh)
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.05)
        gmsh.option.setNumber("Mesh.MeshSizeMax", 0.05)
        gmsh.option.setNumber("Mesh.Algorithm3D", 1)
        gmsh.option.setNumber("Mesh.Optimize", 0)
        gmsh.option.setNumber("Mesh.OptimizeNetgen", 0)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = channel_case(folder, name)
    return Sample(name, case, False, "cell-shape",
                  "unoptimised Delaunay tetrahedra, slivers among them (inviscid)")


def narrow_gap(folder: Path) -> Sample:
    """A 10 mm slot between two heat-sink fins meshed with 8 mm tetrahedra: about two
    cells across it."""
    name = "narrow-gap"
    with session(name) as gmsh:
        occ = gmsh.model.occ
        box = occ.addBox(0, 0, 0, 0.2, 0.1, 0.05)
        fin_a = occ.addBox(0.05, 0.0, 0.0, 0.04, 0.07, 0.05)
        fin_b = occ.addBox(0.10, 0.0, 0.0, 0.04, 0.07, 0.05)
        occ.cut([(3, box)], [(3, fin_a), (3, fin_b)])
        occ.synchronize()
        name_box_sides(gmsh, (0, 0, 0), (0.2, 0.1, 0.05), {"xmin": "inlet", "xmax": "outlet"})
        gmsh.model.addPhysicalGroup(3, [t for _, t in gmsh.model.getEntities(3)], name="air")
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.008)
        gmsh.option.setNumber("Mesh.MeshSizeMax", 0.008)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = channel_case(folder, name)
    return Sample(name, case, False, "gap-cells",
                  "a 10 mm slot between fins meshed with about 2 cells (inviscid)")


GOOD: tuple[Callable[[Path], Sample], ...] = (tet_uniform, tet_graded, prism_tet,
                                              strut_2d, hex_dominant)
BAD: tuple[Callable[[Path], Sample], ...] = (size_jump, layer_growth, uneven_first_layer,
                                             slivers, narrow_gap)


def build_all(folder: Path) -> list[Sample]:
    """Every corpus mesh and case in ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    return [make(folder) for make in GOOD + BAD]
