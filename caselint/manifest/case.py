"""The case as plain data: what a validated case file says, in SI units.

Built by :mod:`caselint.manifest.loader`; rules read it and never parse YAML or units.
Every quantity is SI (m, s, kg/m^3, Pa*s, m^2/s, m/s). ``lines`` maps each dotted key
path of the case file to its 1-based line, so findings and errors can point at it.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from pathlib import Path

BOUNDARY_ROLES: tuple[str, ...] = (
    "wall", "slip-wall", "inlet", "outlet", "open", "symmetry", "periodic", "interface",
)
#: ``physics.method`` values: where the unknowns are stored. ``finite-volume`` is another
#: name for ``cell-centred`` (the loader turns it into that).
METHODS: tuple[str, ...] = ("cell-centred", "vertex-centred", "finite-element")
METHOD_ALIASES: dict[str, str] = {"finite-volume": "cell-centred"}
#: Names an earlier case-file format used, and the names that replace them: (key, old, new).
RENAMED_VALUES: tuple[tuple[str, str, str], ...] = (
    ("boundary role", "opening", "open"),
    ("turbulence model", "transition-sst", "gamma-retheta-sst"),
)
SAFETY_CLASSES: tuple[str, ...] = (
    "none", "structural-wind", "fire-smoke", "life-safety", "medical", "pressure-equipment",
)
#: Length units accepted for ``mesh.units``, with their size in metres (exact by definition).
LENGTH_UNITS: dict[str, float] = {
    "m": 1.0,
    "cm": 1e-2,
    "mm": 1e-3,
    "um": 1e-6,
    "in": 0.0254,
    "ft": 0.3048,
}
#: ``physics.turbulence.model`` values (the schema's enum; a test keeps the two equal).
TURBULENCE_MODELS: tuple[str, ...] = (
    "laminar", "k-epsilon", "rng-k-epsilon", "realizable-k-epsilon", "k-omega", "k-omega-sst",
    "spalart-allmaras", "gamma-retheta-sst", "reynolds-stress", "les", "des", "ddes", "iddes",
    "dns", "inviscid",
)
#: ``time.scheme`` values and the time integration (explicit or implicit) each belongs to.
SCHEME_INTEGRATION: dict[str, str] = {
    "forward-euler": "explicit", "rk2": "explicit", "rk3": "explicit", "rk4": "explicit",
    "backward-euler": "implicit", "bdf2": "implicit", "crank-nicolson": "implicit",
}
#: ``physics.turbulence.wall_treatment`` values.
WALL_TREATMENTS: tuple[str, ...] = ("resolved", "wall-function", "blended")


@dataclass(frozen=True)
class CaseInfo:
    name: str
    description: str = ""
    safety: str = "none"


@dataclass(frozen=True)
class MeshSpec:
    """Where the mesh is and how to read its boundary groups."""

    file: Path                       # absolute, resolved against the case file's folder
    units: str = "m"                 # length unit of the mesh coordinates
    scale_to_m: float = 1.0          # factor turning mesh coordinates into metres
    boundaries: dict[str, str] = field(default_factory=dict)   # group name -> role
    tag_array: str | None = None     # cell-data array with an integer tag per boundary face
    tags: dict[int, str] = field(default_factory=dict)         # tag -> group name
    velocity_field: str | None = None  # point/cell-data array with the flow velocity (m/s)
    zone: str | None = None          # the zone to check in a file of several zones


@dataclass(frozen=True)
class Fluid:
    density: float | None = None                 # kg/m^3
    viscosity: float | None = None               # dynamic, Pa*s
    kinematic_viscosity: float | None = None     # m^2/s
    sound_speed: float | None = None             # m/s
    thermal_diffusivity: float | None = None     # m^2/s

    @property
    def nu(self) -> float | None:
        """Kinematic viscosity in m^2/s, given or from viscosity / density."""
        if self.kinematic_viscosity is not None:
            return self.kinematic_viscosity
        if self.viscosity is not None and self.density:
            return self.viscosity / self.density
        return None


@dataclass(frozen=True)
class Flow:
    kind: str | None = None                      # internal | external
    velocity: float | None = None                # m/s, reference speed
    direction: tuple[float, float, float] | None = None   # unit vector
    length: float | None = None                  # m, flow length (plate length, hydraulic diameter)
    leading_edge: tuple[float, float, float] | None = None  # m, for local Re_x on external flows
    strouhal: float | None = None                # St = f L / U of the expected vortex shedding


@dataclass(frozen=True)
class Turbulence:
    model: str | None = None                     # None: the case file does not say
    wall_treatment: str | None = None            # resolved | wall-function | blended


@dataclass(frozen=True)
class Physics:
    method: str = "cell-centred"                 # or vertex-centred, finite-element (METHODS)
    fluid: Fluid = field(default_factory=Fluid)
    flow: Flow = field(default_factory=Flow)
    turbulence: Turbulence = field(default_factory=Turbulence)
    compressible: bool = False                   # compressible flow (acoustic time-step limit)


@dataclass(frozen=True)
class TimeSpec:
    mode: str = "steady"                         # steady | transient
    step: float | None = None                    # s
    end: float | None = None                     # s
    integration: str | None = None              # implicit | explicit
    scheme: str | None = None
    output_interval: float | None = None         # s
    frequency: float | None = None               # Hz, frequency of interest
    advection_scheme: str | None = None          # upwind | central (None: not declared)

    @property
    def integration_or_implied(self) -> str | None:
        """``integration``, else the one ``scheme`` belongs to; None when neither is given."""
        if self.integration is not None:
            return self.integration
        return SCHEME_INTEGRATION.get(self.scheme) if self.scheme else None


@dataclass(frozen=True)
class Region:
    """A region of interest: a box, sphere or cylinder, or a cell zone of the mesh, with a
    cell-size target."""

    name: str
    shape: str                                   # box | sphere | cylinder | zone
    geometry: dict[str, object]                  # SI: box {min, max}; sphere {center, radius}; zone {zone}
    max_cell_size: float | None = None           # m


@dataclass(frozen=True)
class Waiver:
    rule: str
    reason: str
    approved_by: str
    expires: _dt.date
    boundary: str | None = None
    region: str | None = None
    key: str = ""                                # key path in the case file, e.g. checks.waivers[0]


@dataclass(frozen=True)
class Checks:
    rule_sets: tuple[str, ...] = ("general",)
    rules: dict[str, dict[str, object]] = field(default_factory=dict)   # id -> overrides
    waivers: tuple[Waiver, ...] = ()


@dataclass(frozen=True)
class Review:
    prepared_by: str | None = None
    reviewers: tuple[str, ...] = ()
    approved_by: str | None = None


@dataclass(frozen=True)
class GridStudy:
    meshes: tuple[Path, ...] = ()


@dataclass(frozen=True)
class Domain:
    """The body of an external flow (boundary groups) and which way is up."""

    body: tuple[str, ...] = ()                   # boundary group names forming the body
    up: tuple[float, float, float] | None = None   # unit vector; None: +z in 3-D, +y in 2-D


@dataclass(frozen=True)
class Case:
    """A validated case file."""

    path: Path
    version: int
    info: CaseInfo
    mesh: MeshSpec
    physics: Physics = field(default_factory=Physics)
    time: TimeSpec = field(default_factory=TimeSpec)
    regions: tuple[Region, ...] = ()
    grid_study: GridStudy = field(default_factory=GridStudy)
    checks: Checks = field(default_factory=Checks)
    review: Review = field(default_factory=Review)
    domain: Domain = field(default_factory=Domain)
    extensions: dict[str, object] = field(default_factory=dict)   # plugin-declared top-level sections, as validated data
    # the whole validated case file as JSON-like data (dates as ISO text, quantities as written),
    # for conditions written as JSON Schema in rule sets
    document: dict[str, object] = field(default_factory=dict, compare=False, repr=False)
    lines: dict[str, int] = field(default_factory=dict, compare=False, repr=False)

    def line_of(self, key: str) -> int | None:
        """1-based line of a dotted key path, or of its nearest parent that has one."""
        while key:
            if key in self.lines:
                return self.lines[key]
            key = key.rpartition(".")[0]
        return self.lines.get("")
