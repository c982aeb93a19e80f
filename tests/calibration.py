"""The calibration corpus: meshes made with a real mesher (gmsh), good ones and bad ones.

gmsh (from PyPI, a test dependency) only *makes* the meshes; nothing here takes a quality
value from it. Each builder writes ``<name>.msh`` (gmsh 4.1, named physical groups) and a
case file beside it into a folder, and returns a :class:`Sample` saying what an engineer
expects: a good mesh passes the default rule set at ``--fail-on error`` with no warning
from the mesh-quality rules; a bad one fails on the rule that names its defect.

Scenarios are invented: a ventilated test channel of the Orrinby Instruments lab (an
invented company), a fan-cooled heat-sink slot, a wind-tunnel plate insert.
"""

from __future__ import annotations

import contextlib
from dataclasses import dataclass
from pathlib import Path
from typing import Callable

import numpy as np

#: The mesh-quality rules that must stay silent (no warning) on a good mesh.
QUALITY_RULES = ("inverted-cells", "non-orthogonality", "skewness", "aspect-ratio",
                 "growth-ratio", "face-warp", "volume-ratio")


@dataclass(frozen=True)
class Sample:
    """One corpus mesh: where its case file is, and the verdict an engineer expects."""

    name: str
    case: Path
    good: bool
    defect: str = ""            # for a bad mesh: the rule id that must fail
    what: str = ""              # one line for the corpus table


@contextlib.contextmanager
def _gmsh(name: str):
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


def _name_box_sides(gmsh, lo, hi, names: dict[str, str], dim: int = 2) -> None:
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


def _case(folder: Path, name: str, body: str) -> Path:
    case = folder / f"{name}.yaml"
    case.write_text(f"caselint: 1\ncase: {{name: {name}, safety: none}}\n{body}")
    return case


_AIR = """  fluid: {density: 1.2 kg/m^3, viscosity: 1.8e-5 Pa*s}
"""


def _channel_case(folder: Path, name: str, extra_bounds: str = "", physics: str = "") -> Path:
    return _case(folder, name, f"""mesh:
  file: {name}.msh
  boundaries: {{inlet: inlet, outlet: outlet, walls: wall{extra_bounds}}}
physics:
{_AIR}{physics}time: {{mode: steady}}
checks: {{rule_sets: [general]}}
""")


# -- good meshes ------------------------------------------------------------------------------


def tet_uniform(folder: Path) -> Sample:
    """Optimised tetrahedra of one target size in a 1 m x 0.4 m x 0.4 m channel."""
    name = "tet-uniform"
    with _gmsh(name) as gmsh:
        gmsh.model.occ.addBox(0, 0, 0, 1.0, 0.4, 0.4)
        gmsh.model.occ.synchronize()
        _name_box_sides(gmsh, (0, 0, 0), (1.0, 0.4, 0.4), {"xmin": "inlet", "xmax": "outlet"})
        gmsh.model.addPhysicalGroup(3, [1], name="air")
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.035)
        gmsh.option.setNumber("Mesh.MeshSizeMax", 0.035)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name, physics="  flow: {kind: internal, velocity: 0.05 m/s, "
                         "direction: [1, 0, 0], length: 0.4 m}\n  turbulence: {model: laminar}\n")
    return Sample(name, case, True, what="tetrahedra, one target size, optimised")


def tet_graded(folder: Path) -> Sample:
    """Optimised tetrahedra graded from 12 mm at the floor to 50 mm, size rate below 1.2."""
    name = "tet-graded"
    with _gmsh(name) as gmsh:
        gmsh.model.occ.addBox(0, 0, 0, 1.0, 0.4, 0.4)
        gmsh.model.occ.synchronize()
        _name_box_sides(gmsh, (0, 0, 0), (1.0, 0.4, 0.4), {"xmin": "inlet", "xmax": "outlet"})
        gmsh.model.addPhysicalGroup(3, [1], name="air")
        floor = [t for _, t in gmsh.model.getEntities(2)
                 if abs(gmsh.model.getBoundingBox(2, t)[5]) < 1e-6]
        field = gmsh.model.mesh.field
        dist = field.add("Distance")
        field.setNumbers(dist, "SurfacesList", floor)
        thr = field.add("Threshold")
        field.setNumber(thr, "InField", dist)
        field.setNumber(thr, "SizeMin", 0.012)
        field.setNumber(thr, "SizeMax", 0.05)
        field.setNumber(thr, "DistMin", 0.0)
        field.setNumber(thr, "DistMax", 0.25)     # (0.05 - 0.012) / 0.25: 0.15 per unit length
        field.setAsBackgroundMesh(thr)
        for key in ("MeshSizeFromPoints", "MeshSizeFromCurvature", "MeshSizeExtendFromBoundary"):
            gmsh.option.setNumber(f"Mesh.{key}", 0)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name, physics="  flow: {kind: internal, velocity: 0.05 m/s, "
                         "direction: [1, 0, 0], length: 0.4 m}\n  turbulence: {model: laminar}\n")
    return Sample(name, case, True, what="tetrahedra graded 12 to 50 mm away from the floor")


