"""Read a case file into a :class:`~caselint.manifest.case.Case`: YAML, schema, units, paths.

The steps, each raising :class:`~caselint.errors.CaseFileError` with file, line, key and
what was expected: parse the YAML keeping lines (:mod:`.yamlnodes`), check the format
version, validate against the JSON Schema (:mod:`.schema`), convert quantities to SI
(:mod:`.units`), check what a schema cannot (positive sizes, consistent fluid data,
regions named once, mesh files that exist). The mesh itself is not read here.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from caselint.errors import CaseFileError
from caselint.manifest.case import (
    SCHEME_INTEGRATION, Case, CaseInfo, Checks, Flow, Fluid, GridStudy, MeshSpec, Physics,
    Region, Review, TimeSpec, Turbulence, Waiver,
)
from caselint.manifest.messages import describe
from caselint.manifest.schema import validate_case
from caselint.manifest.units import DIMENSIONS, scale_to_m, to_si
from caselint.manifest.yamlnodes import YamlDoc, load_yaml

#: The case-file format version this loader reads.
FORMAT_VERSION = 1
#: Largest relative disagreement allowed between kinematic_viscosity and viscosity/density.
FLUID_CONSISTENCY = 0.01
#: Smallest and largest magnitude (SI) of a quantity, a coordinate (largest only) or a
#: plain number such as the Strouhal number. Far outside any CFD case, so a value beyond
#: is a typo or a wrong unit; within, the products and quotients of a few quantities that
#: rules form (Reynolds numbers, Courant numbers, y+) stay well inside the float range.
MIN_MAGNITUDE = 1e-12
MAX_MAGNITUDE = 1e12


def load_case(path: str | Path, *, extensions: Mapping[str, dict] | None = None) -> Case:
    """Load and validate a case file; ``extensions`` maps plugin sections to schema fragments."""
    case_path = Path(path)
    doc = load_yaml(case_path)
    _check_version(doc)
    data = validate_case(doc, extensions)
    return _CaseBuilder(case_path, doc).build(data, extensions or {})


def _check_version(doc: YamlDoc) -> None:
    """A clearer message than the schema's for a format this caselint does not read."""
    if "caselint" not in doc.data:
        return                       # the schema reports the missing key
    version = doc.data["caselint"]
    if type(version) is int and version == FORMAT_VERSION:
        return
    if type(version) is int:
        message = (f"case-file format version {version} is not supported; "
                   f"this caselint reads version {FORMAT_VERSION} (caselint: {FORMAT_VERSION})")
    else:
        message = (f"expected the case-file format version {FORMAT_VERSION} "
                   f"(caselint: {FORMAT_VERSION}), got {describe(version)}")
    raise CaseFileError(doc.file, message, line=doc.line_of("caselint"),
                        column=doc.column_of("caselint"), key="caselint")


def _floats(values: list[Any]) -> list[float]:
    """Numbers as floats; a whole number too large for a float becomes infinity."""
    out = []
    for v in values:
        try:
            out.append(float(v))
        except OverflowError:
            out.append(math.inf)
    return out