def _layered_box(gmsh, size: float, first: float, ratio: float, n: int, height: float,
                 length: float = 1.0, width: float = 0.4) -> None:
    """A channel whose floor carries ``n`` prism layers (first height ``first``, growing by
    ``ratio``) under a tetrahedral core up to ``height``; groups inlet/outlet/floor/walls.

    ``vary`` != 1 makes the first layer grow linearly along x to ``vary`` times ``first``
    (a defect): the floor's points are moved, not the layer count.
    """
    geo = gmsh.model.geo
    pts = [geo.addPoint(x, y, 0, size) for x, y in ((0, 0), (length, 0), (length, width), (0, width))]
    lines = [geo.addLine(pts[i], pts[(i + 1) % 4]) for i in range(4)]
    floor = geo.addPlaneSurface([geo.addCurveLoop(lines)])
    heights = first * ratio ** np.arange(n)
    tops = np.cumsum(heights)
    layers = geo.extrude([(2, floor)], 0, 0, float(tops[-1]), numElements=[1] * n,
                         heights=list(tops / tops[-1]), recombine=True)
    # the core: the layer top extruded without layers is meshed with tetrahedra
    core = geo.extrude([layers[0]], 0, 0, height - float(tops[-1]))
    geo.synchronize()
    groups = {"inlet": [], "outlet": [], "walls": [core[0][1]]}
    for _, tag in layers[2:] + core[2:]:
        box = gmsh.model.getBoundingBox(2, tag)
        key = "inlet" if box[3] < 1e-9 else "outlet" if box[0] > length - 1e-9 else "walls"
        groups[key].append(tag)
    for group, tags in groups.items():
        gmsh.model.addPhysicalGroup(2, tags, name=group)
    gmsh.model.addPhysicalGroup(2, [floor], name="floor")
    gmsh.model.addPhysicalGroup(3, [layers[1][1], core[1][1]], name="air")


def prism_tet(folder: Path) -> Sample:
    """Twelve prism layers (first 0.4 mm, ratio 1.2) on the floor under tetrahedra."""
    name = "prism-tet"
    with _gmsh(name) as gmsh:
        _layered_box(gmsh, size=0.04, first=4e-4, ratio=1.2, n=12, height=0.4)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name, ", floor: wall", physics=(
        "  flow: {kind: external, velocity: 3 m/s, direction: [1, 0, 0], length: 1 m}\n"
        "  turbulence: {model: k-omega-sst, wall_treatment: wall-function}\n"))
    return Sample(name, case, True, what="12 prism layers at ratio 1.2 under tetrahedra")


def aerofoil_2d(folder: Path) -> Sample:
    """A symmetric 12 % aerofoil (the NACA four-digit thickness formula, 0.2 m chord) in a
    2-D tunnel: a quadrilateral boundary layer (first 0.1 mm, ratio 1.2) and triangles
    outside."""
    name = "aerofoil-2d"
    with _gmsh(name) as gmsh:
        geo = gmsh.model.geo
        chord, n = 0.2, 60
        x = chord * 0.5 * (1 - np.cos(np.linspace(0, np.pi, n)))
        t = x / chord
        half = 5 * 0.12 * chord * (0.2969 * np.sqrt(t) - 0.1260 * t - 0.3516 * t**2
                                   + 0.2843 * t**3 - 0.1036 * t**4)
        upper = [geo.addPoint(float(a), float(b), 0, 0.004) for a, b in zip(x, half)]
        lower = [geo.addPoint(float(a), float(-b), 0, 0.004) for a, b in zip(x[1:-1], half[1:-1])]
        # the -0.1036 variant of the formula closes the trailing edge: both sides meet there
        top = geo.addSpline(upper)
        bottom = geo.addSpline([upper[-1], *lower[::-1], upper[0]])
        foil = geo.addCurveLoop([top, bottom])
        box = [geo.addPoint(px, py, 0, 0.03) for px, py in
               ((-0.3, -0.25), (0.6, -0.25), (0.6, 0.25), (-0.3, 0.25))]
        walls = [geo.addLine(box[i], box[(i + 1) % 4]) for i in range(4)]
        air = geo.addPlaneSurface([geo.addCurveLoop(walls), foil])
        geo.synchronize()
        field = gmsh.model.mesh.field
        layer = field.add("BoundaryLayer")
        field.setNumbers(layer, "CurvesList", [top, bottom])
        field.setNumbers(layer, "FanPointsList", [upper[-1]])
        field.setNumber(layer, "Size", 1e-4)
        field.setNumber(layer, "Ratio", 1.2)
        field.setNumber(layer, "Thickness", 4e-3)
        field.setNumber(layer, "Quads", 1)
        field.setAsBoundaryLayer(layer)
        for group, tags in (("inlet", [walls[3]]), ("outlet", [walls[1]]),
                            ("walls", [walls[0], walls[2]]), ("foil", [top, bottom])):
            gmsh.model.addPhysicalGroup(1, tags, name=group)
        gmsh.model.addPhysicalGroup(2, [air], name="air")
        gmsh.model.mesh.generate(2)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _case(folder, name, f"""mesh:
  file: {name}.msh
  boundaries: {{inlet: inlet, outlet: outlet, walls: symmetry, foil: wall}}
physics:
{_AIR}  flow: {{kind: external, velocity: 5 m/s, direction: [1, 0, 0], length: 0.2 m}}
  turbulence: {{model: k-omega-sst, wall_treatment: resolved}}
time: {{mode: steady}}
checks: {{rule_sets: [general]}}
""")
    return Sample(name, case, True, what="2-D aerofoil: quadrilateral layers, triangles outside")