class _CaseBuilder:
    """Turns validated case-file data into a Case, pointing any error at its line."""

    def __init__(self, case_path: Path, doc: YamlDoc) -> None:
        self.case_path = case_path
        self.folder = case_path.parent
        self.doc = doc

    def fail(self, key: str, message: str) -> CaseFileError:
        return CaseFileError(self.doc.file, message, line=self.doc.line_of(key),
                             column=self.doc.column_of(key), key=key)

    # -- values ------------------------------------------------------------------------

    def quantity(self, section: dict[str, Any], name: str, dimension: str, path: str,
                 *, positive: bool = True) -> float | None:
        """SI value of ``section[name]`` (None when absent); positive unless told otherwise."""
        if name not in section:
            return None
        key = f"{path}.{name}"
        raw = section[name]
        try:
            value = to_si(raw, dimension, key)
        except CaseFileError as exc:
            raise self.fail(key, exc.message) from None
        shown = f"'{raw}'" if isinstance(raw, str) else f"{raw} {DIMENSIONS[dimension].si_unit}"
        if positive and not value > 0:
            raise self.fail(key, f"must be greater than zero, got {shown}")
        self.check_magnitude(key, value, shown, DIMENSIONS[dimension].si_unit)
        return value

    def check_magnitude(self, key: str, value: float, shown: str, si_unit: str) -> None:
        """Refuse a non-zero value outside MIN_MAGNITUDE..MAX_MAGNITUDE (SI)."""
        if value != 0.0 and not MIN_MAGNITUDE <= abs(value) <= MAX_MAGNITUDE:
            unit = f" {si_unit}" if si_unit else ""
            raise self.fail(key, f"{shown} is outside the range caselint accepts "
                                 f"({MIN_MAGNITUDE:g} to {MAX_MAGNITUDE:g}{unit}, either "
                                 "sign); check the number and its unit")

    def finite(self, section: dict[str, Any], name: str, path: str) -> float | None:
        """A plain finite number (None when absent); the schema has checked its type."""
        if name not in section:
            return None
        try:
            value = float(section[name])
        except OverflowError:         # a whole number with hundreds of digits
            value = math.inf
        if not math.isfinite(value):
            raise self.fail(f"{path}.{name}", f"expected a finite number, got {section[name]!r}")
        self.check_magnitude(f"{path}.{name}", value, repr(section[name]), "")
        return value

    def point(self, values: list[Any], path: str) -> tuple[float, float, float]:
        """A point [x, y, z] in metres."""
        out = []
        for i, value in enumerate(values):
            try:
                out.append(to_si(value, "length", f"{path}[{i}]"))
            except CaseFileError as exc:
                raise self.fail(exc.key, exc.message) from None
            if abs(out[-1]) > MAX_MAGNITUDE:   # tiny coordinates are as good as zero
                shown = f"'{value}'" if isinstance(value, str) else f"{value} m"
                self.check_magnitude(f"{path}[{i}]", out[-1], shown, "m")
        return (out[0], out[1], out[2])

    def direction(self, values: list[float], path: str) -> tuple[float, float, float]:
        """A unit vector from three finite numbers, not all zero."""
        if not all(math.isfinite(v) for v in _floats(values)):
            raise self.fail(path, f"expected three finite numbers, got {values}")
        values = _floats(values)
        norm = math.hypot(*values)    # no overflow for components near 1e308
        if norm == 0.0:
            raise self.fail(path, "the direction [0, 0, 0] has no direction; give e.g. [1, 0, 0]")
        return (values[0] / norm, values[1] / norm, values[2] / norm)

    def mesh_file(self, text: str, key: str) -> Path:
        """Absolute path of a mesh file or mesh folder named in the case file, which must
        exist (whether a reader takes a folder is found when the mesh is read)."""
        if "\0" in text:
            raise self.fail(key, "a file name cannot contain a NUL character")
        try:
            path = (self.folder / text).resolve()
            if not path.is_file() and not path.is_dir():
                raise self.fail(key, f"mesh file not found: {path}")
        except OSError as exc:        # a name too long, a loop of links, no permission
            raise self.fail(key, f"cannot use {text!r} as a mesh file: "
                                 f"{exc.strerror or exc}") from None
        return path

    # -- sections ----------------------------------------------------------------------

    def build(self, data: dict[str, Any], extensions: Mapping[str, dict]) -> Case:
        regions = self.regions(data.get("regions", []))
        return Case(
            path=self.case_path,
            version=data["caselint"],
            info=CaseInfo(**data["case"]),
            mesh=self.mesh(data["mesh"]),
            physics=self.physics(data.get("physics", {})),
            time=self.time(data.get("time", {})),
            regions=regions,
            grid_study=GridStudy(tuple(
                self.mesh_file(m, f"grid_study.meshes[{i}]")
                for i, m in enumerate(data.get("grid_study", {}).get("meshes", [])))),
            checks=self.checks(data.get("checks", {}), {r.name for r in regions}),
            review=self.review(data.get("review", {})),
            domain=self.domain(data.get("domain", {}),
                               data.get("physics", {}).get("flow", {}).get("direction")),
            extensions={name: data[name] for name in sorted(extensions) if name in data},
            document=data,
            lines=dict(self.doc.lines),
        )

    def mesh(self, spec: dict[str, Any]) -> MeshSpec:
        units = spec.get("units", "m")
        boundaries = {name: (role if isinstance(role, str) else role["type"])
                      for name, role in spec.get("boundaries", {}).items()}
        return MeshSpec(
            file=self.mesh_file(spec["file"], "mesh.file"),
            units=units,
            scale_to_m=scale_to_m(units),
            boundaries=boundaries,
            tag_array=spec.get("tag_array"),
            tags={int(tag): name for tag, name in spec.get("tags", {}).items()},
            velocity_field=spec.get("velocity_field"),
        )

    def physics(self, spec: dict[str, Any]) -> Physics:
        fluid_spec = spec.get("fluid", {})
        p = "physics.fluid"
        fluid = Fluid(
            density=self.quantity(fluid_spec, "density", "density", p),
            viscosity=self.quantity(fluid_spec, "viscosity", "dynamic_viscosity", p),
            kinematic_viscosity=self.quantity(
                fluid_spec, "kinematic_viscosity", "kinematic_viscosity", p),
            sound_speed=self.quantity(fluid_spec, "sound_speed", "velocity", p),
            thermal_diffusivity=self.quantity(fluid_spec, "thermal_diffusivity", "diffusivity", p),
        )
        self.check_fluid(fluid)
        flow_spec = spec.get("flow", {})
        p = "physics.flow"
        flow = Flow(
            kind=flow_spec.get("kind"),
            velocity=self.quantity(flow_spec, "velocity", "velocity", p),
            direction=(self.direction(flow_spec["direction"], f"{p}.direction")
                       if "direction" in flow_spec else None),
            length=self.quantity(flow_spec, "length", "length", p),
            leading_edge=(self.point(flow_spec["leading_edge"], f"{p}.leading_edge")
                          if "leading_edge" in flow_spec else None),
            strouhal=self.finite(flow_spec, "strouhal", p),
        )
        turbulence = Turbulence(**spec["turbulence"]) if "turbulence" in spec else Turbulence()
        return Physics(method=spec.get("method", "finite-volume"), fluid=fluid, flow=flow,
                       turbulence=turbulence, compressible=spec.get("compressible", False))

    def check_fluid(self, fluid: Fluid) -> None:
        """Viscosity, density and kinematic viscosity, when all given, must agree."""
        if fluid.density is None or fluid.viscosity is None or fluid.kinematic_viscosity is None:
            return
        derived = fluid.viscosity / fluid.density
        mismatch = abs(derived - fluid.kinematic_viscosity) / fluid.kinematic_viscosity
        if mismatch > FLUID_CONSISTENCY:
            raise self.fail(
                "physics.fluid.kinematic_viscosity",
                f"kinematic_viscosity {fluid.kinematic_viscosity:.4g} m^2/s disagrees with "
                f"viscosity / density = {derived:.4g} m^2/s by {100 * mismatch:.1f} % "
                f"(at most {100 * FLUID_CONSISTENCY:g} % allowed); give one or make them agree")

    def time(self, spec: dict[str, Any]) -> TimeSpec:
        step = self.quantity(spec, "step", "time", "time")
        end = self.quantity(spec, "end", "time", "time")
        if step is not None and end is not None and end < step:
            raise self.fail("time.end", f"the end time {end:g} s is shorter than one time step "
                                        f"({step:g} s)")
        integration, scheme = spec.get("integration"), spec.get("scheme")
        if integration is not None and scheme is not None \
                and SCHEME_INTEGRATION[scheme] != integration:
            raise self.fail("time.scheme", f"the scheme {scheme} is {SCHEME_INTEGRATION[scheme]}, "
                                           f"but time.integration says {integration}; make them "
                                           "agree or leave one out")
        return TimeSpec(
            mode=spec.get("mode", "steady"),
            step=step,
            end=end,
            integration=integration,
            scheme=scheme,
            output_interval=self.quantity(spec, "output_interval", "time", "time"),
            frequency=self.quantity(spec, "frequency", "frequency", "time"),
            advection_scheme=spec.get("advection_scheme"),
        )

    def regions(self, specs: list[dict[str, Any]]) -> tuple[Region, ...]:
        out: list[Region] = []
        first: dict[str, int] = {}
        for i, spec in enumerate(specs):
            path = f"regions[{i}]"
            name = spec["name"]
            if name in first:
                raise self.fail(f"{path}.name", f"region name '{name}' is used twice "
                                                f"(also regions[{first[name]}])")
            first[name] = i
            shape = next(s for s in ("box", "sphere", "cylinder", "zone") if s in spec)
            out.append(Region(
                name=name,
                shape=shape,
                geometry=self.region_geometry(shape, spec[shape], f"{path}.{shape}"),
                max_cell_size=self.quantity(spec, "max_cell_size", "length", path),
            ))
        return tuple(out)

    def region_geometry(self, shape: str, spec: Any, path: str) -> dict[str, object]:
        if shape == "zone":
            return {"zone": spec}
        if shape == "box":
            lo = self.point(spec["min"], f"{path}.min")
            hi = self.point(spec["max"], f"{path}.max")
            for axis, a, b in zip("xyz", lo, hi):
                if not a < b:
                    raise self.fail(f"{path}.max", f"the box's max {axis} ({b:g} m) must be "
                                                   f"greater than its min {axis} ({a:g} m)")
            return {"min": lo, "max": hi}
        radius = self.quantity(spec, "radius", "length", path)
        if shape == "sphere":
            return {"center": self.point(spec["center"], f"{path}.center"), "radius": radius}
        start = self.point(spec["start"], f"{path}.start")
        end = self.point(spec["end"], f"{path}.end")
        if start == end:
            raise self.fail(f"{path}.end", "the cylinder's start and end are the same point")
        return {"start": start, "end": end, "radius": radius}

    def checks(self, spec: dict[str, Any], region_names: set[str]) -> Checks:
        waivers = []
        for i, item in enumerate(spec.get("waivers", [])):
            key = f"checks.waivers[{i}]"
            region = item.get("region")
            if region is not None and region not in region_names:
                known = ", ".join(sorted(region_names)) or "none defined"
                raise self.fail(f"{key}.region", f"waiver names region '{region}', which is not "
                                                 f"in regions (known: {known})")
            waivers.append(Waiver(
                rule=item["rule"],
                reason=item["reason"],
                approved_by=item["approved_by"],
                expires=_dt.date.fromisoformat(item["expires"]),
                boundary=item.get("boundary"),
                region=region,
                key=key,
            ))
        return Checks(
            rule_sets=tuple(spec.get("rule_sets", ("general",))),
            rules={rule: dict(params) for rule, params in spec.get("rules", {}).items()},
            waivers=tuple(waivers),
        )

    def domain(self, spec: dict[str, Any], flow_direction: list[float] | None):
        """The body groups and the up direction, which must not lie along the flow."""
        from caselint.manifest.case import Domain

        up = self.direction(spec["up"], "domain.up") if "up" in spec else None
        if up is not None and flow_direction is not None:
            flow = self.direction(flow_direction, "physics.flow.direction")
            cross = (up[1] * flow[2] - up[2] * flow[1], up[2] * flow[0] - up[0] * flow[2],
                     up[0] * flow[1] - up[1] * flow[0])
            # within about 0.6 deg of the flow direction there is no usable height axis
            if math.sqrt(sum(c * c for c in cross)) < 0.01:
                raise self.fail("domain.up", f"up {list(spec['up'])} lies along the flow "
                                f"direction {list(flow_direction)}; give the vertical direction, "
                                "e.g. [0, 0, 1]")
        return Domain(body=tuple(spec.get("body", ())), up=up)

    def review(self, spec: dict[str, Any]) -> Review:
        return Review(
            prepared_by=spec.get("prepared_by"),
            reviewers=tuple(spec.get("reviewers", ())),
            approved_by=spec.get("approved_by"),
        )