def hex_dominant(folder: Path) -> Sample:
    """A quadrilateral-dominant floor mesh (recombined, a few triangles left) extruded in
    ten layers: hexahedra with some prisms."""
    name = "hex-dominant"
    with _gmsh(name) as gmsh:
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
    case = _channel_case(folder, name, ", post: wall", physics=(
        "  flow: {kind: internal, velocity: 0.05 m/s, direction: [1, 0, 0], length: 0.3 m}\n"
        "  turbulence: {model: laminar}\n"))
    return Sample(name, case, True, what="hexahedra with some prisms around a round post")


# -- bad meshes -------------------------------------------------------------------------------


def size_jump(folder: Path) -> Sample:
    """A block of 80 mm tetrahedra against a slab of 20 mm ones: a 4x size jump."""
    name = "size-jump"
    with _gmsh(name) as gmsh:
        occ = gmsh.model.occ
        a = occ.addBox(0, 0, 0, 0.75, 0.4, 0.4)
        b = occ.addBox(0.75, 0, 0, 0.25, 0.4, 0.4)
        occ.fragment([(3, a)], [(3, b)])
        occ.synchronize()
        _name_box_sides(gmsh, (0, 0, 0), (1.0, 0.4, 0.4), {"xmin": "inlet", "xmax": "outlet"})
        gmsh.model.addPhysicalGroup(3, [a, b], name="air")
        field = gmsh.model.mesh.field
        box = field.add("Box")
        for key, value in (("VIn", 0.02), ("VOut", 0.08), ("XMin", 0.75), ("XMax", 1.0),
                           ("YMin", -1), ("YMax", 1), ("ZMin", -1), ("ZMax", 1),
                           ("Thickness", 0.0)):
            field.setNumber(box, key, value)
        field.setAsBackgroundMesh(box)
        for key in ("MeshSizeFromPoints", "MeshSizeFromCurvature", "MeshSizeExtendFromBoundary"):
            gmsh.option.setNumber(f"Mesh.{key}", 0)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name)
    return Sample(name, case, False, "growth-ratio", "tetrahedra jumping from 80 to 20 mm")


def layer_growth(folder: Path) -> Sample:
    """Prism layers growing by 1.6 per layer (common practice: at most about 1.2-1.3)."""
    name = "layer-growth-1.6"
    with _gmsh(name) as gmsh:
        _layered_box(gmsh, size=0.04, first=4e-4, ratio=1.6, n=7, height=0.4)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name, ", floor: wall", physics=(
        "  flow: {kind: external, velocity: 3 m/s, direction: [1, 0, 0], length: 1 m}\n"
        "  turbulence: {model: k-omega-sst, wall_treatment: wall-function}\n"))
    return Sample(name, case, False, "layer-growth", "prism layers growing by 1.6")


def uneven_first_layer(folder: Path) -> Sample:
    """A 2-D channel of structured quadrilaterals (transfinite) whose first cell over the
    floor is 0.5 mm at the inlet and 2.5 mm at the outlet: 5x along the wall."""
    name = "uneven-first-layer"
    with _gmsh(name) as gmsh:
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
        mesh.setTransfiniteCurve(left, n_up + 1, "Progression", -_ratio(5e-4, height, n_up))
        mesh.setTransfiniteCurve(right, n_up + 1, "Progression", _ratio(2.5e-3, height, n_up))
        mesh.setTransfiniteSurface(surface)
        mesh.setRecombine(2, surface)
        for group, tags in (("inlet", [left]), ("outlet", [right]), ("floor", [floor]),
                            ("walls", [top])):
            gmsh.model.addPhysicalGroup(1, tags, name=group)
        gmsh.model.addPhysicalGroup(2, [surface], name="air")
        gmsh.model.mesh.generate(2)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name, ", floor: wall", physics=(
        "  flow: {kind: external, velocity: 3 m/s, direction: [1, 0, 0], length: 1 m}\n"
        "  turbulence: {model: k-omega-sst, wall_treatment: wall-function}\n"))
    return Sample(name, case, False, "wall-spacing-uniformity",
                  "2-D quadrilaterals, first cell 0.5 mm at the inlet, 2.5 mm at the outlet")


def _ratio(first: float, total: float, n: int) -> float:
    """The growth ratio r of ``n`` cells from ``first`` summing to ``total`` (bisection)."""
    lo, hi = 1.0 + 1e-9, 3.0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if first * (mid ** n - 1) / (mid - 1) > total:
            hi = mid
        else:
            lo = mid
    return 0.5 * (lo + hi)


def slivers(folder: Path) -> Sample:
    """Delaunay tetrahedra with every optimisation off: flat slivers among them."""
    name = "slivers"
    with _gmsh(name) as gmsh:
        gmsh.model.occ.addBox(0, 0, 0, 1.0, 0.4, 0.4)
        gmsh.model.occ.synchronize()
        _name_box_sides(gmsh, (0, 0, 0), (1.0, 0.4, 0.4), {"xmin": "inlet", "xmax": "outlet"})
        gmsh.model.addPhysicalGroup(3, [1], name="air")
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.05)
        gmsh.option.setNumber("Mesh.MeshSizeMax", 0.05)
        gmsh.option.setNumber("Mesh.Algorithm3D", 1)
        gmsh.option.setNumber("Mesh.Optimize", 0)
        gmsh.option.setNumber("Mesh.OptimizeNetgen", 0)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name)
    return Sample(name, case, False, "cell-shape", "unoptimised Delaunay tetrahedra (slivers)")


def narrow_gap(folder: Path) -> Sample:
    """A 10 mm slot between two heat-sink fins meshed with about two cells across."""
    name = "narrow-gap"
    with _gmsh(name) as gmsh:
        occ = gmsh.model.occ
        box = occ.addBox(0, 0, 0, 0.2, 0.1, 0.05)
        fin_a = occ.addBox(0.05, 0.0, 0.0, 0.04, 0.07, 0.05)
        fin_b = occ.addBox(0.10, 0.0, 0.0, 0.04, 0.07, 0.05)
        occ.cut([(3, box)], [(3, fin_a), (3, fin_b)])
        occ.synchronize()
        _name_box_sides(gmsh, (0, 0, 0), (0.2, 0.1, 0.05), {"xmin": "inlet", "xmax": "outlet"})
        gmsh.model.addPhysicalGroup(3, [t for _, t in gmsh.model.getEntities(3)], name="air")
        gmsh.option.setNumber("Mesh.MeshSizeMin", 0.005)
        gmsh.option.setNumber("Mesh.MeshSizeMax", 0.005)
        gmsh.model.mesh.generate(3)
        gmsh.write(str(folder / f"{name}.msh"))
    case = _channel_case(folder, name)
    return Sample(name, case, False, "gap-cells", "a 10 mm slot meshed with about 2 cells")


GOOD: tuple[Callable[[Path], Sample], ...] = (tet_uniform, tet_graded, prism_tet,
                                              aerofoil_2d, hex_dominant)
BAD: tuple[Callable[[Path], Sample], ...] = (size_jump, layer_growth, uneven_first_layer,
                                             slivers, narrow_gap)


def build_all(folder: Path) -> list[Sample]:
    """Every corpus mesh and case in ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    return [make(folder) for make in GOOD + BAD]


if __name__ == "__main__":      # python tests/calibration.py FOLDER: build and check each
    import json
    import subprocess
    import sys

    out = Path(sys.argv[1] if len(sys.argv) > 1 else "/tmp/caselint-corpus")
    for sample in build_all(out):
        run = subprocess.run([sys.executable, "-m", "caselint", "check", str(sample.case),
                              "--format", "json", "--fail-on", "error"],
                             capture_output=True, text=True)
        try:
            doc = json.loads(run.stdout)
        except json.JSONDecodeError:
            print(sample.name, "exit", run.returncode, run.stderr[-400:])
            continue
        checks = doc["cases"][0]["checks"]
        bad = [f"{c['rule']}={c['outcome']}/{c.get('severity')}:{c.get('measured')}"
               for c in checks if c["outcome"] == "fail"]
        print(f"{sample.name:22s} exit {run.returncode} expect "
              f"{'pass' if sample.good else sample.defect}: {bad}")
